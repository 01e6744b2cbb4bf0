"""Variables control charts: X̄-R, X̄-S and I-MR, with per-point limits.

Every chart here is expressed through one within-subgroup sigma estimate σ̂ of the
individual readings; limits follow from the distribution of each plotted statistic:

* X̄:  centre μ̂, sigma σ̂/√nᵢ, limits μ̂ ± 3σ̂/√nᵢ;
* R:  centre d2(nᵢ)σ̂, sigma d3(nᵢ)σ̂, limits (d2 ± 3d3)σ̂ (lower clipped at 0);
* S:  centre c4(nᵢ)σ̂, sigma √(1−c4²)σ̂, limits (c4 ± 3√(1−c4²))σ̂ (lower clipped at 0);
* I:  centre x̄, limits x̄ ± 3σ̂ with σ̂ = MR̄/d2(2);  MR: centre MR̄, UCL D4(2)·MR̄.

With equal subgroup sizes and the matching estimator these reduce to the textbook forms
(x̿ ± A2·R̄, D3·R̄ … D4·R̄, x̿ ± A3·S̄, B3·S̄ … B4·S̄).

References
----------
Montgomery, D. C. *Introduction to Statistical Quality Control*, ch. 6 (X̄-R, X̄-S, variable
sample size) and the individuals chart.
ASTM E2587, *Standard Practice for Use of Control Charts in Statistical Process Control*
(pooled standard deviation with the c4(d+1) correction).
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from workbench.core.charts import constants as K
from workbench.core.model import ChartResult, WorkbenchError


@dataclass(frozen=True, eq=False)
class SubgroupStats:
    """Per-subgroup statistics of the readings that are used."""

    n: np.ndarray
    """Readings per subgroup."""
    mean: np.ndarray
    range: np.ndarray
    """Range (NaN when n < 2)."""
    sd: np.ndarray
    """Sample standard deviation (NaN when n < 2)."""


def subgroup_stats(values: np.ndarray) -> SubgroupStats:
    """Statistics of each row of a (subgroups, streams) array, ignoring NaN."""
    nan = np.isnan(values)
    if not nan.any():
        m, k = values.shape
        n = np.full(m, k)
        if k >= 8:  # numpy sums 8 or more in blocks (pairwise); fewer one after another
            mean = values.mean(axis=1)
            sd = values.std(axis=1, ddof=1)
            rng = values.max(axis=1) - values.min(axis=1)
            return SubgroupStats(n=n, mean=mean, range=rng, sd=sd)
        # column by column: the same additions in the same order as numpy's row reduction of a few
        # columns (so the same bits), without its per-row overhead
        cols = [values[:, j] for j in range(k)]
        total = cols[0].copy()
        for c in cols[1:]:
            total += c
        mean = total / k
        if k < 2:
            return SubgroupStats(n=n, mean=mean, range=np.full(m, np.nan), sd=np.full(m, np.nan))
        ss = np.zeros(m)
        hi, lo = cols[0].copy(), cols[0].copy()
        for c in cols:
            dev = c - mean
            dev *= dev
            ss += dev
            np.maximum(hi, c, out=hi)
            np.minimum(lo, c, out=lo)
        ss /= k - 1
        return SubgroupStats(n=n, mean=mean, range=hi - lo, sd=np.sqrt(ss, out=ss))
    ok = ~nan
    n = ok.sum(axis=1)
    filled = np.where(ok, values, 0.0)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = filled.sum(axis=1) / n
        dev = np.where(ok, values - mean[:, None], 0.0)
        sd = np.sqrt((dev * dev).sum(axis=1) / (n - 1))
    hi = np.where(ok, values, -np.inf).max(axis=1)
    lo = np.where(ok, values, np.inf).min(axis=1)
    rng = hi - lo
    mean[n == 0] = np.nan
    sd[n < 2] = np.nan
    rng[n < 2] = np.nan
    return SubgroupStats(n=n, mean=mean, range=rng, sd=sd)


def estimate_sigma(method: str, stats: SubgroupStats, use: np.ndarray, known: float | None = None) -> float:
    """Within-subgroup sigma of the individual readings.

    Parameters
    ----------
    method : {"rbar", "sbar", "pooled", "pooled-sbar", "known"}
    stats : per-subgroup statistics
    use : boolean mask of subgroups that enter the estimate
    known : the standard value, for ``method="known"``

    References
    ----------
    Montgomery, *Introduction to SQC*, ch. 6 (R̄/d2, S̄/c4; for variable sample size the pooled
    s̄ = √(Σ(nᵢ−1)sᵢ²/(Σnᵢ − m)) with A3(nᵢ), B3(nᵢ), B4(nᵢ): ``pooled-sbar``); ASTM E2587 (pooled SD, c4(d+1)).
    For unequal sizes R̄/d2 and S̄/c4 average Rᵢ/d2(nᵢ) and sᵢ/c4(nᵢ).
    """
    if method == "known":
        if known is None or not known > 0:
            raise WorkbenchError("the known sigma must be a positive number (--known-sigma)")
        return float(known)
    sel = use & (stats.n >= 2)
    if method in ("rbar", "sbar"):
        fast = _mean_of_units(method, stats, use)
        if fast is not None:
            return fast
    if not sel.any():
        return float("nan")
    n = stats.n[sel]
    if method == "rbar":
        return float(np.mean(stats.range[sel] / K.table(n, K.d2)))
    if method == "sbar":
        return float(np.mean(stats.sd[sel] / K.table(n, K.c4)))
    if method in ("pooled", "pooled-sbar"):
        dof = int(np.sum(n - 1))
        sp = float(np.sqrt(np.sum((n - 1) * stats.sd[sel] ** 2) / dof))
        # pooled-sbar: the textbook s̄ itself (the caller divides by c4(nᵢ) per subgroup)
        return sp if method == "pooled-sbar" else sp / K.c4(min(dof + 1, K.MAX_N))
    raise WorkbenchError(f"sigma method {method!r} does not apply to subgrouped data")


def _cached(stats: SubgroupStats, key: str, make):
    """A value derived from ``stats`` alone, computed once and kept on the (immutable) stats object."""
    v = stats.__dict__.get(key)
    if v is None:
        v = make()
        object.__setattr__(stats, key, v)
    return v


def _mean_of_units(method: str, stats: SubgroupStats, use: np.ndarray) -> float | None:
    """R̄/d2 or S̄/c4 as the mean of Rᵢ/d2(nᵢ) (sᵢ/c4(nᵢ)) when only a few subgroups are left out.

    The sum over every subgroup is cached; the left-out ones are subtracted, so an interactive
    exclusion costs O(excluded) here.  Returns None when the direct mean is cheaper.
    """
    def make():
        unit = (stats.range / K.table(stats.n, K.d2) if method == "rbar" else stats.sd / K.table(stats.n, K.c4))
        ok = np.isfinite(unit) & (stats.n >= 2)
        return unit, ok, float(unit[ok].sum()), int(ok.sum())
    unit, ok, total, count = _cached(stats, "_units_" + method, make)
    out = np.flatnonzero(ok & ~use)
    if out.size * 20 >= ok.size:
        return None
    k = count - out.size
    return (total - float(unit[out].sum())) / k if k > 0 else float("nan")


def _const(m: int, v: float) -> np.ndarray:
    return np.full(m, v, dtype=float)


def xbar_chart(stats: SubgroupStats, center: float, sigma: float, excluded: np.ndarray) -> ChartResult:
    m = stats.n.size

    def inv_sqrt_n():
        with np.errstate(divide="ignore", invalid="ignore"):
            r = 1.0 / np.sqrt(stats.n.astype(float))
        r[stats.n == 0] = np.nan
        return r
    s = sigma * _cached(stats, "_inv_sqrt_n", inv_sqrt_n)
    c = _const(m, center)
    return ChartResult("xbar", "Subgroup mean", "location", stats.mean, c, c - 3 * s, c + 3 * s, s,
                       excluded, {})


def range_chart(stats: SubgroupStats, sigma: float, excluded: np.ndarray) -> ChartResult:
    d2 = K.table(stats.n, K.d2)
    d3 = K.table(stats.n, K.d3)
    c = d2 * sigma
    s = d3 * sigma
    return ChartResult("r", "Subgroup range", "spread", stats.range, c, np.maximum(0.0, c - 3 * s),
                       c + 3 * s, s, excluded, {})


def sd_chart(stats: SubgroupStats, sigma: float, excluded: np.ndarray) -> ChartResult:
    c4 = K.table(stats.n, K.c4)
    c = c4 * sigma
    s = np.sqrt(1.0 - c4 * c4) * sigma
    return ChartResult("s", "Subgroup standard deviation", "spread", stats.sd, c,
                       np.maximum(0.0, c - 3 * s), c + 3 * s, s, excluded, {})


def moving_ranges(x: np.ndarray, excluded: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Moving ranges of span 2 and the mask of those touching an excluded point."""
    mr = np.full(x.size, np.nan)
    mr[1:] = np.abs(np.diff(x))
    ex = excluded.copy()
    ex[1:] |= excluded[:-1]
    return mr, ex


