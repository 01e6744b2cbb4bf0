"""Small-shift charts: EWMA and the two-sided tabular CUSUM.

Both take the plotted series ``x`` (individual readings or subgroup means), the target
``mu0`` and the sigma of one plotted point, ``sigma_x = sigma_within / sqrt(n_i)`` (a number
or one per point).  Excluded points and missing values (NaN) are skipped: the statistic
carries over unchanged, the point does not count in the EWMA's ``i``, and it is never
flagged.  An excluded point is plotted at the carried value; a missing one is NaN.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.signal import lfilter

from workbench.core.model import ChartResult, WorkbenchError

EWMA_DESIGNS: tuple[tuple[float, float, float], ...] = (
    (0.05, 2.615, 500.0),
    (0.10, 2.814, 500.0),
    (0.20, 2.962, 500.0),
    (0.25, 2.998, 500.0),
    (0.40, 3.054, 500.0),
    (0.50, 3.071, 500.0),
    (0.75, 3.087, 500.0),
    (1.00, 3.090, 500.0),
)
"""(lambda, L, in-control ARL) for asymptotic limits: Lucas, J. M. & Saccucci, M. S. (1990),
Technometrics 32(1) [from memory]; the tests recompute each in-control ARL by a Markov chain."""

CUSUM_DEFAULTS = {"k": 0.5, "h": 5.0}
"""Default k = 0.5, h = 5: in-control ARL about 465 (h = 4 about 168, h = 4.77 about 370)
(Montgomery, Introduction to SQC, tabular CUSUM chapter [from memory]; checked by a Markov chain)."""


@dataclass(frozen=True)
class CusumSignal:
    """One CUSUM excursion above H."""

    side: str
    """"upper" (C⁺ > H: the mean went up) or "lower" (C⁻ > H: it went down)."""
    position: int
    """0-based position of the first point beyond H in this excursion."""
    change_point: int
    """Estimated first shifted point: the next point after the sum was last zero (0 if it never was)."""
    run_length: int
    """N: points used from the change point to the signal, inclusive."""
    shift: float
    """Estimated shift in sigma units: k + C/N (signed: negative for the lower side)."""
    mean: float
    """Estimated new mean: mu0 ± (K + C/N) (raw units; approximate when sigma varies)."""


@dataclass(frozen=True)
class CusumInfo:
    """Design and signals of a tabular CUSUM."""

    k: float
    """Reference value in sigma units."""
    h: float
    """Decision interval in sigma units."""
    standardized: bool
    """True when sigma varies by point: the sums are of (x − mu0)/sigma_i, in sigma units."""
    K: float
    """Reference value on the plotted scale (k·sigma, or k when standardized)."""
    H: float
    """Decision interval on the plotted scale (h·sigma, or h when standardized)."""
    head_start: float
    """Fast-initial-response head start in sigma units (0 for none)."""
    signals: tuple[CusumSignal, ...]
    """One entry per excursion beyond H, in time order per side (upper first)."""


def ewma_design(lam: float) -> float:
    """The published L for a tabulated lambda (in-control ARL about 500); see EWMA_DESIGNS."""
    for lam_d, big_l, _ in EWMA_DESIGNS:
        if abs(lam - lam_d) < 1e-9:
            return big_l
    listed = ", ".join(f"{d[0]:g}" for d in EWMA_DESIGNS)
    raise WorkbenchError(f"no published EWMA design for lambda {lam:g} (tabulated: {listed}); give L yourself")


def ewma_chart(x: np.ndarray, target: float, sigma_x: np.ndarray | float, excluded: np.ndarray,
               lam: float = 0.2, L: float = 2.962, asymptotic: bool = False) -> ChartResult:
    """EWMA chart z_i = lam·x_i + (1 − lam)·z_{i−1}, z_0 = target, with L-sigma limits.

    Exact limits (default) use Var(z_i) = lam² Σ_j (1 − lam)^{2(i−j)} sigma_j² over the i points
    used so far, which for a constant sigma is sigma² lam/(2 − lam)·(1 − (1 − lam)^{2i});
    asymptotic limits use sigma_i² lam/(2 − lam).  ``flags["beyond-limits"]`` holds the used
    points strictly outside.

    References
    ----------
    Roberts, S. W. (1959), "Control chart tests based on geometric moving averages", Technometrics 1.
    Lucas, J. M. & Saccucci, M. S. (1990), "Exponentially weighted moving average control schemes:
    properties and enhancements", Technometrics 32(1).
    """
    if not 0.0 < lam <= 1.0:
        raise WorkbenchError(f"EWMA lambda must be in (0, 1], not {lam:g}")
    if not L > 0:
        raise WorkbenchError(f"EWMA L must be positive, not {L:g}")
    x, sig, excluded, used = _prepare(x, target, sigma_x, excluded, "EWMA")
    count = np.cumsum(used)
    zu = lfilter([lam], [1.0, lam - 1.0], x[used], zi=[(1.0 - lam) * target])[0]
    z = np.concatenate([[target], zu])[count]
    z[~np.isfinite(x)] = np.nan
    if asymptotic:
        sd_u = sig[used] * np.sqrt(lam / (2.0 - lam))
    else:
        sd_u = np.sqrt(lfilter([lam * lam], [1.0, -(1.0 - lam) ** 2], sig[used] ** 2))
    sd = np.concatenate([[np.nan], sd_u])[count]
    lcl, ucl = target - L * sd, target + L * sd
    with np.errstate(invalid="ignore"):
        beyond = np.flatnonzero(used & ((z > ucl) | (z < lcl)))
    kind = "asymptotic" if asymptotic else "exact"
    return ChartResult(name="ewma", title=f"EWMA (λ {lam:g}, L {L:g}, {kind} limits)", role="location",
                       values=z, center=np.full(x.size, float(target)), lcl=lcl, ucl=ucl, sigma=sd,
                       excluded=excluded, flags={"beyond-limits": beyond}, rules=("beyond-limits",))


def cusum_chart(x: np.ndarray, target: float, sigma_x: np.ndarray | float, excluded: np.ndarray,
                k: float = 0.5, h: float = 5.0, head_start: float = 0.0) -> tuple[ChartResult, CusumInfo]:
    """Two-sided tabular CUSUM with optional fast-initial-response head start.

    C⁺_i = max(0, x_i − (mu0 + K) + C⁺_{i−1}),  C⁻_i = max(0, (mu0 − K) − x_i + C⁻_{i−1}),
    C⁺_0 = C⁻_0 = head_start·sigma, K = k·sigma, H = h·sigma.  With a constant sigma the sums
    are in raw units; when sigma varies by point they are of the standardized (x − mu0)/sigma_i
    and K = k, H = h.  The sums are not reset after a signal.

    Sign convention: ``values`` is C⁺ and ``extra["cusum-"]`` is C⁻, both ≥ 0; ``ucl`` is +H and
    ``lcl`` is −H, so a view draws −C⁻ against the LCL.  ``flags["beyond-limits"]`` holds the used
    points where C⁺ > H or C⁻ > H; ``sigma`` is the plotted scale (sigma, or 1 when standardized).

    References
    ----------
    Page, E. S. (1954), "Continuous inspection schemes", Biometrika 41.
    Lucas, J. M. & Crosier, R. B. (1982), "Fast initial response for CUSUM quality-control schemes",
    Technometrics 24(3).
    Montgomery, D. C., *Introduction to Statistical Quality Control*, tabular CUSUM (change point
    and new-mean estimates).
    """
    if not k >= 0:
        raise WorkbenchError(f"CUSUM k must be zero or more, not {k:g}")
    if not h > 0:
        raise WorkbenchError(f"CUSUM h must be positive, not {h:g}")
    if not 0 <= head_start < h:
        raise WorkbenchError(f"CUSUM head start must be at least 0 and below h ({h:g}), not {head_start:g}")
    x, sig, excluded, used = _prepare(x, target, sigma_x, excluded, "CUSUM")
    su = sig[used]
    standardized = bool(np.any(su != su[0]))
    scale = np.ones(x.size) if standardized else np.full(x.size, su[0])
    with np.errstate(invalid="ignore"):
        y = np.where(used, (x - target) / (sig if standardized else 1.0), 0.0)
    unit = 1.0 if standardized else float(su[0])
    big_k, big_h, c0 = k * unit, h * unit, head_start * unit
    cp = _lindley(np.where(used, y - big_k, 0.0), c0)
    cm = _lindley(np.where(used, -y - big_k, 0.0), c0)
    missing = ~np.isfinite(x)
    cp[missing] = cm[missing] = np.nan
    signals = []
    for side, c in (("upper", cp), ("lower", cm)):
        signals += _signals(side, c, used, big_k, big_h, c0, unit, target, sig if standardized else None)
    beyond = np.flatnonzero(used & ((cp > big_h) | (cm > big_h)))
    m = x.size
    title = f"Tabular CUSUM{' of standardized points' if standardized else ''} (k {k:g}, h {h:g})"
    chart = ChartResult(name="cusum", title=title, role="location", values=cp, center=np.zeros(m),
                        lcl=np.full(m, -big_h), ucl=np.full(m, big_h), sigma=scale, excluded=excluded,
                        flags={"beyond-limits": beyond}, rules=("beyond-limits",), extra={"cusum-": cm})
    info = CusumInfo(k=float(k), h=float(h), standardized=standardized, K=big_k, H=big_h,
                     head_start=float(head_start), signals=tuple(signals))
    return chart, info


def _lindley(d: np.ndarray, c0: float) -> np.ndarray:
    """C_i = max(0, C_{i−1} + d_i), C_0 = c0 ≥ 0, without a Python loop.

    Unrolling the recursion (Lindley's) gives C_i = max(0, d_i, d_i + d_{i−1}, …, d_i + … + d_1 + c0).
    With S_i = c0 + d_1 + … + d_i the sums ending at i are S_i − S_j (j = 1 … i; j = i gives the 0)
    and S_i itself, so C_i = S_i − min(0, min_{j ≤ i} S_j).  The result is ≥ 0 in floating point
    (S_i is never below the running minimum) and exactly 0 where the loop resets.  Rounding in the
    cumulative sum grows with the length and |S|: about 1e-9 against the loop for 2·10⁵ points.
    """
    s = c0 + np.cumsum(d)
    return s - np.minimum(np.minimum.accumulate(s), 0.0)


def _signals(side, c, used, big_k, big_h, c0, unit, target, sig) -> list[CusumSignal]:
    """One CusumSignal per excursion above H (in used-point order), with Montgomery's estimates.

    ``sig`` is the per-point sigma when the sums are standardized (else None): the shift in sigma
    units is then turned into a mean with the average sigma of the points in the run.
    """
    idx = np.flatnonzero(used)
    cu = c[idx]
    above = cu > big_h
    j = np.flatnonzero(above & ~np.concatenate([[False], above[:-1]]))
    z = np.maximum.accumulate(np.where(cu == 0, np.arange(cu.size), -1))[j]   # last zero before j
    n = j - z
    # C/N per Montgomery; when the run began at the start the head start is not data: take it off
    shift = (big_k + (cu[j] - np.where(z < 0, c0, 0.0)) / n) / unit
    if sig is None:
        run_sigma = np.full(j.size, unit)
    else:
        total = np.concatenate([[0.0], np.cumsum(sig[idx])])
        run_sigma = (total[j + 1] - total[z + 1]) / n
    sign = 1.0 if side == "upper" else -1.0
    rows = zip(idx[j].tolist(), idx[z + 1].tolist(), n.tolist(), (sign * shift).tolist(),
               (target + sign * shift * run_sigma).tolist())
    return [CusumSignal(side, pos, change, run, sh, mean) for pos, change, run, sh, mean in rows]


def _prepare(x, target, sigma_x, excluded, what):
    x = np.asarray(x, dtype=float).ravel()
    m = x.size
    excluded = np.zeros(m, bool) if excluded is None else np.asarray(excluded, dtype=bool).ravel().copy()
    sig = np.broadcast_to(np.asarray(sigma_x, dtype=float), (m,)).copy() if np.ndim(sigma_x) == 0 \
        else np.asarray(sigma_x, dtype=float).ravel()
    if excluded.size != m or sig.size != m:
        raise WorkbenchError(f"{what}: {m} points but {excluded.size} exclusion marks and {sig.size} sigmas")
    if not np.isfinite(target):
        raise WorkbenchError(f"{what}: the target must be a number")
    used = ~excluded & np.isfinite(x)
    if not used.any():
        raise WorkbenchError(f"{what}: no points left to chart")
    bad = used & ~(np.isfinite(sig) & (sig > 0))
    if bad.any():
        raise WorkbenchError(f"{what}: the sigma of point {int(np.flatnonzero(bad)[0]) + 1} must be a positive number")
    return x, sig, excluded, used
