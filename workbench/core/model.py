"""Shared value types of the analysis core.

Every front end (TUI, headless report, tests) talks to the core through these frozen
dataclasses.  Nothing here imports a UI library.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property
from typing import Any

import numpy as np

LAYOUTS = ("long", "wide", "individuals", "summary")
VARIABLE_CHARTS = ("xbar-r", "xbar-s", "imr")
ATTRIBUTE_CHARTS = ("p", "np", "c", "u")
SMALL_SHIFT_CHARTS = ("ewma", "cusum")
CHART_KINDS = VARIABLE_CHARTS + ATTRIBUTE_CHARTS + SMALL_SHIFT_CHARTS
CONTEXT_JOIN = " | "
"""How the set of values of a context column that varies inside a subgroup is shown."""
SIGMA_METHODS = ("auto", "rbar", "sbar", "pooled", "pooled-sbar", "mrbar", "known")
SIGMA_METHOD_LABELS = {
    "rbar": "rbar/d2",
    "sbar": "sbar/c4",
    "pooled": "pooled/c4",
    "pooled-sbar": "pooled s\u0304, A3(n\u1d62)",
    "mrbar": "mrbar/d2",
    "known": "known",
}


class WorkbenchError(Exception):
    """A user-facing error: one line, printed without a traceback, exit code 2."""


@dataclass(frozen=True)
class Layout:
    """How the columns of a data file map onto subgroups, streams and readings."""

    kind: str
    """One of ``long``, ``wide``, ``individuals``, ``summary``."""
    subgroup: str | None = None
    """Column holding the subgroup key (label or timestamp); None when rows are numbered."""
    stream: str | None = None
    """Long layout: column naming the stream of each reading."""
    value: str | None = None
    """Long / individuals layout: column holding the reading."""
    time: str | None = None
    """Column holding a timestamp used to order subgroups (may equal ``subgroup``)."""
    streams: tuple[str, ...] = ()
    """Wide layout: the stream columns, in order."""
    n: str | None = None
    """Summary layout: column with the subgroup size."""
    mean: str | None = None
    """Summary layout: column with the subgroup mean."""
    range: str | None = None
    """Summary layout: column with the subgroup range (or None)."""
    sd: str | None = None
    """Summary layout: column with the subgroup standard deviation (or None)."""
    count: str | None = None
    """Attribute data: column with the count of defectives or defects."""
    size: str | None = None
    """Attribute data: column with the sample size (units inspected)."""
    detected: bool = True
    """True when the mapping was auto-detected, False when any part was given by the user."""

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {"kind": self.kind}
        for name in ("subgroup", "stream", "value", "time", "n", "mean", "range", "sd", "count", "size"):
            v = getattr(self, name)
            if v is not None:
                out[name] = v
        if self.streams:
            out["streams"] = list(self.streams)
        out["detected"] = self.detected
        return out

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Layout":
        kw = {k: d.get(k) for k in ("subgroup", "stream", "value", "time", "n", "mean", "range", "sd", "count", "size")}
        return cls(kind=d["kind"], streams=tuple(d.get("streams", ())), detected=bool(d.get("detected", True)), **kw)


@dataclass(frozen=True)
class LayoutRequest:
    """User overrides for the layout detection (all optional)."""

    kind: str | None = None
    subgroup: str | None = None
    stream: str | None = None
    value: str | None = None
    time: str | None = None
    streams: tuple[str, ...] = ()
    count: str | None = None
    size: str | None = None
    skip_bad: bool = False
    characteristic: str | None = None
    """The one characteristic to load from data that hold several (``--characteristic``)."""

    def as_dict(self) -> dict[str, Any]:
        out: dict[str, Any] = {}
        for name in ("kind", "subgroup", "stream", "value", "time", "count", "size", "characteristic"):
            v = getattr(self, name)
            if v is not None:
                out[name] = v
        if self.streams:
            out["streams"] = list(self.streams)
        if self.skip_bad:
            out["skip_bad"] = True
        return out

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "LayoutRequest":
        return cls(
            kind=d.get("kind"), subgroup=d.get("subgroup"), stream=d.get("stream"), value=d.get("value"),
            time=d.get("time"), streams=tuple(d.get("streams", ())), count=d.get("count"), size=d.get("size"),
            skip_bad=bool(d.get("skip_bad", False)), characteristic=d.get("characteristic"),
        )


@dataclass(frozen=True, eq=False)
class Dataset:
    """Process data loaded from one file, arranged as subgroups x streams.

    ``values[i, j]`` is the reading of stream ``j`` in subgroup ``i`` (NaN when missing).
    Subgroups are in time order.  For the summary layout ``values`` is None and the
    per-subgroup statistics are in ``summary_n`` / ``summary_mean`` / ``summary_range`` /
    ``summary_sd``.  For attribute data ``counts`` and ``sizes`` hold one value per
    subgroup x stream (sizes may be None for c charts with equal areas of opportunity).
    """

    path: str
    """The file the data came from, as given."""
    sha256: str
    """SHA-256 of the file's bytes (hex)."""
    rows: int
    """Number of data rows in the file (header excluded)."""
    size_bytes: int
    """Size of the file in bytes when it was read."""
    layout: Layout
    """The column mapping used."""
    labels: np.ndarray
    """Subgroup labels (numpy array of str), unique, in time order."""
    streams: tuple[str, ...]
    """Stream names; a single stream for individuals data."""
    values: np.ndarray | None
    """Readings, float64 array shape (subgroups, streams) with NaN for missing."""
    summary_n: np.ndarray | None = None
    summary_mean: np.ndarray | None = None
    summary_range: np.ndarray | None = None
    summary_sd: np.ndarray | None = None
    counts: np.ndarray | None = None
    sizes: np.ndarray | None = None
    times: np.ndarray | None = None
    """Optional timestamps per subgroup (numpy datetime64) when a time column exists."""
    extras: dict[str, np.ndarray] = field(default_factory=dict)
    """Context columns (every column the layout does not use: lot, operator, shift, …): name -> per-subgroup
    array of str.  Where a column's value varies inside a subgroup the entry is the display form of its set of
    values, the distinct values in first-seen order joined by ``CONTEXT_JOIN`` (``L-2291 | L-2292``)."""
    extra_sets: dict[str, dict[int, tuple[str, ...]]] = field(default_factory=dict)
    """Context columns whose value varies inside a subgroup: name -> {subgroup position: the distinct values
    in first-seen order}; a subgroup absent here has the one value in ``extras``."""
    missing: int = 0
    """Number of empty cells skipped."""
    skipped_bad: int = 0
    """Number of non-numeric cells skipped (only with ``skip_bad``)."""
    notices: tuple[str, ...] = ()
    """Plain-words notices about the load (encoding fallback, re-sorting, skipped cells)."""
    encoding: str = "utf-8"
    characteristic: str | None = None
    """The characteristic these readings are of, when the data hold several (None otherwise)."""
    source: Any = None
    """The database table or query the rows came from (``workbench.core.data.sql.SqlSource``); None for a file."""
    count_over_size: str | None = None
    """Count data: "file:row:column: ..." of the first count larger than its sample size, or None.
    Defects (c, u) may outnumber units; p and np charts refuse such data with this message."""

    @property
    def m(self) -> int:
        """Number of subgroups."""
        return int(len(self.labels))

    @property
    def k(self) -> int:
        """Number of streams."""
        return len(self.streams)

    @property
    def is_summary(self) -> bool:
        return self.values is None and self.summary_mean is not None

    @property
    def is_attribute(self) -> bool:
        return self.counts is not None

    def context_values(self, name: str, p: int) -> tuple[str, ...]:
        """The values of context column ``name`` in subgroup ``p`` (distinct, in first-seen order)."""
        found = self.extra_sets.get(name, {}).get(int(p))
        return found if found is not None else (str(self.extras[name][p]),)

    def index_of(self, label: str) -> int:
        """Position of a subgroup label; raises WorkbenchError when unknown."""
        idx = self._label_index().get(str(label))
        if idx is None:
            raise WorkbenchError(f"no subgroup labelled {label!r} in {self.path}")
        return idx

    def target(self, text: str) -> "Exclusion":
        """``SUBGROUP`` or ``SUBGROUP:STREAM`` checked against these data; an unknown part is named
        (``18:S9`` says that there is no stream S9, not that there is no subgroup ``18:S9``)."""
        ex = Exclusion.parse(text, self.streams)
        if ex.stream is None and self._label_index().get(ex.subgroup) is None and ":" in ex.subgroup:
            head, _, tail = ex.subgroup.rpartition(":")
            if self._label_index().get(head) is not None:
                raise WorkbenchError(f"no stream named {tail!r} in {self.path} (subgroup {head!r} has the streams "
                                     f"{', '.join(self.streams)})")
        self.index_of(ex.subgroup)
        return ex

    def stream_index(self, stream: str) -> int:
        try:
            return self.streams.index(str(stream))
        except ValueError:
            raise WorkbenchError(f"no stream named {stream!r} in {self.path} (streams: {', '.join(self.streams)})") from None

    def _label_index(self) -> "_LabelIndex":
        cache = self.__dict__.get("_label_cache")
        if cache is None:
            cache = _LabelIndex(self.labels)
            object.__setattr__(self, "_label_cache", cache)
        return cache


