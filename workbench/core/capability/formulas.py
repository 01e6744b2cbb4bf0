"""Capability index formulas, confidence bounds and expected fallout.

Small pure functions with no knowledge of data files or settings; ``capability.assess``
combines them.  The interval functions accept numpy arrays as well as scalars so that
simulations can call them once for many samples.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import stats

BOUND_KINDS = ("two-sided", "lower")


@dataclass(frozen=True)
class Indices:
    """The four indices of one kind (C indices with sigma within, P indices with sigma overall)."""

    potential: float | None
    """Cp or Pp: spread of the specification over the process spread (two-sided specs only)."""
    lower: float | None
    """Cpl or Ppl: room below the centre down to the LSL (None without an LSL)."""
    upper: float | None
    """Cpu or Ppu: room above the centre up to the USL (None without a USL)."""
    worst: float | None
    """Cpk or Ppk: the smaller of ``lower`` and ``upper`` (the one present for one-sided specs)."""


@dataclass(frozen=True)
class Fallout:
    """Parts per million outside the specification, per side and in total."""

    below: float | None
    """ppm below the LSL (None without an LSL)."""
    above: float | None
    """ppm above the USL (None without a USL)."""
    total: float
    """Sum of the sides present."""


def _check(bounds: str) -> None:
    if bounds not in BOUND_KINDS:
        raise ValueError(f"bounds must be one of {BOUND_KINDS}, got {bounds!r}")


def _z(conf: float, bounds: str) -> float:
    _check(bounds)
    return float(stats.norm.ppf(1.0 - (1.0 - conf) / 2.0 if bounds == "two-sided" else conf))


def _pair(low, high):
    low, high = np.asarray(low, dtype=float), np.asarray(high, dtype=float)
    if low.ndim == 0:
        return float(low), float(high)
    return low, high


def _worst(lower: float | None, upper: float | None) -> float | None:
    present = [v for v in (lower, upper) if v is not None]
    return min(present) if present else None


def normal_indices(mean: float, sigma: float | None, lsl: float | None, usl: float | None) -> Indices:
    """Cp, Cpl, Cpu, Cpk (or Pp ... Ppk) of a normal process.

    Parameters
    ----------
    mean : float
        Process centre.
    sigma : float or None
        Process standard deviation; when it is None, not finite or not positive every index is None.
    lsl, usl : float or None
        Specification limits; a missing limit makes its side (and Cp) None.

    Returns
    -------
    Indices

    References
    ----------
    Kane, V. E. (1986), "Process capability indices", Journal of Quality Technology 18(1):
    Cp = (USL - LSL)/(6 sigma), Cpu = (USL - mean)/(3 sigma), Cpl = (mean - LSL)/(3 sigma),
    Cpk = min(Cpl, Cpu).
    """
    if sigma is None or not math.isfinite(sigma) or sigma <= 0:
        return Indices(None, None, None, None)
    lower = (mean - lsl) / (3.0 * sigma) if lsl is not None else None
    upper = (usl - mean) / (3.0 * sigma) if usl is not None else None
    potential = (usl - lsl) / (6.0 * sigma) if lsl is not None and usl is not None else None
    return Indices(potential, lower, upper, _worst(lower, upper))


def percentile_indices(q_low: float, q_mid: float, q_high: float,
                       lsl: float | None, usl: float | None) -> Indices:
    """Pp, Ppl, Ppu, Ppk from the 0.135 %, 50 % and 99.865 % points of a fitted distribution.

    References
    ----------
    ISO 22514-2 (percentile method); Clements, J. A. (1989), "Process capability calculations
    for non-normal distributions", Quality Progress 22(9):
    Pp = (USL - LSL)/(X99.865 - X0.135), Ppu = (USL - X50)/(X99.865 - X50),
    Ppl = (X50 - LSL)/(X50 - X0.135).
    """
    lower = (q_mid - lsl) / (q_mid - q_low) if lsl is not None and q_mid > q_low else None
    upper = (usl - q_mid) / (q_high - q_mid) if usl is not None and q_high > q_mid else None
    potential = ((usl - lsl) / (q_high - q_low)
                 if lsl is not None and usl is not None and q_high > q_low else None)
    return Indices(potential, lower, upper, _worst(lower, upper))


def centring_k(mean: float, lsl: float, usl: float) -> float:
    """Centring ratio k = |m - mean| / ((USL - LSL)/2), m the midpoint, so that Cpk = Cp (1 - k).

    References
    ----------
    Kane, V. E. (1986), "Process capability indices", Journal of Quality Technology 18(1).
    """
    half = (usl - lsl) / 2.0
    if not half > 0:
        return None
    return abs((usl + lsl) / 2.0 - mean) / half


def cpm_index(mean: float, sd: float, target: float, lsl: float, usl: float) -> float | None:
    """Cpm = (USL - LSL) / (6 sqrt(sd^2 + (mean - T)^2)); None when the root is 0.

    The plug-in estimator Cp / sqrt(1 + xi^2), xi = (mean - T)/sd, with ``sd`` the sample standard
    deviation (n - 1).  Chan, Cheng and Spiring, who introduced the index, estimate the root with
    sum((x - T)^2)/(n - 1) = sd^2 + n/(n - 1) (mean - T)^2 instead: their estimate is a little lower
    for an off-target process.

    References
    ----------
    Montgomery, D. C., *Introduction to Statistical Quality Control*, the process capability chapter
    (Cpm = Cp / sqrt(1 + V^2), V = (x-bar - T)/s) [from memory]; Boyles, R. A. (1991), "The Taguchi
    capability index", Journal of Quality Technology 23(1), whose interval uses the same xi.
    Chan, L. K., Cheng, S. W. and Spiring, F. A. (1988), "A new measure of process capability: Cpm",
    Journal of Quality Technology 20(3), for the index itself (with the other estimator, see above).
    """
    tau = math.sqrt(sd * sd + (mean - target) ** 2)
    return (usl - lsl) / (6.0 * tau) if tau > 0 else None


def cp_chi2_interval(cp, n, conf: float = 0.95, bounds: str = "two-sided"):
    """Confidence interval for Cp (or Pp) from the chi-square distribution of s^2.

    ``Cp_hat sqrt(chi2_{a/2, n-1}/(n-1)) <= Cp <= Cp_hat sqrt(chi2_{1-a/2, n-1}/(n-1))``; with
    ``bounds="lower"`` the lower bound uses ``chi2_{a, n-1}`` and the upper end is +inf.

    Returns
    -------
    (low, high) : floats, or arrays when ``cp`` / ``n`` are arrays

    References
    ----------
    Montgomery, D. C., Introduction to Statistical Quality Control, section on confidence
    intervals for process capability ratios (exact when sigma is the sample SD of normal data).
    """
    cp, df = np.asarray(cp, dtype=float), np.asarray(n, dtype=float) - 1.0
    alpha = 1.0 - conf
    _check(bounds)
    if bounds == "lower":
        return _pair(cp * np.sqrt(stats.chi2.ppf(alpha, df) / df), np.full_like(cp * df, np.inf))
    return _pair(cp * np.sqrt(stats.chi2.ppf(alpha / 2.0, df) / df),
                 cp * np.sqrt(stats.chi2.ppf(1.0 - alpha / 2.0, df) / df))


def bissell_interval(cpk, n, conf: float = 0.95, bounds: str = "two-sided"):
    """Bissell's normal approximation to the confidence interval for Cpk (or Ppk, Cpl, Cpu).

    ``Cpk_hat +- z sqrt(1/(9n) + Cpk_hat^2 / (2(n-1)))``, which equals the published form
    ``Cpk_hat [1 +- z sqrt(1/(9 n Cpk_hat^2) + 1/(2(n-1)))]`` for positive Cpk_hat and stays
    ordered for Cpk_hat <= 0.  With ``bounds="lower"`` z is the one-sided quantile and the
    upper end is +inf.

    References
    ----------
    Bissell, A. F. (1990), "How reliable is your capability index?", Applied Statistics 39(3).
    """
    cpk, n = np.asarray(cpk, dtype=float), np.asarray(n, dtype=float)
    half = _z(conf, bounds) * np.sqrt(1.0 / (9.0 * n) + cpk ** 2 / (2.0 * (n - 1.0)))
    if bounds == "lower":
        return _pair(cpk - half, np.full_like(half, np.inf))
    return _pair(cpk - half, cpk + half)


def boyles_cpm_interval(cpm, n, xi, conf: float = 0.95, bounds: str = "two-sided"):
    """Boyles' chi-square approximation to the confidence interval for Cpm.

    ``Cpm_hat sqrt(chi2_{a/2, v}/v) <= Cpm <= Cpm_hat sqrt(chi2_{1-a/2, v}/v)`` with
    ``v = n (1 + xi^2)^2 / (1 + 2 xi^2)`` and ``xi = (mean - T)/s``.

    References
    ----------
    Boyles, R. A. (1991), "The Taguchi capability index", Journal of Quality Technology 23(1).
    """
    cpm, n, xi = (np.asarray(a, dtype=float) for a in (cpm, n, xi))
    nu = n * (1.0 + xi ** 2) ** 2 / (1.0 + 2.0 * xi ** 2)
    alpha = 1.0 - conf
    _check(bounds)
    if bounds == "lower":
        return _pair(cpm * np.sqrt(stats.chi2.ppf(alpha, nu) / nu), np.full_like(cpm * nu, np.inf))
    return _pair(cpm * np.sqrt(stats.chi2.ppf(alpha / 2.0, nu) / nu),
                 cpm * np.sqrt(stats.chi2.ppf(1.0 - alpha / 2.0, nu) / nu))


def ppm_from_index(c) -> float:
    """One-sided normal fallout of a one-sided index: ``1e6 Phi(-3 C)`` ppm.

    References
    ----------
    Follows from the normal model (definition of Cpl / Cpu).
    """
    return float(1e6 * stats.norm.sf(3.0 * float(c)))


def fallout(lsl: float | None, usl: float | None, cdf_lsl: float | None, sf_usl: float | None) -> Fallout:
    """Assemble a Fallout from a model's probability below the LSL and above the USL."""
    below = 1e6 * float(cdf_lsl) if lsl is not None and cdf_lsl is not None else None
    above = 1e6 * float(sf_usl) if usl is not None and sf_usl is not None else None
    return Fallout(below, above, (below or 0.0) + (above or 0.0))


def normal_fallout(mean: float, sigma: float | None, lsl: float | None, usl: float | None) -> Fallout | None:
    """Expected ppm below LSL / above USL of a normal(mean, sigma) process; None without sigma > 0.

    References
    ----------
    Follows from the normal model: 1e6 Phi((LSL - mean)/sigma) and 1e6 (1 - Phi((USL - mean)/sigma)).
    """
    if sigma is None or not math.isfinite(sigma) or sigma <= 0:
        return None
    dist = stats.norm(mean, sigma)
    return fallout(lsl, usl, dist.cdf(lsl) if lsl is not None else None,
                   dist.sf(usl) if usl is not None else None)


def observed_fallout(x: np.ndarray, lsl: float | None, usl: float | None) -> Fallout:
    """ppm of the readings strictly below the LSL / strictly above the USL (on a limit is in spec)."""
    n = max(int(x.size), 1)
    return fallout(lsl, usl, np.count_nonzero(x < lsl) / n if lsl is not None else None,
                   np.count_nonzero(x > usl) / n if usl is not None else None)
