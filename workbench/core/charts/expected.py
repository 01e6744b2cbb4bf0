"""How many firing points the rules give by chance: the expected count on in-control data.

For every chart and rule of an analysis, the expected number of firing points is the sum over
the chart's points (excluded and undefined points left out, as the rules do) of the exact
probability that the rule fires at that point when the process is in control — independent
normal points with the chart's centre line and sigma (location charts), the range / standard
deviation / moving range of such readings (spread charts), or binomial / Poisson counts at the
chart's rate (count charts).  Expectation is additive, so overlapping windows need no
independence.  Rules need their window to fill: a rule of window ``w`` fires first at the
``w``-th point (``zone-a`` and ``zone-b`` earlier, with the points so far).

Per-point probabilities (q1 = Φ(−1), q2 = Φ(−2); both sides counted):

* ``beyond-limits`` — Φ((LCL − CL)/σᵢ) + Φ((CL − UCL)/σᵢ) per point, 2Φ(−3) with 3σ limits
  [Western Electric Co. (1956)]; spread charts from the exact distribution of the statistic
  (range: numerical integration of the range distribution; SD: chi-square; moving range of two
  readings: σ√2·|Z|); count charts: binomial or Poisson tails at the chart's rate.
* ``zone-a`` — 2·q2·(1 − (1 − q2)²): the point beyond 2σ and at least one of the two before it
  on the same side (at the second point: 2·q2²).
* ``zone-b`` — 2·q1·(4q1³(1 − q1) + q1⁴) (at the fourth point: 2·q1⁴).
* ``same-side`` (run of r) — 2·0.5ʳ; ``trend`` — 2/6!; ``hugging`` — (1 − 2q1)¹⁵;
  ``avoid-centre`` — (2q1)⁸ [Nelson (1984)].
* ``alternating`` — 2·A(14)/14!, A(n) the number of alternating permutations, counted exactly by
  the boustrophedon (Entringer) recursion, so this one is an exact enumeration rather than a
  closed formula.

The EWMA's exact (time-varying) limits give 2Φ(−L) per point from its exact variance; the CUSUM has
no per-point formula (its sums carry over) and gets no expected count.

References
----------
Western Electric Co. (1956). *Statistical Quality Control Handbook* (zone tests).
Nelson, L. S. (1984). The Shewhart control chart — tests for special causes. *Journal of Quality
Technology* 16(4), 237-239.
André, D. (1879). Développements de sec x et de tang x. *Comptes Rendus* 88 (alternating permutations).
"""
from __future__ import annotations

import math
from functools import lru_cache

import numpy as np

from workbench.core.model import Analysis, ChartResult

NORMAL_CHARTS = ("xbar", "i", "ewma")
"""Charts whose plotted statistic is normal with the chart's per-point sigma when in control."""


@lru_cache(maxsize=None)
def alternating_probability(n_points: int) -> float:
    """P(n iid continuous points alternate up/down, either way) = 2·A(n)/n! (exact enumeration)."""
    row = [1]
    for _ in range(n_points):
        new = [0]
        for v in reversed(row):
            new.append(new[-1] + v)
        row = new
    return 2 * row[-1] / math.factorial(n_points)


def norm_cdf(x) -> np.ndarray:
    """Φ(x), elementwise (scipy.special.ndtr, imported where it is needed)."""
    from scipy.special import ndtr
    return ndtr(np.asarray(x, float))


def _q(z: float) -> float:
    return float(norm_cdf(np.array([-z]))[0])


def window_probabilities(rule: str, same_side: int) -> tuple[float, dict[int, float], int, str]:
    """(p, head, first, words): ``p`` at every point from ``first`` (0-based) on; ``head`` maps
    earlier points where the rule can already fire to their probability."""
    q1, q2 = _q(1.0), _q(2.0)
    if rule == "zone-a":
        return 2 * q2 * (1 - (1 - q2) ** 2), {1: 2 * q2 ** 2}, 2, "2·q2·(1 − (1 − q2)²), q2 = Φ(−2)"
    if rule == "zone-b":
        return 2 * q1 * (4 * q1 ** 3 * (1 - q1) + q1 ** 4), {3: 2 * q1 ** 4}, 4, "2·q1·(4q1³(1 − q1) + q1⁴), q1 = Φ(−1)"
    if rule == "same-side":
        return 2 * 0.5 ** same_side, {}, same_side - 1, f"2·0.5^{same_side}"
    if rule == "trend":
        return 2 / math.factorial(6), {}, 5, "2/6!"
    if rule == "alternating":
        return alternating_probability(14), {}, 13, "2·A(14)/14! (alternating permutations, exact count)"
    if rule == "hugging":
        return (1 - 2 * q1) ** 15, {}, 14, "(1 − 2Φ(−1))^15"
    if rule == "avoid-centre":
        return (2 * q1) ** 8, {}, 7, "(2Φ(−1))^8"
    raise ValueError(rule)


def _range_cdf(w: np.ndarray, n: int) -> np.ndarray:
    """P(range of n standard normal readings ≤ w): n∫φ(x)[Φ(x + w) − Φ(x)]^(n−1) dx (Gauss–Legendre)."""
    t, wt = np.polynomial.legendre.leggauss(300)
    x, wt = t * 9.0, wt * 9.0
    phi = np.exp(-0.5 * x * x) / math.sqrt(2 * math.pi)
    fx = norm_cdf(x)
    w = np.atleast_1d(np.asarray(w, float))
    inner = np.clip(norm_cdf(x[None, :] + w[:, None]) - fx[None, :], 0.0, 1.0) ** (n - 1)
    return np.clip(n * (inner * phi[None, :] * wt[None, :]).sum(axis=1), 0.0, 1.0)


