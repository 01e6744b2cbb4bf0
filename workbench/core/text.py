"""Words and numbers for people: the one place the views format a number or make text printable.

Pure: the TUI, the text/Markdown/JSON reports and the case review all use these, so a value reads the
same everywhere.  Nothing here imports from the rest of the core.
"""

from __future__ import annotations

import math
import re
import unicodedata
from typing import Any

__all__ = ["fmt", "md", "printable"]

_MD_SPECIAL = re.compile(r"([\\`*_\[\]<>|#~!])")

def fmt(v: Any, digits: int = 4) -> str:
    """A number for people: up to ``digits`` decimals, '—' for missing or undefined."""
    if v is None:
        return "—"
    if isinstance(v, dict):
        return f"{fmt(v.get('min'), digits)} … {fmt(v.get('max'), digits)} (varies)"
    v = float(v)
    if not math.isfinite(v):
        return "—"
    if v != 0 and (abs(v) >= 1e6 or abs(v) < 10 ** -digits):
        return f"{v:.{digits}g}"
    text = f"{v:.{digits}f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


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
