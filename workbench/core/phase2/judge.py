"""Phase II: new subgroups judged against frozen limits, and a case's growing data file watched.

With frozen limits every point's centre, limits and zones are known in advance, and a run
rule firing at a point depends only on the points before it: appending subgroups never
changes what was computed for the old ones.  :func:`extend` therefore judges only a tail
window (the longest rule window, plus a margin, of defined and non-excluded points before the
new ones) and returns the same :class:`~workbench.core.model.Analysis` that a full
``analyse()`` of the longer dataset gives.  EWMA and CUSUM carry their statistic from the
first point and are recomputed in full.

:class:`Watch` ties this to a case: it follows the case's data file with a
:class:`~workbench.core.phase2.follow.Follower`, judges each new subgroup once, and records what it has
seen so that the next look (``workbench watch CASE --once``) starts where this one ended.

References
----------
Montgomery, D. C. *Introduction to Statistical Quality Control*, ch. 5-6: Phase I (trial
limits from past data) and Phase II (monitoring new data against those limits).
Western Electric Co. (1956), *Statistical Quality Control Handbook*; Nelson, L. S. (1984),
JQT 16(4): the run rules, evaluated as in :mod:`workbench.core.charts.rules`.
"""
from __future__ import annotations

import dataclasses
import weakref
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import numpy as np

from workbench.core.charts import rules as R
from workbench.core.analysis import _subgroup_warnings, analyse, freeze, location_rules
from workbench.core.charts.variables import SubgroupStats
from workbench.core.model import Analysis, ChartResult, Dataset, FrozenLimits, Signal, WorkbenchError
from workbench.core.charts.signals import Group, SignalTable
from workbench.core.phase2.follow import Follower, Update, grow

INCREMENTAL_FROM = 500
"""Below this many subgroups a full ``analyse()`` is as cheap as the tail window."""
DATA_APPENDED = "data-appended"
"""Trail event kind for "new rows seen" (used when the case module knows it)."""


def not_frozen_message(case_path: Any) -> str:
    return (f"{case_path}: the limits are not frozen — Phase II judges new rows against frozen limits; "
            f"freeze them first: workbench case freeze {case_path}")


# ---- judging new subgroups ------------------------------------------------------------------

def frozen_of(analysis: Analysis) -> FrozenLimits | None:
    """The frozen limits an analysis with a Phase II part was computed with (None without one)."""
    a = analysis
    if a.phase2_start is None:
        return None
    return FrozenLimits(a.chart, a.center, a.sigma_within, a.phase2_start)


def _reach(rs: R.RuleSet) -> int:
    """Points a rule set looks back over (trend and alternating need two more than their window)."""
    return max(rs.rule(r).window for r in rs.ids) + 2


def _tail_start(a: Analysis, need: int) -> int:
    """A start position with at least ``need`` defined, non-excluded points on every chart after it."""
    m0 = a.dataset.m
    span = min(m0, 4 * need)
    while True:
        lo = m0 - span
        if lo == 0 or all(np.count_nonzero(~c.excluded[lo:] & np.isfinite(c.values[lo:])) >= need
                          for c in a.charts):
            return lo
        span = min(m0, span * 4)


_sizes_memo: "weakref.WeakKeyDictionary[Analysis, tuple | None]" = weakref.WeakKeyDictionary()
"""Analysis -> its subgroup-size summary (see :func:`_sizes`), so extending never scans every size."""


def _sizes(n: np.ndarray) -> tuple[int, int, int] | None:
    """Smallest and largest positive subgroup size and the number of single-reading subgroups."""
    pos = n[n > 0]
    return (int(pos.min()), int(pos.max()), int(np.count_nonzero(n == 1))) if pos.size else None


def _sizes_of(a: Analysis) -> tuple[int, int, int] | None:
    if a not in _sizes_memo:
        _sizes_memo[a] = _sizes(a.n)
    return _sizes_memo[a]


def _size_warnings(chart: str, sizes: tuple[int, int, int] | None, dtype) -> list[str]:
    """``analysis._subgroup_warnings`` for subgroup sizes known only by their summary."""
    if sizes is None:
        return []
    lo, hi, singles = sizes
    n = np.array(([1] * singles if lo == 1 else [lo]) + [hi], dtype=dtype)
    out: list[str] = []
    _subgroup_warnings(chart, SubgroupStats(n, n, n, n), out)
    return out


