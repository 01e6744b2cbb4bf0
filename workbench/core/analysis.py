"""The one analysis every front end calls: ``analyse(dataset, settings, exclusions)``.

A pure function: it reads the dataset and the settings, applies the exclusions, computes the
charts and their limits, evaluates the run rules and returns an immutable
:class:`~workbench.core.model.Analysis`.  The TUI, the headless report and the tests all
call it; nothing here knows a view exists.
"""
from __future__ import annotations

from typing import Any, Iterable

import numpy as np

from workbench.core.charts import constants as K
from workbench.core.charts import variables as C
from workbench.core.charts import rules as R
from workbench.core.charts.signals import SignalTable, group_firings
from workbench.core.model import (
    SortedExclusions,
    ATTRIBUTE_CHARTS, CHART_KINDS, SIGMA_METHOD_LABELS, Analysis, ChartResult, Dataset, Exclusion,
    FrozenLimits, Settings, Signal, WorkbenchError,
)

MIN_PHASE1_SUBGROUPS = 20
"""Fewer subgroups than this give a warning that the trial limits are uncertain (common practice: 20-25)."""


def resolve_chart(ds: Dataset, settings: Settings) -> str:
    """The chart kind that ``settings.chart`` means for this dataset."""
    kind = settings.chart
    if kind not in CHART_KINDS and kind != "auto":
        raise WorkbenchError(f"unknown chart kind {kind!r} (choose from auto, {', '.join(CHART_KINDS)})")
    if ds.is_attribute:
        if kind == "auto":
            return "p" if ds.sizes is not None else "c"
        if kind not in ATTRIBUTE_CHARTS:
            raise WorkbenchError(f"the data are counts: use a p, np, c or u chart, not {kind}")
        return kind
    if kind in ATTRIBUTE_CHARTS:
        raise WorkbenchError(f"a {kind} chart needs count data (give --count and, for p/np/u, --size)")
    if ds.is_summary:
        if kind == "auto":
            return "xbar-r" if ds.summary_range is not None else "xbar-s"
        if kind == "imr":
            raise WorkbenchError("summary data hold subgroup statistics, not individual readings: no I-MR chart")
        if kind == "xbar-r" and ds.summary_range is None:
            raise WorkbenchError("an X̄-R chart needs a range column; this summary file has standard deviations (use xbar-s)")
        if kind == "xbar-s" and ds.summary_sd is None:
            raise WorkbenchError("an X̄-S chart needs a standard deviation column; this summary file has ranges (use xbar-r)")
        return kind
    if kind == "auto":
        if ds.k == 1:
            return "imr"
        return "xbar-r" if ds.k <= 10 else "xbar-s"
    if kind == "imr" and ds.k > 1:
        raise WorkbenchError(f"an I-MR chart needs one reading per subgroup; these data have {ds.k} streams "
                             "(use xbar-r or xbar-s, or --layout individuals)")
    if kind in ("xbar-r", "xbar-s") and ds.k == 1:
        raise WorkbenchError(f"{kind} needs subgroups of two or more readings; these data have one stream (use imr)")
    return kind


def resolve_sigma(chart: str, ds: Dataset, settings: Settings) -> str:
    """The sigma estimator that ``settings.sigma`` means for this chart."""
    method = settings.sigma
    if method == "auto" and settings.known_sigma is not None:
        method = "known"
    individuals = chart == "imr" or (not ds.is_summary and ds.k == 1)
    if method == "auto":
        if individuals:
            return "mrbar"
        if chart == "xbar-s" or (ds.is_summary and ds.summary_range is None):
            return "sbar"
        if chart in ("ewma", "cusum") and not ds.is_summary and ds.k > 10:
            return "sbar"
        return "rbar"
    if method == "mrbar" and not individuals:
        raise WorkbenchError("mrbar (MR̄/d2) applies to individuals data; use rbar, sbar or pooled for subgroups")
    if method in ("rbar", "sbar", "pooled", "pooled-sbar") and individuals:
        raise WorkbenchError(f"{method} needs subgroups of two or more readings; use mrbar for individuals")
    if method == "rbar" and ds.is_summary and ds.summary_range is None:
        raise WorkbenchError("rbar needs subgroup ranges; this summary file has standard deviations")
    if method in ("sbar", "pooled", "pooled-sbar") and ds.is_summary and ds.summary_sd is None:
        raise WorkbenchError(f"{method} needs subgroup standard deviations; this summary file has ranges")
    if method == "known" and settings.known_sigma is None:
        raise WorkbenchError("sigma method 'known' needs --known-sigma")
    return method


