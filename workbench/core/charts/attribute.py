"""Attribute control charts: p and np (defectives), c and u (defects), Laney p′ / u′.

The caller sums the streams of each subgroup and passes one count (and one sample size)
per subgroup.  Limits are three-sigma, per point when the sample size varies; a negative
lower limit is set to 0 and an upper limit above the largest possible value (1 for p,
n for np) is set to that value.

Laney's correction (p and u only) multiplies the sigma of every point by sigma_z, the
spread of the points' z-scores estimated from their average moving range / 1.128.  With
sigma_z = 1 it is the plain chart.  Under ``laney="auto"`` it is *offered* (a warning
advises it, the plain limits stay) when the counts are clearly overdispersed, by this rule:

    sigma_z > 1.5  and  the chi-square dispersion test rejects at the 1% level.

Basis: sigma_z > 1.5 means the plain limits are at least a third too tight (the size
suggested in the issue); the test, X² = Σ z_i² on m − 1 degrees of freedom (Pearson's
binomial / Poisson index-of-dispersion test), guards against a chance excess: with 10
subgroups sigma_z passes 1.5 about 6% of the time on in-control data (simulation, SD of
sigma_z ≈ 0.30 for m = 10, 0.21 for m = 20).  ``"on"`` applies it, ``"off"`` never does (and
says nothing); the engineer decides, because switching silently would hide the textbook signals.  np and c charts get the dispersion warning
but no correction (use p or u).
"""
from __future__ import annotations

from collections.abc import Iterable
from dataclasses import dataclass

import numpy as np
from scipy import stats

from workbench.core.model import ATTRIBUTE_CHARTS, ChartResult, WorkbenchError

LANEY_MODES = ("auto", "on", "off")
LANEY_CHARTS = ("p", "u")
LANEY_D2 = 1.128
"""Laney (2002) divides the average moving range of the z-scores by 1.128 (d2 for n = 2)."""
LANEY_SIGMA_Z = 1.5
"""sigma_z above which (with the dispersion test) the plain limits are called too tight."""
DISPERSION_ALPHA = 0.01
"""Level of the chi-square dispersion test used with LANEY_SIGMA_Z."""
DEFAULT_RULES = ("beyond-limits",)
"""Rules evaluated on an attribute chart unless the user asks for more."""
RUN_RULES_NOTE = ("zone and run rules on an attribute chart assume near-normal points; on counts, "
                  "most of all small ones, their false-alarm rates differ from the stated ones")

_TITLES = {"p": "Proportion defective", "np": "Number defective",
           "c": "Defects per subgroup", "u": "Defects per unit"}
_MODEL = {"p": "binomial", "np": "binomial", "c": "Poisson", "u": "Poisson"}


@dataclass(frozen=True)
class AttributeInfo:
    """What an attribute chart was built from, for the report and the warnings panel."""

    kind: str
    """Chart kind: p, np, c or u."""
    center: float
    """p̄ for p and np charts (the np centre line is n·p̄), ū for u, c̄ for c; from non-excluded subgroups."""
    sigma_z: float | None
    """Laney dispersion ratio: average moving range of the z-scores / 1.128 (None when p̄, ū or c̄ is 0)."""
    dispersion_p: float | None
    """Upper-tail p-value of the chi-square dispersion test X² = Σ z² on m − 1 df (None with sigma_z)."""
    laney_used: bool
    """The limits are Laney p′ / u′ limits."""
    laney_recommended: bool
    """p or u chart whose counts are clearly overdispersed (rule in the module docstring)."""
    warnings: tuple[str, ...]
    """Plain-words notes for the user (Laney used or advised, degenerate centre, dispersion)."""
    totals: tuple[float, float]
    """(sum of counts, sum of sample sizes) over non-excluded subgroups; for a c chart without
    sizes the second number is the count of subgroups."""


def rules_warning(rule_ids: Iterable[str]) -> str | None:
    """The note to show when rules other than ``beyond-limits`` run on an attribute chart."""
    return RUN_RULES_NOTE if any(r not in DEFAULT_RULES for r in rule_ids) else None