def _slice(ds: Dataset, start: int) -> Dataset:
    cut = lambda v: None if v is None else v[start:]  # noqa: E731
    return dataclasses.replace(
        ds, labels=ds.labels[start:], values=cut(ds.values), summary_n=cut(ds.summary_n),
        summary_mean=cut(ds.summary_mean), summary_range=cut(ds.summary_range), summary_sd=cut(ds.summary_sd),
        times=cut(ds.times), extras={}, extra_sets={})


def _extend_group(g: Group, rule: R.Rule, f: R.Firing, new: np.ndarray, s: int, labels: np.ndarray) -> Group:
    """``g`` (one rule's signals on one chart) with the new firings ``new`` (tail positions) grouped in,
    as ``signals.group_firings`` groups them: the first joins the last old signal when adjacent."""
    idx = f.index
    comp = np.searchsorted(idx, new)
    starts = comp - (rule.window - 1)
    brk = np.ones(comp.size, bool)
    brk[1:] = starts[1:] > comp[:-1] + 1
    heads = np.flatnonzero(brk)
    keep, pts_new, fired_new = g.first.size, [], []
    for n, (a, b) in enumerate(zip(heads.tolist(), np.r_[heads[1:], comp.size].tolist())):
        hi, lo = int(comp[b - 1]), max(0, int(starts[a]))
        if n == 0 and keep and g.last[-1] - s >= 0:
            c_old = int(np.searchsorted(idx, g.last[-1] - s))
            if c_old < idx.size and idx[c_old] == g.last[-1] - s and starts[a] <= c_old + 1:
                keep -= 1  # the last old signal continues: rebuilt with its old points and the new ones
                lo = c_old + 1
        seg = np.arange(lo, hi + 1) if f.members is None else lo + np.flatnonzero(f.members[lo:hi + 1])
        pts, fired = idx[seg] + s, new[a:b] + s
        if keep < g.first.size and n == 0:
            pts = np.concatenate((g.points[g.point_ptr[keep]:g.point_ptr[keep + 1]], pts))
            fired = np.concatenate((g.fired[g.fired_ptr[keep]:g.fired_ptr[keep + 1]], fired))
        pts_new.append(pts)
        fired_new.append(fired)
    pp, fp = g.point_ptr[keep], g.fired_ptr[keep]
    cum = lambda parts, base: base + np.cumsum([len(x) for x in parts], dtype=np.int64)  # noqa: E731
    return Group(g.chart, g.rule, g.description,
                 np.concatenate((g.first[:keep], [int(x[0]) for x in pts_new])).astype(np.int64),
                 np.concatenate((g.last[:keep], [int(x[-1]) for x in pts_new])).astype(np.int64),
                 np.concatenate([g.points[:pp]] + pts_new).astype(np.int64),
                 np.concatenate((g.point_ptr[:keep + 1], cum(pts_new, pp))),
                 np.concatenate([g.fired[:fp]] + fired_new).astype(np.int64),
                 np.concatenate((g.fired_ptr[:keep + 1], cum(fired_new, fp))))


