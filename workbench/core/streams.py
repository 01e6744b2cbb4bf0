"""Stream attribution: which stream drove a subgroup, and do the streams differ?

For one subgroup, each stream's reading is set against the subgroup mean and against the
stream's own non-excluded history.  A stream's *share of the range* is the fraction of the
subgroup range that disappears when that stream's reading is left out: (R − R₋ⱼ)/R.  It is
zero for a stream inside the range and large for a reading that alone sets an extreme.

For the whole dataset the streams are compared with a one-way ANOVA and the Kruskal–Wallis
test (statistics computed here with numpy, tail probabilities from ``scipy.special.fdtrc`` and
``chdtrc`` imported where the comparison is computed; the tests check both against scipy.stats), and
the variance is split into between-stream and within-stream
components (one-way random-effects model, method of moments).

References
----------
Montgomery, D. C. *Design and Analysis of Experiments*, ch. 3 (one-way ANOVA) and the
random-effects model (variance components from the mean squares).
Kruskal, W. H. & Wallis, W. A. (1952). Use of ranks in one-criterion variance analysis.
*JASA* 47, 583-621.
"""
from __future__ import annotations

import numpy as np
from workbench.core.ranks import kruskal_wallis, kruskal_with_method  # noqa: F401 (kruskal_wallis: re-exported)

from workbench.core.model import Analysis, Breakdown, StreamComparison, StreamRow

ALPHA = 0.05
"""Significance level for "the streams differ"."""
Z_NOTABLE = 2.0
"""|z| against the stream's own history above which a reading is called out."""


def _stream_readings(a: Analysis) -> list[np.ndarray]:
    """Each stream's non-excluded, non-missing readings (a view of its column when nothing is left out)."""
    v = a.dataset.values
    cells = a.excluded_cells
    if cells is not None and not cells.flags.writeable:  # a broadcast of the subgroup mask
        keep_rows = ~a.excluded_subgroups if a.excluded_subgroups.any() else None
        cells = None
    else:
        keep_rows = None
    out = []
    for j in range(v.shape[1]):
        col = v[:, j]
        if keep_rows is not None:
            col = col[keep_rows]
        elif cells is not None:
            col = col[~cells[:, j]]
        nan = np.isnan(col)
        out.append(col[~nan] if nan.any() else col)
    return out


def _history(a: Analysis) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Each stream's mean, SD and count over its non-excluded readings (kept with the analysis)."""
    cache = a.__dict__
    if "_stream_history" not in cache:
        groups = _stream_readings(a)
        n = np.array([g.size for g in groups])
        mean = np.full(len(groups), np.nan)
        ss = np.full(len(groups), np.nan)
        for j, g in enumerate(groups):
            if g.size:
                mean[j] = g.mean()
                dev = g - mean[j]
                ss[j] = (dev * dev).sum()
        with np.errstate(invalid="ignore", divide="ignore"):
            sd = np.sqrt(ss / (n - 1))
        cache["_stream_history"] = (mean, sd, n, ss, groups)
    return cache["_stream_history"][:3]


def compare(a: Analysis) -> StreamComparison | None:
    """Compare the streams over their non-excluded readings (None for fewer than two streams)."""
    ds = a.dataset
    if ds.values is None or ds.k < 2:
        return None
    mean, sd, n = _history(a)
    ss, groups = a.__dict__["_stream_history"][3:]
    valid = [j for j, g in enumerate(groups) if g.size >= 2]
    f = p = h = hp = vb = vw = share = None
    ranks = None
    if len(valid) >= 2:
        sizes = n[valid].astype(float)
        big_n, k = sizes.sum(), len(valid)
        gm = float((sizes * mean[valid]).sum()) / big_n
        ssb = float((sizes * (mean[valid] - gm) ** 2).sum())
        ssw = float(ss[valid].sum())
        msb, msw = ssb / (k - 1), ssw / (big_n - k)
        with np.errstate(all="ignore"):
            f = _num(msb / msw) if msw > 0 else None
            p = _num(_f_sf(f, k - 1, big_n - k)) if f is not None else None
            h, hp, ranks = kruskal_with_method([groups[j] for j in valid])
        n0 = (big_n - (sizes ** 2).sum() / big_n) / (k - 1)
        vb, vw = max(0.0, (msb - msw) / n0), float(msw)
        share = vb / (vb + vw) if (vb + vw) > 0 else None
    differ = p is not None and p < ALPHA
    advice = _advice(differ, p, share, ds.streams, mean)
    return StreamComparison(
        streams=ds.streams, means=tuple(float(x) for x in mean), sds=tuple(float(x) for x in sd),
        counts=tuple(int(x) for x in n), anova_f=f, anova_p=p, kruskal_h=h, kruskal_p=hp,
        var_between=vb, var_within=vw, share_between=share, differ=differ, advice=advice, kruskal_ranks=ranks)