class _LabelIndex:
    """Label -> position, built once per dataset with a hash index (pandas) in C."""

    def __init__(self, labels: np.ndarray):
        import pandas as pd
        self._index = pd.Index(labels.astype(str))

    def positions(self, labels: list[str]) -> np.ndarray:
        """Positions of many labels at once (-1 for an unknown label), in C."""
        if self._index.is_unique:
            return self._index.get_indexer(labels)
        return np.array([-1 if (i := self.get(x)) is None else i for x in labels], dtype=np.intp)

    def get(self, label: str) -> int | None:
        try:
            loc = self._index.get_loc(label)
        except KeyError:
            return None
        return int(loc) if isinstance(loc, (int, np.integer)) else None


class SortedExclusions(tuple):
    """Exclusions already sorted by (subgroup, stream) without repeats — a case's state keeps them so —
    which ``analyse()`` takes as they are instead of sorting them again."""

    __slots__ = ()


@dataclass(frozen=True)
class Spec:
    """Specification and capability settings."""

    lsl: float | None = None
    usl: float | None = None
    target: float | None = None
    confidence: float = 0.95
    required: float = 1.33
    method: str = "auto"
    """normal | box-cox | percentile | auto"""
    bounds: str = "two-sided"
    """two-sided | lower: how confidence bounds are stated."""
    shift: float | None = None
    """Optional stated shift added before a Box-Cox transform of non-positive data."""

    def as_dict(self) -> dict[str, Any]:
        return {k: getattr(self, k) for k in ("lsl", "usl", "target", "confidence", "required", "method", "bounds", "shift")}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Spec":
        return cls(**{k: d[k] for k in ("lsl", "usl", "target", "confidence", "required", "method", "bounds", "shift") if k in d})


