"""Where a sustained shift most likely began, and the shape of every signal.

For a signal whose shape is a sustained shift (:mod:`workbench.core.charts.shapes`: runs on one side,
zone runs, two or more consecutive points beyond the same limit, or any signal of a small-shift
chart) the first shifted subgroup is estimated by maximum likelihood for a step change in a normal
mean with the in-control mean μ0 (the centre line) and the sigma of each plotted point known from the
trial limits.  With T the signal's last firing point and t the last in-control point, the log
likelihood of "the mean stepped after t" against "no change", maximised over the new mean, is

    ℓ(t) = (Σ_{i=t+1..T} w_i (x_i − μ0))² / (2 Σ_{i=t+1..T} w_i),   w_i = 1/σ_i²,

which for a constant σ is (T − t)(X̿_{T,t} − μ0)² / (2σ²): Samuel, Pignatiello & Calvin's estimator
τ̂ = argmax_{0≤t<T} (T − t)(X̿_{T,t} − μ0)².  The subgroup reported is the first shifted one, τ̂ + 1.
Excluded and missing points are skipped (the sums run over the used points).  The search looks back
at most ``LOOKBACK`` used points from T, so a report with tens of thousands of signals stays cheap
(one cumulative sum per chart, then ``LOOKBACK`` candidates per signal).

The uncertainty is a likelihood set: every t whose ℓ(t) is within χ²₁(0.95)/2 ≈ 1.92 of the maximum,
reported as the span from its earliest to its latest member.  That threshold is the usual large-sample
approximation (common practice); the change-point likelihood is not regular, so it is a guide, not an
exact 95 % interval — the tests measure its coverage.

Which estimator each chart uses: X̄, I, p, np, c, u: the step maximum-likelihood estimate above (for
counts through the normal approximation the limits use).  CUSUM: its own estimate, the first point
after the side's sum was last zero (the estimate the CUSUM warning states), without an interval.
EWMA: none (its plotted statistic is a weighted average of many points, not the subgroup means the
estimator needs).  Spread charts (R, S, MR): none (the estimator is for a step in the mean of a normal
statistic; ranges and standard deviations are skewed and a step in the spread moves their mean and
their sigma together; a step in a normal variance has its own estimator, by the same authors in the
same volume [from memory], not built here).

References
----------
Samuel, T. R., Pignatiello, J. J. & Calvin, J. A. (1998), "Identifying the time of a step change with
X̄ control charts", *Quality Engineering* 10(3), 521–527.
Page, E. S. (1954), "Continuous inspection schemes", *Biometrika* 41 (CUSUM); Montgomery, D. C.,
*Introduction to Statistical Quality Control*, tabular CUSUM (the last-zero change-point estimate).
"""
from __future__ import annotations

import weakref
from dataclasses import dataclass

import numpy as np

from workbench.core.charts import shapes as S
from workbench.core.model import Analysis, ChartResult

LOOKBACK = 100
"""Used points searched back from a signal's last firing point (the change can lie this far back)."""
LIKELIHOOD_DROP = 1.920729
"""χ²₁(0.95)/2 = 3.841459/2: the likelihood set keeps t with ℓ(t) ≥ max ℓ − this."""
STEP_MLE, CUSUM_LAST_ZERO = "step-mle", "cusum-last-zero"
ESTIMATORS = {STEP_MLE: "maximum-likelihood step change (Samuel, Pignatiello & Calvin 1998)",
              CUSUM_LAST_ZERO: "CUSUM: first point after the sum was last zero (Page 1954; Montgomery)"}
_STEP_CHARTS = ("xbar", "i", "p", "np", "c", "u")
_SHAPE_IDS = tuple(S.SHAPES)


@dataclass(frozen=True)
class ChangePoint:
    """The estimated start of a sustained shift."""

    index: int
    """Position of the first shifted subgroup (τ̂ + 1)."""
    low: int | None
    """Earliest first-shifted position in the likelihood set (None: the estimator gives no interval)."""
    high: int | None
    """Latest first-shifted position in the likelihood set."""
    estimator: str
    """``step-mle`` or ``cusum-last-zero`` (see ESTIMATORS)."""
    shift: float
    """Estimated shift of the mean after the change, in sigmas of the plotted statistic (NaN for CUSUM)."""


