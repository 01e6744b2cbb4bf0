"""How strongly each context column's levels separate the plotted statistic, ranked across columns.

For every context column the subgroups (excluded ones left out) are grouped by the column's value (a
subgroup whose value varies inside it forms the level of its set of values).  Which columns are tested:

* a level needs at least ``MIN_LEVEL`` subgroups; smaller levels are left out of the test;
* the column needs at least two such levels, and they must hold at least half of the subgroups used
  (otherwise it is a level-per-subgroup column such as a timestamp or an ID).

Each tested column gets a one-way ANOVA (``scipy.stats.f_oneway``), a Kruskal–Wallis test
(``scipy.stats.kruskal``), the effect size η² = SS_between / SS_total, and each level's mean in σ units of
the plotted statistic: the mean over its subgroups of (value − centre line) / σ, i.e. (level mean − CL) / σ
when the limits are constant.  The ANOVA p-values are adjusted across the tested columns by the
Benjamini–Hochberg step-up procedure; a column is a lead when its adjusted p is below ``FDR``.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from workbench.core.model import Analysis

FDR = 0.05
"""The false-discovery rate at which a context column is reported as a lead."""
MIN_LEVEL = 3
"""Fewest subgroups a level needs to take part in the test."""


@dataclass(frozen=True)
class Level:
    """One value (or set of values) of a context column."""

    value: str
    """The display text of the level."""
    subgroups: int
    """Subgroups of this level used in the test."""
    mean: float
    """Mean of the plotted statistic over those subgroups."""
    sigmas: float
    """The level's mean distance from the centre line in σ of the plotted statistic (signed)."""


@dataclass(frozen=True)
class Separation:
    """One context column against the plotted statistic."""

    column: str
    levels: tuple[Level, ...]
    """The tested levels, in first-seen order (empty when the column was skipped)."""
    f: float = float("nan")
    """One-way ANOVA F."""
    p: float = float("nan")
    """One-way ANOVA p-value."""
    h: float = float("nan")
    """Kruskal–Wallis H."""
    p_kruskal: float = float("nan")
    """Kruskal–Wallis p-value."""
    eta2: float = float("nan")
    """η² = SS_between / SS_total."""
    p_adjusted: float = float("nan")
    """Benjamini–Hochberg adjusted ANOVA p-value across the tested columns."""
    lead: bool = False
    """True when ``p_adjusted`` < the ranking's FDR."""
    skipped: str | None = None
    """Why the column was not tested (one level; a level per subgroup; too few subgroups per level)."""

    def level(self, value: str) -> Level | None:
        return next((lv for lv in self.levels if lv.value == value), None)


@dataclass(frozen=True)
class Ranking:
    """Every context column, leads first."""

    statistic: str
    """What was tested, e.g. "Subgroup mean (xbar)"."""
    fdr: float
    columns: tuple[Separation, ...]
    """Tested columns by adjusted p (then η², larger first), then the skipped ones."""
    used: int
    """Subgroups used (not excluded, statistic defined)."""

    def of(self, column: str) -> Separation | None:
        return next((c for c in self.columns if c.column == column), None)

    @property
    def leads(self) -> tuple[Separation, ...]:
        return tuple(c for c in self.columns if c.lead)


def bh_adjust(p: np.ndarray) -> np.ndarray:
    """Benjamini–Hochberg step-up adjusted p-values: min over j ≥ i of p₍ⱼ₎·m/j, capped at 1.

    References
    ----------
    Benjamini, Y. and Hochberg, Y. (1995). Controlling the false discovery rate: a practical and powerful
    approach to multiple testing. J. R. Stat. Soc. B 57(1), 289–300.
    """
    p = np.asarray(p, dtype=float)
    m = p.size
    if m == 0:
        return p
    order = np.argsort(p, kind="stable")
    scaled = p[order] * m / np.arange(1, m + 1)
    adj = np.minimum.accumulate(scaled[::-1])[::-1]
    out = np.empty(m)
    out[order] = np.minimum(adj, 1.0)
    return out