def exclusion_masks(ds: Dataset, exclusions: Iterable[Exclusion]) -> tuple[np.ndarray, np.ndarray]:
    """Boolean masks (subgroups,) and (subgroups, streams) for a set of exclusions.

    Without single-reading exclusions the cell mask is a read-only broadcast of the subgroup mask.
    """
    sub = np.zeros(ds.m, bool)
    k = max(ds.k, 1)
    exclusions = tuple(exclusions)
    # all labels looked up at once (a case may hold thousands of exclusions)
    where = ds._label_index().positions([str(ex.subgroup) for ex in exclusions]) if exclusions else ()
    cell_list: list[tuple[int, int]] = []
    for ex, i in zip(exclusions, where):
        if i < 0:
            ds.index_of(ex.subgroup)  # raises the one-line error naming the label
        if ex.stream is None:
            sub[i] = True
        else:
            if ds.is_summary:
                raise WorkbenchError("summary data hold no single readings: exclude the whole subgroup")
            cell_list.append((int(i), ds.stream_index(ex.stream)))
    if not cell_list:
        return sub, np.broadcast_to(sub[:, None], (ds.m, k))
    cells = np.zeros((ds.m, k), bool)
    rows_i, cols_j = zip(*cell_list)
    cells[list(rows_i), list(cols_j)] = True
    if ds.values is not None:
        # a subgroup whose every reading is excluded is an excluded subgroup
        rows = np.unique(rows_i)
        present = ~np.isnan(ds.values[rows])
        full = ~(present & ~cells[rows]).any(axis=1)
        sub[rows[full]] = True
    cells |= sub[:, None]
    return sub, cells


def _summary_stats(ds: Dataset) -> C.SubgroupStats:
    n = ds.summary_n.astype(int)
    rng = ds.summary_range if ds.summary_range is not None else np.full(ds.m, np.nan)
    sd = ds.summary_sd if ds.summary_sd is not None else np.full(ds.m, np.nan)
    return C.SubgroupStats(n=n, mean=ds.summary_mean.astype(float), range=rng.astype(float), sd=sd.astype(float))


def _reading_stats(ds: Dataset, cells: np.ndarray, sub: np.ndarray) -> C.SubgroupStats:
    """Subgroup statistics with single-reading exclusions left out.

    The statistics of the raw readings are computed once per dataset and cached on it; only the
    rows with an excluded reading are recomputed, so an exclusion costs O(subgroups), not
    O(readings).
    """
    raw = ds.__dict__.get("_raw_stats")
    if raw is None:
        raw = C.subgroup_stats(ds.values)
        object.__setattr__(ds, "_raw_stats", raw)
    if not cells.flags.writeable:  # a broadcast of the subgroup mask: no single-reading exclusions
        return raw
    cell_only = cells & ~sub[:, None]
    rows = np.flatnonzero(cell_only.any(axis=1))
    if rows.size == 0:
        return raw
    part = C.subgroup_stats(np.where(cell_only[rows], np.nan, ds.values[rows]))
    n, mean, rng, sd = raw.n.copy(), raw.mean.copy(), raw.range.copy(), raw.sd.copy()
    n[rows], mean[rows], rng[rows], sd[rows] = part.n, part.mean, part.range, part.sd
    return C.SubgroupStats(n=n, mean=mean, range=rng, sd=sd)