def extend(before: Analysis, dataset: Dataset, frozen: FrozenLimits | None = None,
           incremental: bool | None = None) -> Analysis:
    """The analysis of ``dataset`` (``before.dataset`` with subgroups appended) under frozen limits.

    Equal to ``analyse(dataset, before.settings, before.exclusions, frozen)``, computed from a tail
    window when the limits are frozen and the charts are Shewhart charts (``incremental=None``:
    from ``INCREMENTAL_FROM`` subgroups on; True/False force the choice).

    References
    ----------
    Montgomery, *Introduction to SQC*: Phase II monitoring against Phase I limits.
    """
    old, m0 = before.dataset, before.dataset.m
    if dataset.m < m0:
        raise WorkbenchError(f"{dataset.path}: {dataset.m} subgroups now, {m0} before: the data did not grow")
    frozen = frozen or frozen_of(before)
    if frozen is None:
        raise WorkbenchError("new subgroups are judged against frozen limits: freeze the limits first")
    if dataset.m == m0:
        if dataset is old:
            return before
        after = dataclasses.replace(before, dataset=dataset)
        _sizes_memo[after] = _sizes_of(before)
        return after
    groups = getattr(before.signals, "_groups", None)
    if (incremental is False or (incremental is None and m0 < INCREMENTAL_FROM) or m0 == 0 or groups is None
            or before.chart in ("ewma", "cusum") or frozen.subgroups > m0):
        return analyse(dataset, before.settings, before.exclusions, frozen)
    loc_rs, spread_rs = R.resolve(location_rules(before.settings, before.chart)), R.resolve(before.settings.spread_rules)
    s = _tail_start(before, max(_reach(loc_rs), _reach(spread_rs)) + 2)
    tail_ds = _slice(dataset, s)
    in_tail = set(tail_ds.labels.tolist())
    tail = analyse(tail_ds, before.settings, [e for e in before.exclusions if e.subgroup in in_tail],
                   dataclasses.replace(frozen, subgroups=max(0, frozen.subgroups - s)))
    k0, charts, out = m0 - s, [], []
    it = iter(groups)
    for cb, ct in zip(before.charts, tail.charts):
        rs = loc_rs if ct.role == "location" else spread_rs
        firings = R.evaluate(ct.values, ct.center, ct.sigma, ct.lcl, ct.ucl, ct.excluded, rs)
        flags = {}
        for rid in rs.ids:
            f, g = firings[rid], next(it)
            if (g.chart, g.rule) != (cb.name, rid):
                return analyse(dataset, before.settings, before.exclusions, frozen)
            new = f.fired[f.fired >= k0]
            flags[rid] = np.concatenate((cb.flags[rid], new + s)) if new.size else cb.flags[rid]
            out.append(_extend_group(g, rs.rule(rid), f, new, s, dataset.labels) if new.size else g)
        cat = lambda a, b: grow(a, b[k0:])  # noqa: E731
        charts.append(ChartResult(cb.name, cb.title, cb.role, cat(cb.values, ct.values), cat(cb.center, ct.center),
                                  cat(cb.lcl, ct.lcl), cat(cb.ucl, ct.ucl), cat(cb.sigma, ct.sigma),
                                  cat(cb.excluded, ct.excluded), flags, cb.rules,
                                  {k: cat(v, ct.extra[k]) for k, v in cb.extra.items()}))
    n = grow(before.n, tail.n[k0:])
    sizes = _sizes_of(before)
    if tail.n[k0:].size:
        more = _sizes(tail.n[k0:])
        sizes = more if sizes is None else sizes if more is None else (
            min(sizes[0], more[0]), max(sizes[1], more[1]), sizes[2] + more[2])
    warnings = list(tail.warnings)
    if not (before.chart == "imr" or (not dataset.is_summary and dataset.k == 1)):
        in_tail_only = _size_warnings(before.chart, _sizes(tail.n), n.dtype)
        warnings = _size_warnings(before.chart, sizes, n.dtype) + [w for w in warnings if w not in in_tail_only]
    cells = None if before.excluded_cells is None else grow(before.excluded_cells, tail.excluded_cells[k0:])
    after = Analysis(
        dataset=dataset, settings=before.settings, exclusions=before.exclusions, chart=before.chart,
        sigma_method=before.sigma_method, sigma_within=before.sigma_within, sigma_overall=before.sigma_overall,
        center=before.center, n=n, charts=tuple(charts), signals=SignalTable(out, dataset.labels),
        excluded_subgroups=grow(before.excluded_subgroups, tail.excluded_subgroups[k0:]),
        excluded_cells=cells, warnings=tuple(warnings),
        phase2_start=frozen.subgroups if frozen.subgroups < dataset.m else None)
    _sizes_memo[after] = sizes
    return after


def new_signals(before: Analysis, after: Analysis, start: int | None = None) -> list[Signal]:
    """Signals of ``after`` whose last point is new (at ``start`` or later; default: after ``before``'s end).

    A run that continues across the old end keeps its key and is reported at its new point."""
    start = before.dataset.m if start is None else start
    sig = after.signals
    if isinstance(sig, SignalTable):
        return [sig[i] for i in np.flatnonzero(sig.last >= start).tolist()]
    return [s for s in sig if s.last >= start]