def individuals_charts(x: np.ndarray, excluded: np.ndarray, known_mean: float | None,
                       known_sigma: float | None) -> tuple[ChartResult, ChartResult, float, float]:
    """I and MR charts.  Returns (i_chart, mr_chart, centre, sigma).

    References
    ----------
    Montgomery & Runger, *Applied Statistics and Probability for Engineers*, individuals chart:
    σ̂ = MR̄/d2(2), limits x̄ ± 3σ̂, MR chart UCL = D4(2)·MR̄.
    """
    m = x.size
    use = ~excluded & np.isfinite(x)
    mr, mr_ex = moving_ranges(x, excluded)
    mr_use = ~mr_ex & np.isfinite(mr)
    if known_sigma is not None:
        sigma = float(known_sigma)
    elif mr_use.any():
        sigma = float(np.mean(mr[mr_use])) / K.d2(2)
    else:
        sigma = float("nan")
    center = float(known_mean) if known_mean is not None else (float(np.mean(x[use])) if use.any() else float("nan"))
    c = _const(m, center)
    s = _const(m, sigma)
    i_chart = ChartResult("i", "Individual reading", "location", x, c, c - 3 * s, c + 3 * s, s, excluded, {})
    mc = _const(m, K.d2(2) * sigma)
    ms = _const(m, K.d3(2) * sigma)
    mr_chart = ChartResult("mr", "Moving range", "spread", mr, mc, np.maximum(0.0, mc - 3 * ms), mc + 3 * ms, ms,
                           mr_ex, {})
    return i_chart, mr_chart, center, sigma
