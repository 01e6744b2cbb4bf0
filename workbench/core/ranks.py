"""The Kruskal–Wallis rank test, exact, without sorting the readings when they have a resolution.

Readings are nearly always recorded to a fixed number of decimals (a gauge's resolution).  Then
each reading is an integer code ``rint(x·10^d)``; counting the codes (``numpy.bincount``) gives
every distinct value's multiplicity, hence its mean rank (the ranks below it plus half its own
ties) — the same ranks a full sort gives, in O(N) instead of O(N log N).  The code is accepted only
when it is one-to-one with the distinct readings (checked for every reading), so ties and order
are exactly those of the readings.  Otherwise the ranks come from a full sort.  The statistic is
then formed from integer rank sums with rational arithmetic, so the only rounding is the final one.

References
----------
Kruskal, W. H. & Wallis, W. A. (1952). Use of ranks in one-criterion variance analysis. *JASA* 47,
583-621: H = 12/(N(N+1)) Σ Rⱼ²/nⱼ − 3(N+1), divided by 1 − Σ(t³ − t)/(N³ − N) for ties.
"""
from __future__ import annotations

from fractions import Fraction

import numpy as np


MAX_DECIMALS = 6
"""Resolutions tried: 1, 0.1, ... 10⁻⁶."""
MAX_CODES = 1 << 24
"""Largest number of possible codes (max − min at the resolution) counted; beyond it, a sort."""


def kruskal_wallis(groups: list[np.ndarray]) -> tuple[float | None, float | None]:
    """Kruskal–Wallis H (with the tie correction) and its chi-square p-value on k − 1 df."""
    return kruskal_with_method(groups)[:2]


def kruskal_with_method(groups: list[np.ndarray]) -> tuple[float | None, float | None, str]:
    """H, its p-value and how the ranks were found (words for the report)."""
    groups = [np.asarray(g, dtype=np.float64) for g in groups]
    sizes = [int(g.size) for g in groups]
    big_n = sum(sizes)
    if big_n < 2 or len(groups) < 2:
        return None, None, "too few readings"
    counted = _counted_ranks(groups, big_n)
    if counted is not None:
        twice_sums, ties, step = counted
        how = f"exact ranks, counted at the readings' resolution of {step:g} (no sort)"
    else:
        twice_sums, ties = _sorted_ranks(groups, big_n)
        how = "exact ranks from a sort of all readings"
    correction = 1.0 - ties / (float(big_n) ** 3 - big_n)
    if correction <= 0:
        return None, None, how
    # 12/(N(N+1)) Σ (S_j/2)²/n_j − 3(N+1), with S_j = twice the rank sum (an integer)
    total = sum((Fraction(int(s) ** 2, n) for s, n in zip(twice_sums, sizes) if n), Fraction(0))
    h = float(Fraction(3) * total / (big_n * (big_n + 1)) - 3 * (big_n + 1)) / correction
    return _num(h), _num(chi2_sf(h, len(groups) - 1)), how


def _counted_ranks(groups: list[np.ndarray], big_n: int) -> tuple[list[int], float, float] | None:
    """(twice each group's rank sum, Σ(t³ − t), resolution) from integer codes, or None."""
    present = [g for g in groups if g.size]
    lo = min(float(g.min()) for g in present)
    hi = max(float(g.max()) for g in present)
    if not (np.isfinite(lo) and np.isfinite(hi)) or big_n > 1 << 30:
        return None
    sample = np.concatenate([g[:500] for g in present])
    for d in range(MAX_DECIMALS + 1):
        scale = 10.0 ** d
        if (hi - lo) * scale >= MAX_CODES:
            return None
        if np.array_equal(np.rint(sample * scale) / scale, sample):
            break
    else:
        return None
    base = np.rint(lo * scale)
    n_codes = int(np.rint(hi * scale) - base) + 1
    codes = []
    value_of = np.empty(n_codes)
    for g in groups:
        c = np.rint(g * scale)
        c -= base
        c = c.astype(np.int64)
        value_of[c] = g
        codes.append(c)
    for g, c in zip(groups, codes):  # one reading value per code: same ties, same order
        if not np.array_equal(value_of[c], g):
            return None
    counts = np.zeros(n_codes, np.int64)
    for c in codes:
        counts += np.bincount(c, minlength=n_codes)
    below = np.cumsum(counts) - counts
    twice_rank = 2 * below + counts + 1  # twice the mean rank of each value (1-based ranks)
    twice_sums = [int(twice_rank[c].sum()) for c in codes]
    t = counts[counts > 1].astype(np.float64)
    return twice_sums, float(np.sum((t - 1) * t * (t + 1))), 1.0 / scale


def _sorted_ranks(groups: list[np.ndarray], big_n: int) -> tuple[list[int], float]:
    x = np.concatenate(groups)
    order = np.argsort(x)  # ties get their mean rank below, so the sort need not be stable
    xs = x[order]
    starts = np.flatnonzero(np.r_[True, xs[1:] != xs[:-1]])
    counts = np.diff(np.r_[starts, big_n])
    twice = np.empty(big_n, np.int64)
    twice[order] = np.repeat(2 * starts + counts + 1, counts)
    bounds = np.cumsum([0] + [g.size for g in groups])
    t = counts[counts > 1].astype(np.float64)
    return [int(twice[a:b].sum()) for a, b in zip(bounds, bounds[1:])], float(np.sum((t - 1) * t * (t + 1)))


def _num(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


def chi2_sf(x: float, df: float) -> float:
    """Upper tail of the chi-square distribution (``scipy.special.chdtrc``, imported where it is needed)."""
    from scipy.special import chdtrc
    return float(chdtrc(df, x))