def judge_new(analysis_before: Analysis, new_dataset: Dataset, frozen: FrozenLimits | None = None) -> list[Signal]:
    """The signals a full ``analyse()`` of ``new_dataset`` has at its new subgroups (see :func:`extend`)."""
    return new_signals(analysis_before, extend(analysis_before, new_dataset, frozen))


# ---- what a case has seen -------------------------------------------------------------------

@dataclass(frozen=True)
class Seen:
    """How much of its data file a case has judged in Phase II."""

    subgroups: int
    """Complete subgroups judged (positions before this were seen)."""
    rows: int
    """Data rows read."""
    size_bytes: int
    """Bytes of the file read; the file must still start with them."""
    sha256: str
    """SHA-256 of those bytes."""

    def payload(self, signals: list[str] | tuple[str, ...] = ()) -> dict[str, Any]:
        return {"subgroups": self.subgroups, "rows": self.rows, "size_bytes": self.size_bytes,
                "sha256": self.sha256, "signals": list(signals)}

    @classmethod
    def from_payload(cls, p: dict[str, Any]) -> "Seen":
        return cls(int(p["subgroups"]), int(p["rows"]), int(p["size_bytes"]), str(p["sha256"]))


def _freeze_event(case: Any):
    return next((ev for ev in reversed(case.events) if ev.kind == "freeze"), None)


def last_seen(case: Any) -> Seen | None:
    """What the case recorded as seen since its current freeze (None: nothing yet)."""
    fz = _freeze_event(case)
    if fz is None or case.state.frozen is None:
        return None
    for ev in reversed(case.events):
        if ev.seq <= fz.seq:
            break
        if ev.kind == DATA_APPENDED:
            return Seen.from_payload(ev.payload)
    return None


def record_seen(case: Any, seen: Seen, signals: list[str] | tuple[str, ...] = (),
                extra: dict[str, Any] | None = None) -> str | None:
    """Record what was seen as a ``data-appended`` event in the trail (``extra``: a database's key and
    last key read).

    Returns "trail", or None when the case is read-only."""
    if case.readonly:
        return None
    case.append_event(DATA_APPENDED, {**seen.payload(signals), **(extra or {})})
    return "trail"


def recorded_key(case: Any) -> str | None:
    """The key column a database source is followed by: the source's, else the last one a watch recorded."""
    src = case.data.source
    if src is not None and src.key:
        return src.key
    return next((ev.payload["key"] for ev in reversed(case.events)
                 if ev.kind == DATA_APPENDED and isinstance(ev.payload.get("key"), str)), None)


def watch_key(case: Any, given: str | None) -> str:
    """The key to follow a database source by (``given`` must agree with the one recorded)."""
    known = recorded_key(case)
    if given and known and given != known:
        raise WorkbenchError(f"{case.path}: the rows are followed by key {known!r} (recorded in the case), not "
                             f"{given!r}")
    key = given or known
    if not key:
        raise WorkbenchError(f"{case.path}: a database is watched by a column that increases with every new row: "
                             "give --key COLUMN")
    return key


# ---- watching a case ------------------------------------------------------------------------

@dataclass(frozen=True, eq=False)
class Judgement:
    """What one look at a case's data file found."""

    status: str
    """caught-up (the first look) | unchanged | appended | shrunk | rewritten | rotated | missing."""
    message: str
    """One line in plain words."""
    analysis: Analysis
    """The analysis after the look (all subgroups, frozen limits)."""
    positions: range
    """Subgroups judged for the first time in this look."""
    signals: tuple[Signal, ...]
    """Signals whose last point is among ``positions`` (a continuing run is reported at its new point)."""
    began_before: frozenset[str]
    """Keys of those signals whose pattern began before ``positions``."""
    update: Update | None = None

    @property
    def ok(self) -> bool:
        return self.update is None or self.update.ok


