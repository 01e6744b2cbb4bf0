"""Each stream charted on its own: the stream view and ``workbench report --by-stream``.

When the streams differ, a subgroup taken across them mixes stream-to-stream differences into
the within-subgroup variation.  Charting each stream on its own removes that: the stream's one
reading per subgroup becomes an individuals series with its own I-MR limits (centre = the
stream's mean, sigma = MR̄/d2 of its own moving ranges).  A subgroup excluded as a whole, or the
stream's own reading excluded, is left out of that stream's limits; the rules are the case's
location rules.

References
----------
Montgomery, D. C. *Introduction to Statistical Quality Control*, the individuals (I-MR) chart:
limits x̄ ± 3·MR̄/d2 with d2 = 1.128 for moving ranges of two.
"""
from __future__ import annotations

from dataclasses import dataclass, replace

from workbench.core.model import Analysis, Dataset, Exclusion, Layout, Settings, WorkbenchError


@dataclass(frozen=True, eq=False)
class StreamChart:
    """One stream on its own."""

    stream: str
    analysis: Analysis
    """``analyse()`` of the stream's readings as an individuals series."""


def stream_dataset(ds: Dataset, stream: str) -> Dataset:
    """The readings of one stream as an individuals dataset (same labels and times)."""
    if ds.values is None or ds.k < 2:
        raise WorkbenchError("charting each stream on its own needs readings by stream (two streams or more)")
    j = ds.stream_index(stream)
    return replace(ds, layout=Layout("individuals", subgroup=ds.layout.subgroup, time=ds.layout.time,
                                     value=stream, detected=ds.layout.detected),
                   streams=(stream,), values=ds.values[:, j:j + 1].copy(), summary_n=None, summary_mean=None,
                   summary_range=None, summary_sd=None, counts=None, sizes=None)


def stream_settings(a: Analysis) -> Settings:
    """The case's setup for one stream: an I-MR chart with MR̄/d2, the same location rules and specification."""
    from workbench.core.analysis import location_rules
    rules = location_rules(a.settings, a.chart) if a.chart in ("xbar-r", "xbar-s", "imr") else None
    return replace(a.settings, chart="imr", sigma="auto", rules=rules, known_mean=None, known_sigma=None)


def stream_exclusions(a: Analysis, stream: str) -> list[Exclusion]:
    """Subgroups to leave out of one stream's limits: whole-subgroup exclusions and the stream's own readings."""
    out = []
    for e in a.exclusions:
        if e.stream is None or e.stream == stream:
            out.append(Exclusion(e.subgroup))
    return list({e.subgroup: e for e in out}.values())


def stream_chart(a: Analysis, stream: str) -> StreamChart:
    """The stream charted on its own (its own limits and signals)."""
    from workbench.core.analysis import analyse
    ds = stream_dataset(a.dataset, stream)
    return StreamChart(stream, analyse(ds, stream_settings(a), stream_exclusions(a, stream)))


def stream_charts(a: Analysis) -> list[StreamChart]:
    """Every stream on its own, in the dataset's stream order."""
    return [stream_chart(a, s) for s in a.dataset.streams]