def step_change(x, mu0: float, sigma) -> tuple[int, int, int, np.ndarray]:
    """Maximum-likelihood first shifted point of a step change in a normal mean, over the whole of ``x``.

    Parameters
    ----------
    x : the plotted values up to and including the signal's last firing point T (used points only)
    mu0 : the in-control mean (the centre line)
    sigma : the sigma of each plotted point (a number or one per point)

    Returns
    -------
    (first, low, high, loglik): the first shifted position (τ̂ + 1, 0-based), the earliest and latest
    positions of the likelihood set, and ℓ for every candidate first shifted position 0..T.

    References
    ----------
    Samuel, Pignatiello & Calvin (1998), Quality Engineering 10(3), 521–527.
    """
    x = np.asarray(x, float)
    w = 1.0 / np.broadcast_to(np.asarray(sigma, float), x.shape) ** 2
    sa = np.cumsum((w * (x - mu0))[::-1])[::-1]  # Σ_{i=s..T}, for each first shifted s
    sw = np.cumsum(w[::-1])[::-1]
    ll = sa * sa / (2.0 * sw)
    best = int(np.argmax(ll))
    near = np.flatnonzero(ll >= ll[best] - LIKELIHOOD_DROP)
    return best, int(near[0]), int(near[-1]), ll


@dataclass(frozen=True, eq=False)
class SignalShapes:
    """Shape and change point of every signal of an analysis, as arrays in the signal table's order."""

    shape: np.ndarray
    """Index into ``shapes.SHAPES`` per signal."""
    role: np.ndarray
    """True for a signal on a spread chart."""
    index: np.ndarray
    """First shifted position (−1: no change point)."""
    low: np.ndarray
    """Earliest position of the likelihood set (−1: none)."""
    high: np.ndarray
    estimator: np.ndarray
    """0 none, 1 step-mle, 2 cusum-last-zero."""
    shift: np.ndarray

    def shape_id(self, i: int) -> str:
        return _SHAPE_IDS[int(self.shape[i])]

    def role_of(self, i: int) -> str:
        return "spread" if self.role[i] else "location"

    def change(self, i: int) -> ChangePoint | None:
        if self.index[i] < 0:
            return None
        est = int(self.estimator[i])
        lo, hi = (int(self.low[i]), int(self.high[i])) if self.low[i] >= 0 else (None, None)
        return ChangePoint(int(self.index[i]), lo, hi, (None, STEP_MLE, CUSUM_LAST_ZERO)[est], float(self.shift[i]))


_CACHE: "weakref.WeakKeyDictionary[Analysis, SignalShapes]" = weakref.WeakKeyDictionary()


def signal_shapes(a: Analysis) -> SignalShapes:
    """Shapes and change points of all signals (computed once per analysis, then remembered)."""
    got = _CACHE.get(a)
    if got is None:
        got = _CACHE[a] = _compute(a)
    return got


def _compute(a: Analysis) -> SignalShapes:
    table = a.signals
    n = len(table)
    out = {k: np.full(n, -1, np.int64) for k in ("index", "low", "high")}
    shape, est = np.zeros(n, np.int64), np.zeros(n, np.int64)
    shift, role = np.full(n, np.nan), np.zeros(n, bool)
    groups = getattr(table, "groups", None)
    if groups is None:  # a plain tuple of Signal: one part per signal
        parts = [(s.chart, s.rule, np.array([s.fired[-1] if s.fired else s.last]),
                  np.array([s.fired[0] if s.fired else s.first]), np.array(s.points), np.array([0, len(s.points)]),
                  np.array([i])) for i, s in enumerate(table)]
    else:  # one part per (chart, rule) group; ``rows`` places the group's signals in the table's order
        gid, local = table.order()
        parts = []
        for g_i, g in enumerate(groups):
            sel = np.flatnonzero(gid == g_i)
            rows = np.empty(g.first.size, np.int64)
            rows[local[sel]] = sel
            parts.append((g.chart, g.rule, g.fired[g.fired_ptr[1:] - 1], g.fired[g.fired_ptr[:-1]], g.points,
                          g.point_ptr, rows))
    charts = {c.name: c for c in a.charts}
    used: dict[str, np.ndarray] = {}
    for chart, rule, last_fired, first_fired, points, ptr, rows in parts:
        c = charts.get(chart)
        if c is None or rows.size == 0:
            continue
        role[rows] = c.role == "spread"
        npts = np.diff(ptr)
        runs = _side_runs(c.values[points] - c.center[points], ptr)
        small = chart in ("ewma", "cusum")
        # the shape depends on the rule, on one point or more, and on the side runs (1, 2, 3 or more)
        lookup = np.array([_SHAPE_IDS.index(S.shape_of(rule, k, r, small)) for k in (1, 2) for r in (1, 2, 3)],
                          np.int64)
        codes = lookup[3 * (npts >= 2) + runs - 1]
        shape[rows] = codes
        shifted = codes == _SHAPE_IDS.index("shift")
        if not shifted.any():
            continue
        r = rows[shifted]
        if chart == "cusum":
            out["index"][r] = _cusum_change(c, _once(used, c), first_fired[shifted])
            est[r] = 2
        elif chart in _STEP_CHARTS and c.role == "location":
            i, lo, hi, sh = _step_changes(c, _once(used, c), last_fired[shifted])
            out["index"][r], out["low"][r], out["high"][r], shift[r] = i, lo, hi, sh
            est[r] = np.where(i >= 0, 1, 0)
    return SignalShapes(shape, role, out["index"], out["low"], out["high"], est, shift)