def _beyond(c: ChartResult, use: np.ndarray, a: Analysis) -> tuple[np.ndarray | None, str]:
    """Per-point probability of a point beyond the limits, for the points in ``use``."""
    lo, hi, cl = c.lcl[use], c.ucl[use], c.center[use]
    lo = np.where(np.isfinite(lo), lo, -np.inf)
    hi = np.where(np.isfinite(hi), hi, np.inf)
    if c.name in NORMAL_CHARTS:
        s = c.sigma[use]
        with np.errstate(divide="ignore", invalid="ignore"):
            p = norm_cdf((lo - cl) / s) + norm_cdf((cl - hi) / s)
        return p, "Φ((LCL − CL)/σ) + Φ((CL − UCL)/σ) = 2Φ(−3) with 3σ limits"
    n = np.asarray(a.n, float)[use]
    if c.name in ("r", "s", "mr"):
        from workbench.core.charts import constants as K
        size = np.full(lo.size, 2.0) if c.name == "mr" else n
        unit = {"r": K.d2, "s": K.c4, "mr": lambda k: K.d2(2)}[c.name]
        p = np.full(lo.size, np.nan)
        for k in np.unique(size[size >= 2]):  # few distinct sizes, and few distinct limits per size
            sel = size == k
            sig = cl[sel] / unit(int(k))
            keys = np.column_stack([np.maximum(lo[sel], 0) / sig, hi[sel] / sig])
            uniq, inverse = np.unique(keys, axis=0, return_inverse=True)
            p[sel] = np.array([_spread_tail(c.name, int(k), u_lo, u_hi) for u_lo, u_hi in uniq])[inverse.ravel()]
        return p, _SPREAD_WORDS[c.name]
    if c.name in ("p", "np", "c", "u"):
        return _count_beyond(c, use, a, lo, hi, cl)
    return None, "no per-point formula (the sums carry over from point to point)"


_SPREAD_WORDS = {
    "r": "range of n normal readings beyond the limits (numerical integral of its distribution)",
    "s": "(n − 1)S²/σ² chi-square on n − 1 df beyond the limits",
    "mr": "moving range σ√2·|Z| beyond the limits",
}


def _spread_tail(name: str, n: int, lo: float, hi: float) -> float:
    """P(statistic < lo·σ or > hi·σ) for the range, SD or moving range of in-control normal readings."""
    if name == "r":
        cdf = _range_cdf(np.array([lo, hi]), n)
        return float(1 - cdf[1] + (cdf[0] if lo > 0 else 0.0))
    if name == "s":
        from scipy.special import chdtrc as chi2_sf  # upper tail of chi-square: chdtrc(df, x)
        df = n - 1
        return float(chi2_sf(df, df * hi * hi) + ((1 - chi2_sf(df, df * lo * lo)) if lo > 0 else 0.0))
    q = norm_cdf(np.array([-hi / math.sqrt(2), -lo / math.sqrt(2)]))
    return float(2 * q[0] + ((1 - 2 * q[1]) if lo > 0 else 0.0))


def _count_beyond(c, use, a, lo, hi, cl):
    from scipy import stats
    sizes = np.asarray(a.n, float)[use]  # the subgroup's sample size (its streams' sizes summed)
    if c.name in ("p", "u"):
        mean, lo_c, hi_c = cl * sizes, lo * sizes, hi * sizes
    else:
        mean, lo_c, hi_c = cl, lo, hi
    k_hi = np.floor(hi_c)  # a count fires when strictly above the limit: above k_hi
    k_lo = np.ceil(np.where(np.isfinite(lo_c), lo_c, -1.0))  # ... or strictly below: below k_lo
    if c.name in ("p", "np"):
        rate = np.where(sizes > 0, mean / sizes, 0.0)
        up = stats.binom.sf(k_hi, sizes, rate)
        down = stats.binom.cdf(k_lo - 1, sizes, rate)
        words = "binomial counts at the chart's p̄ beyond the limits"
    else:
        up = stats.poisson.sf(k_hi, mean)
        down = stats.poisson.cdf(k_lo - 1, mean)
        words = "Poisson counts at the chart's rate beyond the limits"
    return up + down, words


def expected_firings(c: ChartResult, rule: str, a: Analysis, same_side: int) -> tuple[int, float | None, str]:
    """(points evaluated, expected firing points, formula) for one rule on one chart."""
    use = ~np.asarray(c.excluded, bool) & np.isfinite(c.values)
    n = int(use.sum())
    if rule == "beyond-limits":
        p, words = _beyond(c, use, a)
        if p is None:
            return n, None, words
        p = p[np.isfinite(p)]
        return n, float(p.sum()), words
    if c.name not in NORMAL_CHARTS or a.chart in ("ewma", "cusum"):
        return n, None, "run rules assume independent normal points"
    p, head, first, words = window_probabilities(rule, same_side)
    total = sum(v for i, v in head.items() if i < n) + p * max(0, n - first)
    return n, float(total), words