@dataclass(frozen=True)
class Settings:
    """Chart, rule and specification settings (the "setup")."""

    chart: str = "auto"
    """Chart kind (see CHART_KINDS) or ``auto`` (imr for individuals, xbar-r for n <= 10, else xbar-s)."""
    sigma: str = "auto"
    """Sigma estimator: auto | rbar | sbar | pooled | pooled-sbar | mrbar | known."""
    rules: str | None = None
    """Rule set for the location chart: a set name or a comma list of rule ids; None: the default
    for the chart kind (western-electric for variables charts, limits-only for count charts)."""
    spread_rules: str = "limits-only"
    """Rule set for the spread chart."""
    known_mean: float | None = None
    known_sigma: float | None = None
    spec: Spec | None = None
    ewma_lambda: float = 0.2
    ewma_l: float = 2.962
    ewma_asymptotic: bool = False
    cusum_k: float = 0.5
    cusum_h: float = 5.0
    cusum_head_start: float = 0.0
    laney: str = "auto"
    """Attribute charts: auto | on | off (Laney p'/u' correction)."""
    name: str | None = None
    """The characteristic's name (e.g. "fill volume"); None: read from the value column's header if obvious."""
    unit: str | None = None
    """Its unit (e.g. "mL"); None: read from the value column's header (``fill_mL``) if obvious."""

    def as_dict(self) -> dict[str, Any]:
        out = {k: getattr(self, k) for k in self.__dataclass_fields__ if k != "spec"}
        out["spec"] = self.spec.as_dict() if self.spec else None
        for k in ("name", "unit"):            # absent when not given: older case files keep their exact text
            if out[k] is None:
                del out[k]
        return out

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "Settings":
        kw = {k: d[k] for k in cls.__dataclass_fields__ if k in d and k != "spec"}
        spec = d.get("spec")
        return cls(spec=Spec.from_dict(spec) if spec else None, **kw)