def _moments(n: np.ndarray, mean: np.ndarray, sd: np.ndarray) -> tuple[float, float, float]:
    """(N, grand mean, M2) of the readings behind subgroup statistics; M2 = Σ(nᵢ−1)sᵢ² + Σnᵢ(x̄ᵢ − x̿)²."""
    n = n.astype(float)
    total = n.sum()
    if total == 0:
        return 0.0, float("nan"), 0.0
    gm = (n * mean).sum() / total  # plain sums rather than np.dot: a BLAS call may start threads
    var = np.where(n > 1, sd, 0.0)
    return float(total), float(gm), float(((n - 1) * var * var).sum() + (n * (mean - gm) ** 2).sum())


def _overall_sd(stats: C.SubgroupStats, use: np.ndarray, ranges_only: bool = False,
                incremental: bool = True) -> float:
    """Sample SD of all used readings, from the subgroup statistics.

    Total sum of squares = Σ(nᵢ−1)sᵢ² + Σnᵢ(x̄ᵢ − x̿)², the one-way decomposition; exact for
    readings, and for summary data with ranges only sᵢ is estimated by Rᵢ/d2(nᵢ).  When only a few
    subgroups are left out, their share is removed from the cached moments of all subgroups (the
    pairwise update of Chan, Golub & LeVeque 1983, run backwards), so a recompute stays O(excluded).
    """
    sd = stats.sd
    if ranges_only:
        from workbench.core.charts.constants import d2, table
        sd = stats.range / table(stats.n, d2)
    present = stats.n > 0
    left_out = np.flatnonzero(present & ~use)
    if incremental and left_out.size * 20 < stats.n.size and not ranges_only:
        full = stats.__dict__.get("_moments")
        if full is None:
            full = _moments(stats.n[present], stats.mean[present], sd[present])
            object.__setattr__(stats, "_moments", full)
        n_all, m_all, m2_all = full
        n_e, m_e, m2_e = _moments(stats.n[left_out], stats.mean[left_out], sd[left_out])
        n_r = n_all - n_e
        if n_r < 2:
            return float("nan")
        if n_e == 0:
            return float(np.sqrt(m2_all / (n_all - 1)))
        m_r = (n_all * m_all - n_e * m_e) / n_r
        m2_r = m2_all - m2_e - (m_e - m_r) ** 2 * n_e * n_r / n_all
        return float(np.sqrt(max(m2_r, 0.0) / (n_r - 1)))
    sel = use & present
    total, _gm, m2 = _moments(stats.n[sel], stats.mean[sel], sd[sel])
    if total < 2:
        return float("nan")
    return float(np.sqrt(m2 / (total - 1)))