class Watch:
    """Phase II on a case: follow its data file, judge each new subgroup once, record what was seen."""

    def __init__(self, case: Any, follower: Follower, analysis: Analysis, frozen: FrozenLimits, seen: int) -> None:
        self.case, self.follower, self.analysis, self.frozen = case, follower, analysis, frozen
        self.seen = seen
        """Subgroups judged so far (new subgroups start here)."""

    @classmethod
    def start(cls, case: Any, key: str | None = None) -> "Watch":
        """Load the case's data (up to the last complete line) with its frozen limits.

        A database source is followed by its increasing ``key`` column (given here, with the source,
        or recorded by an earlier watch)."""
        frozen = case.state.frozen
        if frozen is None:
            raise WorkbenchError(not_frozen_message(case.path))
        if case.data.source is not None:
            return cls._start_sql(case, frozen, key)
        status = case.data_status
        if not status.usable:
            raise WorkbenchError(status.message)
        seen = last_seen(case)
        check = (seen.size_bytes, seen.sha256) if seen else (case.data.size_bytes, case.data.sha256)
        follower = Follower.open(status.path, case.request, hold_from=frozen.subgroups, check=check)
        got, want = follower.dataset.layout.as_dict(), case.data.layout.as_dict()
        got.pop("detected", None), want.pop("detected", None)
        if got != want and case.state.request is None:  # a mapping set in the setup is the one asked for
            raise WorkbenchError(f"{status.path}: its columns are now read as {got}, not as when the case was built "
                                 f"({want}); give the layout when creating the case")
        analysis = case.analyse(follower.dataset)
        return cls(case, follower, analysis, frozen, max(seen.subgroups if seen else 0, frozen.subgroups))

    @classmethod
    def _start_sql(cls, case: Any, frozen: FrozenLimits, key: str | None) -> "Watch":
        from workbench.core.case.fingerprint import judged_prefixes
        from workbench.core.phase2.sqlfollow import SqlFollower
        src = dataclasses.replace(case.data.source, key=watch_key(case, key))
        marks = [(j.rows, j.sha256, j.seq) for j in judged_prefixes(case.data, case.events) if j.rows is not None]
        follower = SqlFollower.open(src, case.request, hold_from=frozen.subgroups, marks=marks)
        got, want = follower.dataset.layout.as_dict(), case.data.layout.as_dict()
        got.pop("detected", None), want.pop("detected", None)
        if got != want:
            raise WorkbenchError(f"{src.shown}: its columns are now read as {got}, not as when the case was built "
                                 f"({want}); give the layout when creating the case")
        seen = last_seen(case)
        analysis = case.analyse(follower.dataset)
        return cls(case, follower, analysis, frozen, max(seen.subgroups if seen else 0, frozen.subgroups))

    @property
    def dataset(self) -> Dataset:
        return self.follower.dataset

    def _judgement(self, status: str, message: str, update: Update | None) -> Judgement:
        lo, m = min(self.seen, self.analysis.dataset.m), self.analysis.dataset.m
        found = tuple(new_signals(self.analysis, self.analysis, lo))
        self.seen = max(self.seen, m)
        return Judgement(status, message, self.analysis, range(lo, m), found,
                         frozenset(s.key for s in found if s.first < lo), update)

    def catch_up(self) -> Judgement:
        """The subgroups appended since the case last looked, judged now."""
        n = max(0, self.analysis.dataset.m - self.seen)
        return self._judgement("caught-up", f"{n} subgroup{'' if n == 1 else 's'} new since the case last looked",
                               None)

    def poll(self) -> Judgement:
        """Read what was appended and judge the new complete subgroups (incrementally)."""
        u = self.follower.poll()
        if u.ok and u.dataset is not self.analysis.dataset:
            self.analysis = extend(self.analysis, u.dataset, self.frozen)
        return self._judgement(u.status, u.message, u)

    def record(self, judgement: Judgement) -> str | None:
        """Record in the case what this look judged (nothing when it judged no new subgroup)."""
        if not judgement.positions:
            return None
        f = self.follower
        extra = f.seen_extra() if hasattr(f, "seen_extra") else {}
        return record_seen(self.case, Seen(self.analysis.dataset.m, f.dataset.rows, f.offset, f.sha256),
                           [s.key for s in judgement.signals], extra)

    def reanalyse(self) -> Analysis:
        """Analyse again after the case's state changed (exclusions, setup); the limits must stay frozen."""
        if self.case.state.frozen != self.frozen:
            raise WorkbenchError(f"{self.case.path}: the limits were unfrozen or frozen anew; start the watch again")
        self.analysis = self.case.analyse(self.dataset)
        return self.analysis