def _num(x) -> float | None:
    x = float(x)
    return x if np.isfinite(x) else None


def _advice(differ: bool, p: float | None, share: float | None, streams, mean) -> str:
    if p is None:
        return "too few readings per stream to compare the streams"
    if not differ:
        return (f"no evidence that the streams differ (ANOVA p = {p:.3g}); "
                "charting them together in one subgroup is reasonable")
    hi = streams[int(np.nanargmax(mean))]
    lo = streams[int(np.nanargmin(mean))]
    pct = f"{100 * share:.0f}%" if share is not None else "part"
    return (f"the streams differ (ANOVA p = {p:.3g}; {pct} of the variance lies between streams; highest mean "
            f"{hi}, lowest {lo}). Subgroups taken across streams mix stream-to-stream differences into the "
            "within-subgroup variation, which widens the X̄ limits and hides shifts: consider setting the streams "
            "to a common aim, or charting each stream on its own")


def breakdown(a: Analysis, position: int, readings: tuple[tuple[str, ...], np.ndarray] | None = None) -> Breakdown:
    """Per-stream view of the subgroup at ``position``.

    ``readings``: (stream names, values) of that subgroup fetched from where the data live, for summary data
    aggregated in a database; the streams then have no history here (their own mean, SD and z are not known)."""
    ds = a.dataset
    label = str(ds.labels[position])
    if ds.counts is not None:
        return _count_breakdown(a, position, label)
    if ds.values is None and readings is None:
        return Breakdown(position, label, (), float(a.location.values[position]), float("nan"), None,
                         "summary data hold no readings per stream")
    if ds.values is None:
        names, row = tuple(readings[0]), np.asarray(readings[1], dtype=np.float64)
        ex_row = np.zeros(len(names), bool)
        if a.excluded_subgroups[position]:
            ex_row[:] = True
        mean = sd = np.full(len(names), np.nan)
    else:
        names, row = ds.streams, ds.values[position]
        ex_row = a.excluded_cells[position] if a.excluded_cells is not None else np.zeros(ds.k, bool)
        mean, sd, _n = _history(a)
    cell_only = ex_row & ~a.excluded_subgroups[position]
    use = ~np.isnan(row) & ~cell_only
    vals = row[use]
    sub_mean = float(vals.mean()) if vals.size else float("nan")
    rng = float(vals.max() - vals.min()) if vals.size >= 2 else float("nan")
    sw = a.sigma_within if np.isfinite(a.sigma_within) and a.sigma_within > 0 else float("nan")
    rows = []
    for j, name in enumerate(names):
        x = float(row[j])
        dev = x - sub_mean
        with np.errstate(invalid="ignore", divide="ignore"):
            z = (x - mean[j]) / sd[j] if sd[j] > 0 else float("nan")
        role, share, gap_z = "", 0.0, float("nan")
        others = np.delete(row, j)[np.delete(use, j)]
        if use[j] and others.size >= 1 and np.isfinite(sw):
            gap_z = (x - float(others.mean())) / (sw * np.sqrt(1.0 + 1.0 / others.size))
        if use[j] and vals.size >= 2 and rng > 0:
            is_max, is_min = x == vals.max(), x == vals.min()
            role = "max+min" if is_max and is_min else "max" if is_max else "min" if is_min else ""
            r_without = float(others.max() - others.min()) if others.size >= 2 else 0.0
            share = (rng - r_without) / rng
        rows.append(StreamRow(name, x, dev, float(mean[j]), float(sd[j]), float(z), role, share,
                              bool(ex_row[j]), float(gap_z)))
    # a wholly excluded subgroup is still described by its readings; a single excluded reading is not
    live = [r for r, on in zip(rows, use) if on]
    driver, verdict = _verdict(live)
    return Breakdown(position, label, tuple(rows), sub_mean, rng, driver, verdict)