def analyse(dataset: Dataset, settings: Settings = Settings(), exclusions: Iterable[Exclusion] = (),
            frozen: FrozenLimits | None = None) -> Analysis:
    """Compute the control charts, limits and signals of a dataset.

    Parameters
    ----------
    dataset : the loaded data
    settings : chart kind, sigma estimator, rule sets, specification
    exclusions : subgroups or single readings left out of the limits (Phase I)
    frozen : limits fixed at a freeze; subgroups after ``frozen.subgroups`` are Phase II

    Returns
    -------
    Analysis
    """
    ds = dataset
    excl = exclusions if isinstance(exclusions, SortedExclusions) else \
        tuple(sorted(set(exclusions), key=lambda e: (e.subgroup, e.stream or "")))
    if ds.m == 0:
        raise WorkbenchError(f"{ds.path}: no subgroups to chart")
    chart = resolve_chart(ds, settings)
    if frozen is not None and frozen.chart != chart:
        raise WorkbenchError(f"limits were frozen for a {frozen.chart} chart; unfreeze before changing to {chart}")
    ex_sub, ex_cells = exclusion_masks(ds, excl)
    warnings: list[str] = []
    phase2 = frozen.subgroups if frozen is not None and frozen.subgroups < ds.m else None
    use = ~ex_sub
    if frozen is not None:
        use[min(frozen.subgroups, ds.m):] = False

    if chart in ATTRIBUTE_CHARTS:
        return _analyse_attribute(ds, settings, excl, chart, ex_sub, ex_cells, phase2, warnings, frozen)

    if ds.is_summary:
        stats = _summary_stats(ds)
        if np.any(stats.n <= 0):
            raise WorkbenchError(f"{ds.path}: subgroup sizes must be positive")
    else:
        stats = _reading_stats(ds, ex_cells, ex_sub)
    sigma_method = resolve_sigma(chart, ds, settings)
    known_mean = settings.known_mean
    individuals = chart == "imr" or (not ds.is_summary and ds.k == 1)

    if individuals:
        x = stats.mean
        ks = settings.known_sigma if sigma_method == "known" else None
        if frozen is not None:
            known_mean, ks = frozen.center, frozen.sigma
        i_chart, mr_chart, center, sigma = C.individuals_charts(x, ex_sub, known_mean, ks)
        base = [i_chart, mr_chart]
    else:
        if frozen is not None:
            sigma, center = frozen.sigma, frozen.center
        else:
            sigma = C.estimate_sigma(sigma_method, stats, use, settings.known_sigma)  # Phase I only
            if known_mean is not None:
                center = float(known_mean)
            else:
                w = stats.n[use].astype(float)
                center = float(np.sum(w * stats.mean[use]) / w.sum()) if w.sum() > 0 else float("nan")
        # the textbook pooled form: s̄ is the S chart's centre and each subgroup's σ is s̄/c4(nᵢ), so the
        # limits are x̿ ± A3(nᵢ)s̄ and B3(nᵢ)s̄ … B4(nᵢ)s̄
        pts = sigma / K.table(stats.n, K.c4) if sigma_method == "pooled-sbar" else sigma
        base = [C.xbar_chart(stats, center, pts, ex_sub)]
        if chart in ("xbar-s",) or (chart in ("ewma", "cusum") and sigma_method in ("sbar", "pooled", "pooled-sbar")):
            base.append(C.sd_chart(stats, pts, ex_sub))
        else:
            base.append(C.range_chart(stats, pts, ex_sub))
        _subgroup_warnings(chart, stats, warnings)

    if chart in ("ewma", "cusum"):
        base[0] = _small_shift(chart, base[0], center, settings, ds.labels, warnings)

    # with frozen limits the direct sum keeps Phase II extension (phase2.extend) bit-identical
    sigma_overall = _overall_sd(stats, use, ranges_only=ds.is_summary and ds.summary_sd is None,
                                incremental=frozen is None)
    if not np.isfinite(sigma):
        warnings.append("sigma could not be estimated (too few readings): no limits")
    elif sigma == 0:
        if np.isfinite(sigma_overall) and sigma_overall > 0:
            warnings.append("no spread within subgroups: sigma is 0 and the limits collapse onto the centre line "
                            "(readings rounded to the gauge resolution, or copied values?)")
        else:
            warnings.append("all readings are identical: sigma is 0 and the limits collapse onto the centre line")
    if ds.m < 2:
        warnings.append("only one subgroup: limits from a single subgroup are not meaningful")
    elif phase2 is None and ds.m < MIN_PHASE1_SUBGROUPS and frozen is None:
        warnings.append(f"only {ds.m} subgroups: trial limits from fewer than {MIN_PHASE1_SUBGROUPS} subgroups are "
                        "uncertain (common practice asks for 20-25)")
    if ds.is_summary and ds.summary_sd is None:
        warnings.append("summary data with ranges only: the overall sigma uses R/d2 for each subgroup's SD")
    charts, signals = _apply_rules(ds, base, settings, chart)
    return Analysis(
        dataset=ds, settings=settings, exclusions=excl, chart=chart, sigma_method=sigma_method,
        sigma_within=float(sigma), sigma_overall=sigma_overall, center=float(center), n=stats.n,
        charts=tuple(charts), signals=signals, excluded_subgroups=ex_sub,
        excluded_cells=None if ds.is_summary else ex_cells, warnings=tuple(warnings), phase2_start=phase2,
        frozen=frozen,
    )


