"""Words and numbers for people: the one place the views format a number or make text printable.

Pure: the TUI, the text/Markdown/JSON reports and the case review all use these, so a value reads the
same everywhere.  Nothing here imports from the rest of the core.
"""

from __future__ import annotations

import math
import re
import unicodedata
from typing import Any, Iterable

__all__ = ["SIGNIFICANT", "change_texts", "fmt", "md", "num", "nums", "printable", "reading"]

_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>|#~!])")

SIGNIFICANT = 4
"""Significant figures of a statistic shown to people: sigma, limits, centre lines, means, indices."""
MAX_SIGNIFICANT = 15
"""The most significant figures :func:`nums` goes to when telling values apart."""


def num(v: Any, sig: int = SIGNIFICANT) -> str:
    """A statistic for people, by the one rule every view uses (screen, reports, notices).

    ``sig`` significant figures (4 unless more are needed to tell values apart, see :func:`nums`),
    trailing zeros kept (they are significant).  A number with ``sig`` or more integer digits keeps
    every one of them (rounded to a whole number: never cut, never in exponent form); below 0.0001
    it is written with an exponent (``1.235e-05``).  "—" for a missing or undefined value.
    Examples: 0.37895 -> ``0.3790``; 500.5661 -> ``500.6``; -0.11667 -> ``-0.1167``; 1.5 -> ``1.500``;
    64995.2 -> ``64995``; exactly 0 -> ``0``.
    """
    if v is None or isinstance(v, (bool, str)):
        return "—"
    try:
        x = float(v)
    except (TypeError, ValueError):
        return "—"
    if not math.isfinite(x):
        return "—"
    if x == 0:
        return "0"
    text = f"{x:#.{sig}g}"
    if "e+" in text:  # sig or more integer digits: the whole integer part, no exponent
        return f"{x:.0f}"
    if "e" in text:  # below 0.0001: 1.235e-05
        mant, exp = text.split("e")
        return f"{mant.rstrip('.')}e{exp}"
    return text.rstrip(".")


def nums(values: Iterable[Any], sig: int = SIGNIFICANT) -> list[str]:
    """:func:`num` of each value, with more significant figures where values that differ would
    otherwise print alike (limits that lie close; a subgroup mean just beyond its UCL)."""
    vals = list(values)
    finite = {float(v) for v in vals if _finite(v)}
    s = sig
    while s < MAX_SIGNIFICANT and len({num(v, s) for v in finite}) < len(finite):
        s += 1
    return [num(v, s) for v in vals]


def fmt(v: Any, sig: int = SIGNIFICANT) -> str:
    """:func:`num`, and a varying limit summary ``{"min", "max"}`` as ``min … max (varies)``."""
    if isinstance(v, dict):
        lo, hi = nums((v.get("min"), v.get("max")), sig)
        return f"{lo} … {hi} (varies)"
    return num(v, sig)


def change_texts(before: Any, after: Any) -> tuple[str, str]:
    """A value before and after a change by the one rule, with the figures it takes to show that they
    differ (limits summaries that vary read ``min … max (varies)``)."""
    if isinstance(before, dict) or isinstance(after, dict):
        return fmt(before), fmt(after)
    tb, ta = nums((before, after))
    return tb, ta


def reading(v: Any) -> str:
    """A reading as recorded: all its digits (the shortest exact decimal form), "—" when missing."""
    if not _finite(v):
        return "—"
    import numpy as np  # numpy's shortest round-trip form, without an exponent
    return np.format_float_positional(float(v), trim="-")


def _finite(v: Any) -> bool:
    if v is None or isinstance(v, (bool, str)):
        return False
    try:
        return math.isfinite(float(v))
    except (TypeError, ValueError):
        return False


_ESCAPES = {"\n": "\\n", "\r": "\\r", "\t": "\\t"}


def printable(text: str) -> str:
    """Text with control characters and escape sequences made visible (``"\\x1b"`` -> ``"\\\\x1b"``).

    C0/C1 controls, DEL and invisible format characters (e.g. bidirectional overrides) are
    shown as escapes; everything else is unchanged.  The stored text is never altered.
    """
    out = []
    for ch in str(text):
        if ch in _ESCAPES:
            out.append(_ESCAPES[ch])
        elif unicodedata.category(ch) in ("Cc", "Cf", "Zl", "Zp"):
            code = ord(ch)
            out.append(f"\\x{code:02x}" if code < 0x100 else f"\\u{code:04x}")
        else:
            out.append(ch)
    return "".join(out)


def md(text: Any) -> str:
    """Text made printable and safe inside Markdown (markup characters escaped)."""
    return _MD_SPECIAL.sub(r"\\\1", printable(str(text)))
