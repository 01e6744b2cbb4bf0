"""Run rules (tests for special causes), vectorised with numpy.

Each rule is evaluated on the sequence of non-excluded, defined points of one chart.  A
rule *fires* at the point that completes its pattern; overlapping or adjacent firings of one
rule on one chart are grouped into one signal by :func:`group_firings`.

Zones use the per-point sigma of the plotted statistic: zone C is within 1σ of the centre
line, zone B between 1σ and 2σ, zone A between 2σ and the 3σ limits.

References
----------
Western Electric Co. (1956). *Statistical Quality Control Handbook* (zone tests).
Nelson, L. S. (1984). The Shewhart control chart — tests for special causes.
*Journal of Quality Technology* 16(4), 237-239.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.core.model import WorkbenchError


@dataclass(frozen=True)
class Rule:
    """One run rule."""

    id: str
    """Rule id used in files and on the command line."""
    window: int
    """Number of points in the pattern."""
    words: str
    """The rule in plain words."""


def _rules(same_side: int) -> dict[str, Rule]:
    return {
        "beyond-limits": Rule("beyond-limits", 1, "a point beyond a control limit"),
        "zone-a": Rule("zone-a", 3, "2 of 3 points beyond 2 sigma, same side"),
        "zone-b": Rule("zone-b", 5, "4 of 5 points beyond 1 sigma, same side"),
        "same-side": Rule("same-side", same_side, f"{same_side} points in a row on one side of the centre line"),
        "trend": Rule("trend", 6, "6 points in a row steadily rising or falling"),
        "alternating": Rule("alternating", 14, "14 points in a row alternating up and down"),
        "hugging": Rule("hugging", 15, "15 points in a row within 1 sigma of the centre line"),
        "avoid-centre": Rule("avoid-centre", 8, "8 points in a row more than 1 sigma from the centre line"),
    }


RULE_IDS = tuple(_rules(8))
RULE_SETS = {
    "western-electric": ("beyond-limits", "zone-a", "zone-b", "same-side"),
    "nelson": RULE_IDS,
    "limits-only": ("beyond-limits",),
}
SAME_SIDE_RUN = {"western-electric": 8, "nelson": 9}


@dataclass(frozen=True)
class RuleSet:
    """A resolved rule set: which rules, and the run length of ``same-side``."""

    name: str
    ids: tuple[str, ...]
    same_side: int

    def rule(self, rule_id: str) -> Rule:
        return _rules(self.same_side)[rule_id]


def resolve(spec: str) -> RuleSet:
    """Resolve a rule-set name or a comma list of rule ids.

    A custom list may give the run length of ``same-side`` as ``same-side:9``; the default
    for custom lists is 9 (the longer, Nelson run).
    """
    spec = (spec or "").strip()
    if spec in RULE_SETS:
        return RuleSet(spec, RULE_SETS[spec], SAME_SIDE_RUN.get(spec, 8))
    ids: list[str] = []
    run = 9
    for part in (p.strip() for p in spec.split(",")):
        if not part:
            continue
        if part.startswith("same-side:"):
            try:
                run = int(part.split(":", 1)[1])
            except ValueError:
                raise WorkbenchError(f"bad run length in rule {part!r} (use e.g. same-side:9)") from None
            if not 2 <= run <= 50:
                raise WorkbenchError(f"run length for same-side must be 2..50, not {run}")
            part = "same-side"
        if part not in RULE_IDS:
            names = ", ".join(RULE_SETS) + "; rules: " + ", ".join(RULE_IDS)
            raise WorkbenchError(f"unknown rule or rule set {part!r} (sets: {names})")
        if part not in ids:
            ids.append(part)
    if not ids:
        raise WorkbenchError("empty rule list")
    ordered = tuple(r for r in RULE_IDS if r in ids)
    return RuleSet(",".join(ordered), ordered, run)


def _window_count(b: np.ndarray, w: int) -> np.ndarray:
    """Sum of ``b`` over the window of ``w`` points ending at each position.

    Before the first full window the sum runs over the points so far, so "2 of 3" can
    complete on the second point; "w in a row" cannot complete before ``w`` points.
    """
    if w == 1:
        return b.astype(np.int32)
    n = b.size
    cs = np.zeros(n + 1, dtype=np.int32)
    np.cumsum(b, dtype=np.int32, out=cs[1:])
    out = np.empty(n, dtype=np.int32)
    head = min(w - 1, n)
    out[:head] = cs[1:head + 1]
    if n >= w:
        np.subtract(cs[w:], cs[:-w], out=out[w - 1:])
    return out


def _two_sided(up: np.ndarray, dn: np.ndarray, w: int) -> tuple[np.ndarray, np.ndarray]:
    """Window counts of ``up`` and ``dn`` with one cumulative sum (dn coded in the high digits)."""
    base = 1 << int(w).bit_length()  # > w, so the low digit never overflows
    both = _window_count(up.astype(np.int32) + base * dn.astype(np.int32), w)
    return both & (base - 1), both >> (base.bit_length() - 1)


def _zscores(x: np.ndarray, c: np.ndarray, s: np.ndarray) -> np.ndarray:
    d = x - c
    with np.errstate(divide="ignore", invalid="ignore"):
        z = d / s
    zero = ~(s > 0)
    if zero.any():  # sigma 0: every point off the centre is infinitely far, on the centre is 0
        dz = d[zero]
        z[zero] = np.where(dz > 0, np.inf, np.where(dz < 0, -np.inf, 0.0))
    return z


def fire(rule_id: str, x, c, s, lcl, ucl, same_side: int = 8, z=None) -> tuple[np.ndarray, np.ndarray | None]:
    """Evaluate one rule on a compressed sequence.

    Returns ``(fires, members)``: ``fires[i]`` is True when the pattern completes at ``i``;
    ``members[i]`` when point ``i`` is of the kind the pattern counts (e.g. in zone A), or
    None when every point of the window belongs to the pattern (runs and trends).
    """
    if rule_id == "beyond-limits":
        b = (x > ucl) | (x < lcl)
        return b, b
    if z is None:
        z = _zscores(x, c, s)
    if rule_id in ("zone-a", "zone-b"):
        lim, w, need = (2.0, 3, 2) if rule_id == "zone-a" else (1.0, 5, 4)
        up, dn = z > lim, z < -lim
        cu, cd = _two_sided(up, dn, w)
        f = (up & (cu >= need)) | (dn & (cd >= need))
        return f, up | dn
    if rule_id == "same-side":
        cu, cd = _two_sided(x > c, x < c, same_side)
        return (cu == same_side) | (cd == same_side), None
    if rule_id == "trend":
        d = np.diff(x)
        inc = np.concatenate(([False], d > 0))[:x.size]
        dec = np.concatenate(([False], d < 0))[:x.size]
        cu, cd = _two_sided(inc, dec, 5)
        return (cu == 5) | (cd == 5), None
    if rule_id == "alternating":
        d = np.diff(x)
        alt = np.concatenate(([False, False], (d[1:] * d[:-1]) < 0))[:x.size]
        return _window_count(alt, 12) == 12, None
    if rule_id == "hugging":
        return _window_count(np.abs(z) < 1.0, 15) == 15, None
    if rule_id == "avoid-centre":
        return _window_count(np.abs(z) > 1.0, 8) == 8, None
    raise WorkbenchError(f"unknown rule {rule_id!r}")


@dataclass(frozen=True)
class Firing:
    """The firings of one rule on one chart, in original positions."""

    rule: str
    fired: np.ndarray
    """Original positions where the rule fires (sorted)."""
    members: np.ndarray | None
    """Boolean mask over the compressed sequence (None: every point in a window)."""
    index: np.ndarray
    """Original position of each compressed point."""


def evaluate(values, center, sigma, lcl, ucl, excluded, ruleset: RuleSet) -> dict[str, Firing]:
    """Evaluate a rule set on one chart.

    Excluded points and undefined (NaN) points are removed from the sequence first; the
    patterns are found on what remains and positions are mapped back.
    """
    keep = ~np.asarray(excluded, bool) & np.isfinite(values)
    idx = np.flatnonzero(keep)
    needs_centre = set(ruleset.ids) != {"beyond-limits"}
    if idx.size == values.size:
        x, c, s, lo, hi = values, center, sigma, lcl, ucl
    else:
        x, lo, hi = values[idx], lcl[idx], ucl[idx]
        c, s = (center[idx], sigma[idx]) if needs_centre else (None, None)
    out: dict[str, Firing] = {}
    z = _zscores(x, c, s) if set(ruleset.ids) - {"beyond-limits", "same-side", "trend", "alternating"} else None
    for rid in ruleset.ids:
        f, members = fire(rid, x, c, s, lo, hi, ruleset.same_side, z)
        out[rid] = Firing(rid, idx[f], members, idx)
    return out