@dataclass(frozen=True, order=True)
class Exclusion:
    """A subgroup (stream None) or one reading (subgroup + stream) left out of the limits."""

    subgroup: str
    stream: str | None = None

    @property
    def key(self) -> str:
        return self.subgroup if self.stream is None else f"{self.subgroup}:{self.stream}"

    @classmethod
    def parse(cls, text: str, streams: tuple[str, ...] = ()) -> "Exclusion":
        """Parse ``SUBGROUP`` or ``SUBGROUP:STREAM``.

        A label may itself contain colons (timestamps); the part after the last colon is
        taken as a stream only when it names one of ``streams``.
        """
        text = str(text).strip()
        if not text:
            raise WorkbenchError("an exclusion needs a subgroup label")
        if ":" in text:
            head, _, tail = text.rpartition(":")
            if tail in streams:
                return cls(head, tail)
        return cls(text, None)


@dataclass(frozen=True)
class FrozenLimits:
    """Phase I limits fixed for new data (Phase II)."""

    chart: str
    """Chart kind at the freeze."""
    center: float
    """Centre of the location statistic (process mean)."""
    sigma: float
    """Within-subgroup sigma at the freeze."""
    subgroups: int
    """Number of subgroups in Phase I (new subgroups start at this position)."""
    limits: dict[str, dict[str, Any]] = field(default_factory=dict)
    """Per chart name: {"center": .., "lcl": .., "ucl": ..} as shown at the freeze (for the reader)."""

    def as_dict(self) -> dict[str, Any]:
        return {"chart": self.chart, "center": self.center, "sigma": self.sigma,
                "subgroups": self.subgroups, "limits": self.limits}

    @classmethod
    def from_dict(cls, d: dict[str, Any]) -> "FrozenLimits":
        return cls(chart=d["chart"], center=float(d["center"]), sigma=float(d["sigma"]),
                   subgroups=int(d["subgroups"]), limits=dict(d.get("limits", {})))


@dataclass(frozen=True, eq=False)
class ChartResult:
    """One control chart: the plotted statistic, its limits and the rules that fired."""

    name: str
    """Chart name: xbar, r, s, i, mr, p, np, c, u, ewma, cusum+ / cusum-."""
    title: str
    """Plain-words title, e.g. "Subgroup mean"."""
    role: str
    """"location" or "spread"."""
    values: np.ndarray
    """Plotted statistic per subgroup (NaN where undefined)."""
    center: np.ndarray
    """Centre line per subgroup (constant arrays when limits do not vary)."""
    lcl: np.ndarray
    """Lower control limit per subgroup (NaN when there is none)."""
    ucl: np.ndarray
    """Upper control limit per subgroup."""
    sigma: np.ndarray
    """Per-point sigma of the plotted statistic (used for the zones)."""
    excluded: np.ndarray
    """Boolean per subgroup: the point is left out of the limits and of the rule sequences."""
    flags: dict[str, np.ndarray]
    """Rule id -> sorted 0-based positions where the rule fires."""
    rules: tuple[str, ...] = ()
    """The rule ids evaluated on this chart."""
    extra: dict[str, np.ndarray] = field(default_factory=dict)
    """Extra per-point series (e.g. the other CUSUM side)."""

    def limits_constant(self) -> bool:
        def same(a: np.ndarray) -> bool:
            a = a[np.isfinite(a)]
            return a.size == 0 or bool(np.all(a == a[0]))
        return same(self.center) and same(self.lcl) and same(self.ucl)


@dataclass(frozen=True)
class Signal:
    """One detected signal: a rule firing (or a group of adjacent firings) on one chart."""

    chart: str
    """Chart name (xbar, r, ...)."""
    rule: str
    """Rule id (beyond-limits, zone-a, ...)."""
    first: int
    """First subgroup position of the pattern (0-based)."""
    last: int
    """Last subgroup position of the pattern (0-based)."""
    points: tuple[int, ...]
    """Positions of the points that make the pattern (e.g. the points in zone A)."""
    fired: tuple[int, ...]
    """Positions where the rule fired (each completes the pattern)."""
    key: str
    """Stable identity across recomputes: "chart/rule/first-label"."""
    description: str
    """The rule in words, e.g. "2 of 3 points beyond 2 sigma, same side"."""