def _subgroup_warnings(chart: str, stats: C.SubgroupStats, warnings: list[str]) -> None:
    warnings.extend(C._cached(stats, "_warnings_" + chart, lambda: _size_warnings(chart, stats)))


def _size_warnings(chart: str, stats: C.SubgroupStats) -> list[str]:
    warnings: list[str] = []
    n = stats.n[stats.n > 0]
    if n.size and n.min() != n.max():
        if chart == "xbar-r":
            warnings.append(f"subgroup sizes vary ({n.min()}–{n.max()}): the X̄-R chart uses per-subgroup constants; "
                            "an X̄-S chart is preferred for unequal sizes")
        else:
            warnings.append(f"subgroup sizes vary ({n.min()}–{n.max()}): limits vary point by point")
    if n.size and n.max() > 10 and chart == "xbar-r":
        warnings.append("subgroups of more than 10 readings: the range wastes information; an X̄-S chart is advised")
    single = int(np.sum(stats.n == 1))
    if single:
        warnings.append(f"{single} subgroup(s) hold a single reading and have no range or SD")
    return tuple(warnings)


def _small_shift(chart: str, loc: ChartResult, center: float, settings: Settings, labels: np.ndarray,
                 warnings: list[str]) -> ChartResult:
    from workbench.core.charts import smallshift
    sigma_x = loc.sigma
    if chart == "ewma":
        return smallshift.ewma_chart(loc.values, center, sigma_x, loc.excluded, settings.ewma_lambda,
                                     settings.ewma_l, settings.ewma_asymptotic)
    res, info = smallshift.cusum_chart(loc.values, center, sigma_x, loc.excluded, settings.cusum_k,
                                       settings.cusum_h, settings.cusum_head_start)
    for sg in info.signals:  # the side, the estimated change point and the new mean (Montgomery)
        way = "upward (C⁺ above H)" if sg.side == "upper" else "downward (C⁻ above H)"
        warnings.append(f"CUSUM signal {way} at subgroup {labels[sg.position]}: estimated change from subgroup "
                        f"{labels[sg.change_point]} ({sg.run_length} points), estimated new mean {sg.mean:.6g} "
                        f"({sg.shift:+.2f}σ)")
    return res


def _analyse_attribute(ds, settings, excl, chart, ex_sub, ex_cells, phase2, warnings, frozen=None) -> Analysis:
    """Count charts.  A freeze fixes the centre rate (and Laney's sigma_z when it was used; 1.0 otherwise)."""
    from workbench.core.charts import attribute
    if chart in ("p", "np") and ds.count_over_size:
        raise WorkbenchError(f"{ds.count_over_size} (a {chart} chart counts defectives, which cannot outnumber "
                             "the units inspected; for defects use a u chart)")
    counts = np.where(ex_cells & ~ex_sub[:, None], 0.0, ds.counts)
    counts = np.nansum(counts, axis=1)
    sizes = None
    if ds.sizes is not None:
        sizes = np.nansum(np.where(ex_cells & ~ex_sub[:, None], 0.0, ds.sizes), axis=1)
    rate = frozen.center if frozen is not None else None
    sigma_z = (frozen.sigma if frozen.sigma != 1.0 else None) if frozen is not None else None
    res, info = attribute.attribute_chart(chart, counts, sizes, ex_sub, settings.laney, ds.labels, rate, sigma_z)
    warnings.extend(info.warnings)
    note = attribute.rules_warning(R.resolve(location_rules(settings, chart)).ids)
    if note:
        warnings.append(note)
    if info.laney_used and info.sigma_z:
        res = ChartResult(res.name, res.title, res.role, res.values, res.center, res.lcl, res.ucl, res.sigma,
                          res.excluded, res.flags, res.rules, {"sigma_z": np.full(ds.m, float(info.sigma_z))})
    charts, signals = _apply_rules(ds, [res], settings, chart)
    center = float(info.center)  # p̄ / ū / c̄ (the np centre line is n·p̄)
    sig = float(np.nanmean(res.sigma))
    return Analysis(
        dataset=ds, settings=settings, exclusions=excl, chart=chart, sigma_method="binomial" if chart in ("p", "np")
        else "poisson", sigma_within=sig, sigma_overall=float("nan"), center=center,
        n=(sizes if sizes is not None else np.ones(ds.m)).astype(float), charts=tuple(charts),
        signals=signals, excluded_subgroups=ex_sub, excluded_cells=ex_cells, warnings=tuple(warnings),
        phase2_start=phase2, frozen=frozen,
    )