def attribute_chart(kind: str, counts: np.ndarray, sizes: np.ndarray | None, excluded: np.ndarray,
                    laney: str = "auto", labels_for_errors=None, frozen_rate: float | None = None,
                    frozen_sigma_z: float | None = None) -> tuple[ChartResult, AttributeInfo]:
    """Build a p, np, c or u chart with three-sigma limits, optionally Laney-corrected.

    Parameters
    ----------
    kind : {"p", "np", "c", "u"}
    counts : array of int-valued numbers, one per subgroup (defectives for p/np, defects for c/u).
        Counts are whole numbers for every kind; only a u chart's sizes may be fractional.
    sizes : sample sizes (units inspected) per subgroup; required for p, np, u; optional for c
        (if given they must be constant).
    excluded : bool per subgroup; excluded subgroups are plotted but left out of the centre,
        of sigma_z and of the dispersion test.
    laney : {"auto", "on", "off"}; see the module docstring.
    labels_for_errors : optional subgroup labels used to name the subgroup in error messages.
    frozen_rate, frozen_sigma_z : Phase II — the p̄ / ū / c̄ (and Laney's sigma_z, when it was used)
        fixed at a freeze; limits then follow from each subgroup's own size and nothing is re-estimated.

    Returns
    -------
    (ChartResult, AttributeInfo). ``flags`` is empty: the rules module fills it.

    Raises
    ------
    WorkbenchError
        Missing, negative or fractional count; missing or non-positive size; a count above its
        sample size (p, np); varying sizes on an np or c chart; fewer than two subgroups used.

    References
    ----------
    Montgomery, D. C., *Introduction to Statistical Quality Control*, ch. 7 (p, np, c, u charts).
    Laney, D. B. (2002), "Improved control charts for attributes", Quality Engineering 14(4).
    """
    if kind not in ATTRIBUTE_CHARTS:
        raise WorkbenchError(f"unknown attribute chart {kind!r} (choose one of {', '.join(ATTRIBUTE_CHARTS)})")
    if laney not in LANEY_MODES:
        raise WorkbenchError(f"Laney setting must be one of {', '.join(LANEY_MODES)}, not {laney!r}")
    counts, sizes, excluded = _validate(kind, counts, sizes, excluded, labels_for_errors)
    used = ~excluded
    values, center, unit_sigma, totals, rate = _statistic(kind, counts, sizes, used, frozen_rate)
    warnings: list[str] = []
    sigma_z = dispersion_p = None
    if frozen_rate is not None:
        sigma = unit_sigma * (frozen_sigma_z or 1.0)
        cap = 1.0 if kind == "p" else (sizes[0] if kind == "np" else np.inf)
        lcl, ucl = _limits(center, sigma, cap)
        title = _TITLES[kind] + (f" (Laney {kind}′)" if frozen_sigma_z else "") + ", frozen limits"
        chart = ChartResult(name=kind, title=title, role="location", values=values, center=center, lcl=lcl,
                            ucl=ucl, sigma=sigma, excluded=excluded.copy(), flags={}, rules=())
        return chart, AttributeInfo(kind=kind, center=rate, sigma_z=frozen_sigma_z, dispersion_p=None,
                                    laney_used=bool(frozen_sigma_z), laney_recommended=False, warnings=(),
                                    totals=totals)
    if rate <= 0 or (kind in ("p", "np") and rate >= 1):
        what = "no defectives" if rate <= 0 else "every unit defective"
        warnings.append(f"{what} in the subgroups used for the limits, so no {kind} limits can be set")
    else:
        z = (values[used] - center[used]) / unit_sigma[used]
        sigma_z = float(np.mean(np.abs(np.diff(z))) / LANEY_D2)
        df = z.size - 1
        dispersion_p = float(stats.chi2.sf(np.sum(z * z), df))
        low_p = float(stats.chi2.cdf(np.sum(z * z), df))
    overdispersed = sigma_z is not None and sigma_z > LANEY_SIGMA_Z and dispersion_p < DISPERSION_ALPHA
    offered = kind in LANEY_CHARTS
    recommended = overdispersed and offered
    used_laney = sigma_z is not None and offered and laney == "on"
    if sigma_z is not None:
        spread = (f"the subgroups vary more than {_MODEL[kind]} sampling explains "
                  f"(sigma_z {sigma_z:.2f}, dispersion test {_p_text(dispersion_p)})")
        if used_laney:
            how = "on request" if laney == "on" else "because " + spread
            warnings.append(f"Laney {kind}′ limits used {how}")
        elif recommended:
            if laney == "auto":
                warnings.append(f"{spread}: the plain limits may be too tight; Laney {kind}′ limits are "
                                "offered (setup: Laney correction on, or --laney on)")
        elif overdispersed:
            other = "p" if kind == "np" else "u"
            warnings.append(f"{spread}; Laney's correction is not offered for {kind} charts, use a {other} chart")
        elif low_p < DISPERSION_ALPHA:
            warnings.append(f"the subgroups vary less than {_MODEL[kind]} sampling predicts (sigma_z {sigma_z:.2f}): "
                            "check for mixed streams in each subgroup or edited counts")
    if laney == "on" and not offered:
        warnings.append(f"Laney's correction is offered for p and u charts only; plain {kind} limits shown")
    sigma = unit_sigma * (sigma_z if used_laney else 1.0)
    cap = 1.0 if kind == "p" else (sizes[0] if kind == "np" else np.inf)
    lcl, ucl = _limits(center, sigma, cap)
    title = _TITLES[kind] + (f" (Laney {kind}′)" if used_laney else "")
    chart = ChartResult(name=kind, title=title, role="location", values=values, center=center, lcl=lcl,
                        ucl=ucl, sigma=sigma, excluded=excluded.copy(), flags={}, rules=())
    info = AttributeInfo(kind=kind, center=rate, sigma_z=sigma_z, dispersion_p=dispersion_p,
                         laney_used=used_laney, laney_recommended=recommended,
                         warnings=tuple(warnings), totals=totals)
    return chart, info