GAP_NOTABLE = 2.5
"""|gap_z| (reading against the other streams, in within sigmas) above which a stream drove the subgroup."""
COMMON_NOTABLE = 2.5
"""|mean z|·√k above which the streams are said to have moved together."""


def _verdict(rows: list[StreamRow]) -> tuple[str | None, str]:
    """Plain-words verdict: one stream out of line with the others, all moving together, or neither."""
    live = [r for r in rows if np.isfinite(r.reading)]
    if not live:
        return None, "no readings to compare in this subgroup"
    with_gap = [r for r in live if np.isfinite(r.gap_z)]
    top = max(with_gap, key=lambda r: abs(r.gap_z)) if with_gap else None
    if top is not None and abs(top.gap_z) >= GAP_NOTABLE:
        side = "above" if top.gap_z > 0 else "below"
        text = f"stream {top.stream} read {abs(top.gap_z):.1f}σ {side} the other streams"
        if np.isfinite(top.z):
            text += f" ({top.z:+.1f}σ against its own history)"
        if top.role in ("max", "min", "max+min"):
            what = {"max": "the subgroup maximum", "min": "the subgroup minimum", "max+min": "both extremes"}[top.role]
            text += f" and set {what} — {100 * top.range_share:.0f}% of the range"
        return top.stream, text
    zs = np.array([r.z for r in live if np.isfinite(r.z)])
    if zs.size >= 2 and abs(zs.mean()) * np.sqrt(zs.size) >= COMMON_NOTABLE:
        side = "above" if zs.mean() > 0 else "below"
        return None, (f"all {zs.size} streams moved together, on average {abs(zs.mean()):.1f}σ {side} their own "
                      "history, and no stream stands out from the others: a common cause (material, setting, "
                      "environment) is more likely than one stream")
    if top is None:
        return None, "no single stream stands out"
    return None, (f"no single stream stands out (largest: {top.stream} at {top.gap_z:+.1f}σ against the other "
                  "streams)")


def _count_breakdown(a: Analysis, position: int, label: str) -> Breakdown:
    """Per-stream view of one subgroup of count data: each stream's rate against its own history.

    The rate is count/size (or the count when there are no sizes); z uses the binomial
    (p, np) or Poisson (c, u) standard error of the stream's own rate.
    """
    ds = a.dataset
    counts = ds.counts
    sizes = ds.sizes if ds.sizes is not None else np.ones_like(counts)
    used = ~a.excluded_cells
    tot_c = np.where(used, counts, 0.0).sum(axis=0)
    tot_n = np.where(used, sizes, 0.0).sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        hist = tot_c / tot_n
        rates = counts[position] / sizes[position]
        binomial = a.chart in ("p", "np")
        var = hist * (1 - hist) / sizes[position] if binomial else hist / sizes[position]
        z = (rates - hist) / np.sqrt(var)
    sub_rate = float(np.nansum(counts[position]) / np.nansum(sizes[position]))
    rows = []
    for j, name in enumerate(ds.streams):
        rows.append(StreamRow(name, float(rates[j]), float(rates[j] - sub_rate), float(hist[j]),
                              float(np.sqrt(var[j])), float(z[j]), "", 0.0, bool(a.excluded_cells[position, j]),
                              float(z[j])))
    live = [r for r in rows if np.isfinite(r.z) and not r.excluded]
    if not live:
        return Breakdown(position, label, tuple(rows), sub_rate, float("nan"), None, "no counts in this subgroup")
    top = max(live, key=lambda r: abs(r.z))
    if abs(top.z) >= GAP_NOTABLE:
        side = "above" if top.z > 0 else "below"
        verdict = (f"stream {top.stream} ran at {top.reading:.4g}, {abs(top.z):.1f} standard errors {side} its own "
                   f"history ({top.stream_mean:.4g})")
        return Breakdown(position, label, tuple(rows), sub_rate, float("nan"), top.stream, verdict)
    return Breakdown(position, label, tuple(rows), sub_rate, float("nan"), None,
                     f"no single stream stands out (largest: {top.stream} at {top.z:+.1f} standard errors)")


def _f_sf(f: float, dfn: float, dfd: float) -> float:
    """Upper tail of the F distribution (``scipy.special.fdtrc``, imported here so that a view which
    never shows the stream comparison never pays for loading it)."""
    from scipy.special import fdtrc
    return float(fdtrc(dfn, dfd, f))