def location_rules(settings: Settings, kind: str) -> str:
    """The location chart's rule set: as set, or the default for the chart kind."""
    if settings.rules:
        return settings.rules
    return "limits-only" if kind in ATTRIBUTE_CHARTS else "western-electric"


def _apply_rules(ds: Dataset, charts: list[ChartResult], settings: Settings, kind: str):
    loc_rules = R.resolve(location_rules(settings, kind))
    spread_rules = R.resolve(settings.spread_rules)
    out: list[ChartResult] = []
    groups = []
    for c in charts:
        rs = loc_rules if c.role == "location" else spread_rules
        if kind in ("ewma", "cusum") and c.role == "location":
            rs = R.resolve("limits-only")  # zone rules do not apply to autocorrelated statistics
        if kind == "cusum" and c.role == "location":
            values = np.maximum(c.values, c.extra.get("cusum-", np.zeros_like(c.values)))
            firings = R.evaluate(values, c.center, c.sigma, np.full_like(values, -np.inf), c.ucl, c.excluded, rs)
        else:
            firings = R.evaluate(c.values, c.center, c.sigma, c.lcl, c.ucl, c.excluded, rs)
        flags = {rid: f.fired for rid, f in firings.items()}
        out.append(ChartResult(c.name, c.title, c.role, c.values, c.center, c.lcl, c.ucl, c.sigma, c.excluded,
                               flags, rs.ids, c.extra))
        for rid, f in firings.items():
            rule = rs.rule(rid)
            fired_c = np.searchsorted(f.index, f.fired)
            words = "cumulative sum beyond the decision interval H" if c.name == "cusum" else rule.words
            groups.append(group_firings(c.name, rid, words, fired_c, f.index, f.members, rule.window))
    return out, SignalTable(groups, ds.labels)


def _summarise(a: np.ndarray) -> Any:
    f = a[np.isfinite(a)]
    if f.size == 0:
        return None
    if np.isfinite(a).all() and np.all(f == f[0]):
        return float(f[0])
    return {"min": float(f.min()), "max": float(f.max()), "varies": True}


def limits_snapshot(analysis: Analysis) -> dict[str, Any]:
    """JSON-ready summary of the limits (numbers when constant, min/max when they vary)."""
    def num(v: float) -> float | None:
        return float(v) if np.isfinite(v) else None
    return {
        "chart": analysis.chart,
        "sigma_method": analysis.sigma_method,
        "sigma": num(analysis.sigma_within),
        "center": num(analysis.center),
        "charts": {c.name: {"center": _summarise(c.center), "lcl": _summarise(c.lcl), "ucl": _summarise(c.ucl)}
                   for c in analysis.charts},
    }


def freeze(analysis: Analysis) -> FrozenLimits:
    """Freeze the current Phase I limits for new data."""
    if not np.isfinite(analysis.sigma_within) or not np.isfinite(analysis.center):
        raise WorkbenchError("no limits to freeze: sigma or centre is undefined")
    sigma = analysis.sigma_within
    if analysis.chart in ATTRIBUTE_CHARTS:  # count charts freeze the rate; sigma is Laney's factor (1: plain)
        sz = analysis.location.extra.get("sigma_z")
        sigma = float(sz[0]) if sz is not None and sz.size else 1.0
    return FrozenLimits(chart=analysis.chart, center=analysis.center, sigma=sigma,
                        subgroups=analysis.dataset.m if analysis.phase2_start is None else analysis.phase2_start,
                        limits=limits_snapshot(analysis)["charts"])