@dataclass(frozen=True)
class StreamRow:
    """One stream's reading in one subgroup, against that stream's own history."""

    stream: str
    reading: float
    """The reading (NaN when missing)."""
    deviation: float
    """Reading minus the subgroup mean."""
    stream_mean: float
    """The stream's own mean over its non-excluded history."""
    stream_sd: float
    """The stream's own standard deviation over its non-excluded history."""
    z: float
    """(reading - stream_mean) / stream_sd (NaN when sd is 0)."""
    role: str
    """"max", "min", "max+min" or ""."""
    range_share: float
    """Share of the subgroup range that disappears when this reading is left out: (R - R_without)/R."""
    excluded: bool
    """The reading itself is excluded."""
    gap_z: float = float("nan")
    """Reading minus the mean of the other streams in the subgroup, in within-subgroup sigmas
    (sigma_within · sqrt(1 + 1/(k-1))); NaN when it cannot be formed."""


@dataclass(frozen=True)
class Breakdown:
    """Per-stream view of one subgroup."""

    position: int
    label: str
    rows: tuple[StreamRow, ...]
    mean: float
    range: float
    driver: str | None
    """The stream that drove the subgroup (largest |z|), or None."""
    verdict: str
    """Plain-words verdict."""


@dataclass(frozen=True)
class StreamComparison:
    """Whole-dataset comparison of streams."""

    streams: tuple[str, ...]
    means: tuple[float, ...]
    sds: tuple[float, ...]
    counts: tuple[int, ...]
    anova_f: float | None
    anova_p: float | None
    kruskal_h: float | None
    kruskal_p: float | None
    var_between: float | None
    """Variance component between streams."""
    var_within: float | None
    """Variance component within streams."""
    share_between: float | None
    """var_between / (var_between + var_within)."""
    differ: bool
    advice: str
    kruskal_ranks: str | None = None
    """How the Kruskal–Wallis ranks were found (exact by counting at the readings' resolution, or by a sort)."""


@dataclass(frozen=True, eq=False)
class Analysis:
    """The complete, immutable result of ``analyse(dataset, settings, exclusions)``."""

    dataset: Dataset
    settings: Settings
    exclusions: tuple[Exclusion, ...]
    chart: str
    """The resolved chart kind."""
    sigma_method: str
    """The resolved sigma estimator id (rbar, sbar, pooled, mrbar, known, ...)."""
    sigma_within: float
    """Within-subgroup (short-term) sigma estimate of individual readings."""
    sigma_overall: float
    """Sample SD of all non-excluded readings."""
    center: float
    """Process centre (grand mean or known mean)."""
    n: np.ndarray
    """Readings used per subgroup (after reading exclusions)."""
    charts: tuple[ChartResult, ...]
    signals: tuple[Signal, ...]
    excluded_subgroups: np.ndarray
    """Boolean per subgroup: the whole subgroup is excluded."""
    excluded_cells: np.ndarray | None
    """Boolean (subgroups, streams): the reading is excluded (whole-subgroup exclusions included)."""
    warnings: tuple[str, ...]
    phase2_start: int | None = None
    """Position where Phase II (frozen limits) starts, or None."""
    frozen: "FrozenLimits | None" = None
    """The frozen limits the analysis was judged against (also when no Phase II point exists yet)."""

    def readings(self) -> np.ndarray:
        """All non-excluded readings (1-D, NaN removed); empty for summary and count data."""
        v = self.dataset.values
        if v is None or self.excluded_cells is None:
            return np.empty(0)
        r = v[~self.excluded_cells]
        return r[~np.isnan(r)]

    def chart_named(self, name: str) -> ChartResult:
        for c in self.charts:
            if c.name == name:
                return c
        raise KeyError(name)

    @property
    def location(self) -> ChartResult:
        return self.charts[0]

    @property
    def spread(self) -> ChartResult | None:
        return self.charts[1] if len(self.charts) > 1 else None