def plotted(a: Analysis) -> tuple[np.ndarray, np.ndarray, np.ndarray, str]:
    """The plotted location statistic, its centre line and σ per subgroup, and its name.

    EWMA and CUSUM plot a running statistic whose neighbours are correlated; their subgroup means (the
    readings they are built from) are tested instead, against the process centre and σ/√n."""
    if a.chart in ("ewma", "cusum"):
        ds = a.dataset
        if ds.values is not None:
            v = np.where(a.excluded_cells, np.nan, ds.values)
            with np.errstate(invalid="ignore"):
                means = np.nanmean(np.where(np.isnan(v).all(axis=1, keepdims=True), 0.0, v), axis=1)
            means[np.isnan(v).all(axis=1)] = np.nan
        else:
            means = np.asarray(ds.summary_mean, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            sigma = a.sigma_within / np.sqrt(a.n.astype(float))
        return means, np.full(ds.m, a.center), sigma, "Subgroup mean"
    loc = a.location
    return loc.values, loc.center, loc.sigma, f"{loc.title} ({loc.name})"


def rank(a: Analysis, fdr: float = FDR) -> Ranking:
    """Every context column of the data against the plotted statistic (see the module docstring)."""
    from scipy import stats
    values, centre, sigma, name = plotted(a)
    use = ~a.excluded_subgroups & np.isfinite(values)
    x = values[use]
    with np.errstate(divide="ignore", invalid="ignore"):
        z = ((values - centre) / sigma)[use]
    tested: list[Separation] = []
    skipped: list[Separation] = []
    for col, texts in a.dataset.extras.items():
        codes, uniq = pd.factorize(np.asarray(texts)[use])
        counts = np.bincount(codes, minlength=len(uniq)) if codes.size else np.zeros(0, int)
        keep = np.flatnonzero(counts >= MIN_LEVEL)
        why = _skip(len(uniq), keep, counts, x.size)
        if why is None and np.ptp(x[np.isin(codes, keep)]) == 0:
            why = "the statistic does not vary"
        if why is not None:
            skipped.append(Separation(col, (), skipped=why))
            continue
        groups = [x[codes == k] for k in keep]
        f, p = stats.f_oneway(*groups)
        try:
            h, pk = stats.kruskal(*groups)
        except ValueError:  # every value equal
            h, pk = float("nan"), float("nan")
        allx = np.concatenate(groups)
        grand = allx.mean()
        ss_total = float(((allx - grand) ** 2).sum())
        ss_between = float(sum(g.size * (g.mean() - grand) ** 2 for g in groups))
        levels = tuple(Level(str(uniq[k]), int(counts[k]), float(g.mean()), _mean(z[codes == k]))
                       for k, g in zip(keep, groups))
        tested.append(Separation(col, levels, float(f), float(p), float(h), float(pk),
                                 ss_between / ss_total if ss_total > 0 else float("nan")))
    adj = bh_adjust(np.array([np.nan_to_num(s.p, nan=1.0) for s in tested]))
    done = [Separation(s.column, s.levels, s.f, s.p, s.h, s.p_kruskal, s.eta2, float(q), bool(q < fdr))
            for s, q in zip(tested, adj)]
    done.sort(key=lambda s: (s.p_adjusted, -np.nan_to_num(s.eta2)))
    return Ranking(name, fdr, tuple(done + skipped), int(use.sum()))


def _skip(n_levels: int, keep: np.ndarray, counts: np.ndarray, used: int) -> str | None:
    if n_levels < 2:
        return "one level"
    if keep.size >= 2 and counts[keep].sum() * 2 >= used:
        return None
    if n_levels * 2 > used:
        return "a level per subgroup (an ID or a time)"
    return f"too few subgroups per level (fewer than {MIN_LEVEL})"


def _mean(v: np.ndarray) -> float:
    v = v[np.isfinite(v)]
    return float(v.mean()) if v.size else float("nan")


def context_of(a: Analysis, fdr: float = FDR) -> Ranking | None:
    """The ranking of ``a`` (computed on first use and kept with the analysis); None without context columns."""
    if not a.dataset.extras:
        return None
    cache = a.__dict__.setdefault("_context", {})
    if fdr not in cache:
        cache[fdr] = rank(a, fdr)
    return cache[fdr]