def sigma_label(analysis: Analysis) -> str:
    return SIGMA_METHOD_LABELS.get(analysis.sigma_method, analysis.sigma_method)


def open_signals(analysis: Analysis, states: dict[str, Any] | None = None) -> list[Signal]:
    """Signals not yet explained or closed, and not made only of excluded points."""
    states = states or {}
    out = []
    for s in analysis.signals:
        st = states.get(s.key)
        st = getattr(st, "state", st)
        if st in ("explained", "no-cause-found", "excluded"):
            continue
        out.append(s)
    return out


def comparison_of(analysis: Analysis):
    """The whole-dataset comparison of streams (``streams.compare``), computed on first use and kept
    with the analysis; None when the data have no streams to compare."""
    cache = analysis.__dict__
    if "_comparison" not in cache:
        from workbench.core.streams import compare
        cache["_comparison"] = compare(analysis)
    return cache["_comparison"]


def capability_of(analysis: Analysis):
    """A ``capability.assess.Capability`` when a specification is set, else None (computed on first
    use, kept with the analysis); every signal counts as open for the stability gate.

    Raises WorkbenchError for an invalid specification or data the method cannot handle.
    """
    cache = analysis.__dict__
    if "_capability" not in cache:
        spec = analysis.settings.spec
        if spec is None or (spec.lsl is None and spec.usl is None):
            cache["_capability"] = None
        else:
            _check_capability_input(analysis)
            from workbench.core.capability.assess import assess
            cache["_capability"] = assess(analysis.readings(), capability_sigma(analysis), analysis.sigma_method,
                                          spec, open_signals=len(analysis.signals))
    return cache["_capability"]


def _check_capability_input(analysis: Analysis) -> None:
    if analysis.dataset.counts is not None:
        raise WorkbenchError("capability against a specification applies to measured values, not to counts "
                             "(for count data the chart's centre, e.g. the proportion defective, is the measure)")
    if analysis.dataset.values is None:
        raise WorkbenchError("capability needs the individual readings; summary data hold only subgroup "
                             "statistics (export the readings, or remove --lsl/--usl)")


def capability_for(analysis: Analysis, states: dict | None = None):
    """Capability with the stability gate counting only the signals still open under a case's states.

    Without states every signal counts as open (``capability_of``).  Returns None when no
    specification is set; raises WorkbenchError as ``capability_of`` does.
    """
    if states is None:
        return capability_of(analysis)
    spec = analysis.settings.spec
    if spec is None or (spec.lsl is None and spec.usl is None):
        return None
    n_open = len(open_signals(analysis, states))
    cache = analysis.__dict__.setdefault("_capability_by_open", {})
    if n_open not in cache:
        if n_open == len(analysis.signals):
            cache[n_open] = capability_of(analysis)
        else:
            from workbench.core.capability.assess import assess
            _check_capability_input(analysis)
            cache[n_open] = assess(analysis.readings(), capability_sigma(analysis), analysis.sigma_method, spec,
                                   open_signals=n_open)
    return cache[n_open]


def characteristic_of(analysis: Analysis) -> tuple[str | None, str | None]:
    """The characteristic's (name, unit): from the setup, else from an obvious value-column header."""
    from workbench.core.data.units import characteristic
    return characteristic(analysis.settings, analysis.dataset.layout)


def capability_sigma(analysis: Analysis) -> float:
    """σ within for the capability indices: the chart's estimate, made unbiased for the textbook pooled
    form (s̄ / c4(d + 1), d = Σ(nᵢ − 1) over the subgroups used, as for ``pooled``)."""
    if analysis.sigma_method != "pooled-sbar" or not np.isfinite(analysis.sigma_within):
        return analysis.sigma_within
    n = analysis.n[~analysis.excluded_subgroups]
    dof = int(np.sum(np.maximum(n - 1, 0)))
    return analysis.sigma_within / K.c4(min(dof + 1, K.MAX_N)) if dof > 0 else float("nan")