def _side_runs(d: np.ndarray, ptr: np.ndarray) -> np.ndarray:
    """Runs on one side of the centre line among each signal's points (capped at 3), from the points'
    deviations ``d`` (concatenated; signal g's are d[ptr[g]:ptr[g+1]]); a point on the line joins no side."""
    k = ptr.size - 1
    if d.size == 0:
        return np.ones(k, np.int64)
    side = np.sign(np.nan_to_num(d))
    switch = np.zeros(d.size, np.int64)
    switch[1:] = (side[1:] != side[:-1]) & (side[1:] != 0) & (side[:-1] != 0)
    switch[ptr[:-1]] = 0  # the first point of each signal starts its first run
    return np.minimum(np.add.reduceat(switch, ptr[:-1]) + 1, 3)


def _once(used: dict[str, np.ndarray], c: ChartResult) -> np.ndarray:
    if c.name not in used:
        used[c.name] = _used(c)
    return used[c.name]


def _used(c: ChartResult) -> np.ndarray:
    with np.errstate(invalid="ignore"):
        return np.flatnonzero(~np.asarray(c.excluded, bool) & np.isfinite(c.values) & (c.sigma > 0)
                              & np.isfinite(c.center))


def _step_changes(c: ChartResult, idx: np.ndarray, ends: np.ndarray, chunk: int = 4096):
    """The step estimate for each signal ending at position ``ends`` (vectorised, LOOKBACK candidates).

    ``idx`` holds the chart's used positions.  Only the points of each signal's search window are read:
    a (signals × LOOKBACK) gather, summed backwards from the last firing point, so the cost does not
    grow with the length of the series."""
    k = ends.size
    first, low, high, shift = (np.full(k, -1, np.int64), np.full(k, -1, np.int64), np.full(k, -1, np.int64),
                               np.full(k, np.nan))
    e = np.searchsorted(idx, ends)  # the last firing point is always a used point
    back = np.arange(LOOKBACK)
    for s in range(0, k, chunk):
        ee = e[s:s + chunk]
        cand = ee[:, None] - back[None, :]  # first shifted (compressed), latest first
        ok = cand >= 0
        pos = idx[np.where(ok, cand, 0)]
        sig = c.sigma[pos]
        w = np.where(ok, 1.0 / (sig * sig), 0.0)
        d = np.where(ok, c.values[pos] - c.center[pos], 0.0)
        sa = np.cumsum(w * d, axis=1)  # Σ over the candidate's first shifted point .. the last firing point
        sw = np.cumsum(w, axis=1)
        sz = np.cumsum(np.where(ok, d / sig, 0.0), axis=1)
        with np.errstate(invalid="ignore", divide="ignore"):
            ll = np.where(ok, sa * sa / (2.0 * sw), -np.inf)
        top = ll.max(axis=1)
        best = np.argmax(ll, axis=1)
        near = ll >= (top - LIKELIHOOD_DROP)[:, None]
        # latest first: the earliest member is the last True column, the latest the first True column
        j_lo = LOOKBACK - 1 - np.argmax(near[:, ::-1], axis=1)
        j_hi = np.argmax(near, axis=1)
        rows = np.arange(ee.size)
        first[s:s + chunk] = idx[cand[rows, best]]
        low[s:s + chunk] = idx[cand[rows, j_lo]]
        high[s:s + chunk] = idx[cand[rows, j_hi]]
        shift[s:s + chunk] = sz[rows, best] / (best + 1)
    return first, low, high, shift


def _cusum_change(c: ChartResult, idx: np.ndarray, firsts: np.ndarray) -> np.ndarray:
    """The CUSUM's own estimate for each signal first beyond H at ``firsts``: the used point after the
    signalling side's sum was last zero (the first used point when it never was)."""
    cp, cm = c.values[idx], c.extra.get("cusum-", np.zeros_like(c.values))[idx]
    j = np.searchsorted(idx, firsts)
    upper = cp[j] > c.ucl[idx][j]
    out = np.empty(firsts.size, np.int64)
    for side, sums in ((True, cp), (False, cm)):
        sel = upper == side
        if not sel.any():
            continue
        last_zero = np.maximum.accumulate(np.where(sums == 0, np.arange(sums.size), -1))[j[sel]]
        out[sel] = idx[last_zero + 1]
    return out