def _limits(center: np.ndarray, sigma: np.ndarray, cap: float) -> tuple[np.ndarray, np.ndarray]:
    """Three-sigma limits, LCL floored at 0 and UCL capped at ``cap``; NaN where sigma is NaN.

    For Laney charts ``sigma`` is already multiplied by sigma_z (so sigma_z = 1 is the plain chart).
    """
    lcl = np.maximum(center - 3.0 * sigma, 0.0)
    ucl = np.minimum(center + 3.0 * sigma, cap)
    return lcl, ucl


def _statistic(kind, counts, sizes, used, fixed_rate=None):
    """Plotted values, centre line, per-point sigma, totals and the centre rate p̄ / ū / c̄
    (``fixed_rate``: the rate frozen for Phase II instead of the estimate)."""
    total_c = float(counts[used].sum())
    m = counts.size
    if kind == "c":
        total_n = float(sizes[used].sum()) if sizes is not None else float(used.sum())
        rate = total_c / used.sum() if fixed_rate is None else fixed_rate
        center = np.full(m, rate)
        sigma = np.full(m, np.sqrt(rate))
        values = counts.astype(float)
    else:
        total_n = float(sizes[used].sum())
        rate = total_c / total_n if fixed_rate is None else fixed_rate
        if kind == "p":
            values, center = counts / sizes, np.full(m, rate)
            sigma = np.sqrt(rate * (1.0 - rate) / sizes)
        elif kind == "np":
            values, center = counts.astype(float), sizes * rate
            sigma = np.sqrt(sizes * rate * (1.0 - rate))
        else:  # u
            values, center = counts / sizes, np.full(m, rate)
            sigma = np.sqrt(rate / sizes)
    if rate <= 0 or (kind in ("p", "np") and rate >= 1):
        sigma = np.full(m, np.nan)
    return values, center, sigma, (total_c, total_n), float(rate)


def _validate(kind, counts, sizes, excluded, labels):
    counts = np.asarray(counts, dtype=float).ravel()
    m = counts.size
    excluded = np.zeros(m, bool) if excluded is None else np.asarray(excluded, dtype=bool).ravel()
    if excluded.size != m:
        raise WorkbenchError(f"{excluded.size} exclusion marks for {m} subgroups")

    def where(mask: np.ndarray) -> str:
        i = int(np.flatnonzero(mask)[0])
        return f"subgroup {labels[i]}" if labels is not None else f"subgroup {i + 1}"

    if m < 2:
        raise WorkbenchError(f"a {kind} chart needs at least 2 subgroups, got {m}")
    if not np.all(np.isfinite(counts)):
        raise WorkbenchError(f"{where(~np.isfinite(counts))}: the count is missing")
    if np.any(counts < 0):
        raise WorkbenchError(f"{where(counts < 0)}: a count cannot be negative")
    if np.any(counts != np.round(counts)):
        raise WorkbenchError(f"{where(counts != np.round(counts))}: counts of defectives or defects are whole numbers")
    if sizes is None:
        if kind != "c":
            raise WorkbenchError(f"a {kind} chart needs the sample size of each subgroup")
    else:
        sizes = np.asarray(sizes, dtype=float).ravel()
        if sizes.size != m:
            raise WorkbenchError(f"{sizes.size} sample sizes for {m} subgroups")
        if not np.all(np.isfinite(sizes)):
            raise WorkbenchError(f"{where(~np.isfinite(sizes))}: the sample size is missing")
        if np.any(sizes <= 0):
            raise WorkbenchError(f"{where(sizes <= 0)}: the sample size must be positive")
        if kind in ("p", "np"):
            if np.any(sizes != np.round(sizes)):
                raise WorkbenchError(f"{where(sizes != np.round(sizes))}: a sample size counts units, so it is a whole number")
            if np.any(counts > sizes):
                raise WorkbenchError(f"{where(counts > sizes)}: more defectives than units in the sample")
        if kind in ("np", "c") and np.any(sizes != sizes[0]):
            other = "p" if kind == "np" else "u"
            raise WorkbenchError(f"{where(sizes != sizes[0])}: the sample size varies, and a {kind} chart needs a "
                                 f"constant one; use a {other} chart")
    if excluded.sum() > m - 2:
        raise WorkbenchError(f"a {kind} chart needs at least 2 subgroups left after exclusions")
    return counts, sizes, excluded


def _p_text(p: float) -> str:
    return "p < 0.001" if p < 0.001 else f"p = {p:.3f}"
