"""Which signals a case has answered: states are kept against the firing points of a chart and rule.

A mark (explained, no cause found, open) and an exclusion answer the *firing points* of one chart
and rule they were given for, not a label.  When the limits move and a run grows, shrinks or merges
with another, its new firing points are not covered by an answer nobody gave them: a signal whose
every firing point is answered keeps its state; one with new points is open and says how much of it
was answered (``explained 1 of 4 firing points — 3 new``).

Marks and exclusions written before firing points were recorded (a ``signal`` event without
``fired``, an ``exclude`` event with only ``signal``, a range exclusion's signal keys) answer the
current signal with that key, exactly as they always did, so older case files replay to the same
states.  Pure: an analysis and a replayed state in, statuses out; only signals with an answer are
looked at (a long series with thousands of open signals costs nothing here).
"""
from __future__ import annotations

from dataclasses import dataclass
from typing import Any, Iterator

import numpy as np

from workbench.core.model import Analysis, Exclusion, Signal

STATE_WORDS = {"open": "open", "explained": "explained", "no-cause-found": "no cause found",
               "excluded": "excluded"}
"""Signal states in words, the same on every screen and in every report."""
EXCLUDED_RANK = 1 << 40
"""An exclusion's answer outranks any mark (the point has left the limits)."""


@dataclass(frozen=True)
class SignalStatus:
    """The state of one current signal under a case's answers."""

    key: str
    state: str
    """open | explained | no-cause-found | excluded."""
    answered: int = 0
    """Firing points with an answer."""
    total: int = 0
    """Firing points of the signal."""
    answer: str | None = None
    """The latest answer among the answered points (explained, no-cause-found or excluded)."""
    note: str | None = None
    """The note of that mark, or the reason of that exclusion."""
    author: str | None = None
    time: str | None = None
    seq: int | None = None
    """The event of that answer."""

    @property
    def new(self) -> int:
        """Firing points nobody answered yet."""
        return self.total - self.answered

    @property
    def partial(self) -> bool:
        """Some firing points answered and some new: the signal counts as open."""
        return self.state == "open" and self.answered > 0

    def words(self) -> str:
        """``explained``, or ``explained 1 of 4 firing points — 3 new`` for a run that grew."""
        if not self.partial:
            return STATE_WORDS.get(self.state, self.state)
        return (f"{STATE_WORDS.get(self.answer or '', self.answer)} {self.answered} of {self.total} firing "
                f"point{'s' if self.total != 1 else ''} — {self.new} new")

    def short_words(self) -> str:
        """The state for a list column: ``open · 3 new`` for a partly answered signal."""
        return f"open · {self.new} new" if self.partial else STATE_WORDS.get(self.state, self.state)

    def as_json(self) -> dict[str, Any]:
        return {"state": self.state, "answered": self.answered, "firing_points": self.total,
                "answer": self.answer, "new": self.new}


def split_key(key: str) -> tuple[str, str, str]:
    """(chart, rule, label) of a signal key ``chart/rule/label`` (labels may hold slashes)."""
    parts = key.split("/", 2)
    return (parts[0], parts[1], parts[2]) if len(parts) == 3 else ("", "", key)


class _Signals:
    """The current signals by (chart, rule), read from the signal table's arrays where it has them."""

    def __init__(self, a: Analysis):
        self.a, self.labels = a, a.dataset.labels
        self.groups = {(g.chart, g.rule): g for g in getattr(a.signals, "groups", ())}
        self.plain = None if self.groups or len(a.signals) == 0 else list(a.signals)

    def of(self, chart: str, rule: str) -> Iterator[tuple[str, np.ndarray]]:
        """(key, fired positions) of every signal of one chart and rule."""
        if self.plain is not None:
            for s in self.plain:
                if (s.chart, s.rule) == (chart, rule):
                    yield s.key, np.asarray(s.fired, np.int64)
            return
        g = self.groups.get((chart, rule))
        if g is None:
            return
        for k in range(g.first.size):
            yield f"{chart}/{rule}/{self.labels[g.first[k]]}", g.fired[g.fired_ptr[k]:g.fired_ptr[k + 1]]

    def fired(self, key: str) -> list[str]:
        """Firing-point labels of the current signal with this key (none when there is no such signal)."""
        chart, rule, label = split_key(key)
        for k, fired in self.of(chart, rule):
            if k == key:
                return [str(self.labels[p]) for p in fired]
        return []


def answer_table(a: Analysis, state: Any, sigs: _Signals | None = None) -> dict[tuple[str, str], dict[str, tuple]]:
    """(chart, rule) -> firing-point label -> (rank, answer, note, author, time, seq), the answer in force."""
    sigs = sigs or _Signals(a)
    table: dict[tuple[str, str], dict[str, tuple]] = {}
    for key, mark in getattr(state, "mark_log", ()):
        chart, rule, _label = split_key(key)
        labs = mark.fired if mark.fired is not None else sigs.fired(key)
        points = table.setdefault((chart, rule), {})
        for lab in labs:
            if mark.state == "open":
                points.pop(lab, None)
            else:
                points[lab] = (mark.seq, mark.state, mark.note, mark.author, mark.time, mark.seq)
    infos = getattr(state, "exclusion_info", {})
    readings = {ex.key for ex in getattr(state, "exclusions", ()) if ex.stream is not None}
    for key_, info in infos.items():
        if key_ in readings:
            # A reading's exclusion keeps its subgroup in the limits, recomputed from the other readings: a
            # signal that still fires there is not explained by it (the signals it answered went away with it).
            continue
        if info.answers is not None:
            given = list(info.answers)
        else:  # older exclusions: by key, as they always were
            given = [(k, tuple(sigs.fired(k))) for k in (info.signal, *info.signals) if k]
        for key, labs in given:
            chart, rule, _label = split_key(key)
            points = table.setdefault((chart, rule), {})
            for lab in labs:
                points[lab] = (EXCLUDED_RANK + info.seq, "excluded", info.reason, info.author, info.time, info.seq)
    return table


def statuses(a: Analysis | None, state: Any) -> dict[str, SignalStatus]:
    """Signal key -> :class:`SignalStatus` for each current signal that has an answer on any of its
    firing points; a signal not in the result is open with nothing answered."""
    if a is None or state is None:
        return {}
    sigs = _Signals(a)
    out: dict[str, SignalStatus] = {}
    for (chart, rule), points in answer_table(a, state, sigs).items():
        if not points:
            continue
        for key, fired in sigs.of(chart, rule):
            got = [points.get(str(sigs.labels[p])) for p in fired]
            have = [g for g in got if g is not None]
            if not have:
                continue
            last = max(have, key=lambda g: g[0])
            state_now = last[1] if len(have) == len(got) else "open"
            out[key] = SignalStatus(key, state_now, len(have), len(got), last[1], *last[2:])
    return out


def fired_for(a: Analysis | None, state: Any, keys: list[str]) -> dict[str, list[str]] | None:
    """The firing points a mark of ``keys`` is given for: each current signal's firing-point labels; a key
    no longer detected keeps the points its last mark had (or none).  None without data."""
    if a is None:
        return None
    sigs = _Signals(a)
    marks = getattr(state, "signal_states", {}) or {}
    out = {}
    for key in keys:
        labs = sigs.fired(key)
        if not labs and key in marks and marks[key].fired is not None:
            labs = list(marks[key].fired)
        out[key] = labs
    return out


def state_of(all_statuses: dict[str, SignalStatus], key: str) -> str:
    st = all_statuses.get(key)
    return st.state if st is not None else "open"


def exclusion_answers(a: Analysis, state: Any, target: Exclusion, chosen: str | None = None,
                      positions: list[int] | None = None, after: Analysis | None = None) -> dict[str, list[str]]:
    """The signals an exclusion answers, with the firing points it answers of each.

    A whole subgroup (or the subgroups at ``positions``, for a range): every open signal (any chart,
    any rule) whose firing points all lie in excluded subgroups once it is excluded answers with all
    its firing points; the signal chosen in the dialog or with ``--signal``, and for a range every
    signal that fired in it, answers with those of its firing points in those subgroups (its other
    points stay open).

    One reading (``target.stream`` set): see :func:`reading_answers` (``after`` is the analysis with
    the reading left out; computed here when not given).
    """
    if target.stream is not None and positions is None:
        return reading_answers(a, state, target, chosen, after)
    ds = a.dataset
    where = positions if positions is not None else [ds.index_of(target.subgroup)]
    gone = np.asarray(a.excluded_subgroups, bool).copy()
    gone[where] = True
    now = statuses(a, state)
    out: dict[str, list[str]] = {}
    lo, hi = min(where), max(where)
    signals = a.signals
    near = signals.between(lo, hi) if hasattr(signals, "between") else range(len(signals))
    for i in near:
        s: Signal = signals[i]
        if now.get(s.key) is not None and now[s.key].state != "open":
            continue
        fired = np.asarray(s.fired, np.int64)
        if fired.size and gone[fired].all():
            out[s.key] = [str(ds.labels[p]) for p in fired]
        elif s.key == chosen or (positions is not None and fired.size and gone[fired].any()):
            out[s.key] = [str(ds.labels[p]) for p in fired if gone[p]]
    if chosen and chosen not in out and (now.get(chosen) is None or now[chosen].state == "open"):
        out[chosen] = []  # named, but none of its firing points is left out: it stays open
    return out


def _firing_at(an: Analysis, p: int) -> set[tuple[str, str]]:
    """(chart, rule) of every signal of ``an`` with a firing point at position ``p``."""
    sigs = an.signals
    near = sigs.between(p, p) if hasattr(sigs, "between") else range(len(sigs))
    return {(sigs[i].chart, sigs[i].rule) for i in near if p in set(np.asarray(sigs[i].fired).tolist())}


def reading_answers(a: Analysis, state: Any, target: Exclusion, chosen: str | None = None,
                    after: Analysis | None = None) -> dict[str, list[str]]:
    """The signals leaving out one reading answers.

    The subgroup stays in the limits, its statistic recomputed from its other readings (common practice:
    a wrong reading is corrected, the sample is kept). So the exclusion answers a signal at that subgroup
    only where the recomputed point no longer fires for the signal's chart and rule — the reading was
    the cause. An open signal whose firing points all lie in the subgroup answers when it no longer fires
    there; the chosen signal answers with its firing point in the subgroup when that point no longer
    fires, and otherwise is listed with no point (it stays open: the other readings still signal).
    """
    ds = a.dataset
    p = ds.index_of(target.subgroup)
    if after is None:
        from workbench.core.analysis import analyse
        from workbench.core.case.payload import exclusion_order
        after = analyse(ds, state.settings, sorted({*state.exclusions, target}, key=exclusion_order), state.frozen)
    still = _firing_at(after, p)
    now = statuses(a, state)
    label = str(ds.labels[p])
    out: dict[str, list[str]] = {}
    sigs = a.signals
    near = sigs.between(p, p) if hasattr(sigs, "between") else range(len(sigs))
    for i in near:
        s: Signal = sigs[i]
        if now.get(s.key) is not None and now[s.key].state != "open":
            continue
        fired = np.asarray(s.fired, np.int64)
        if p not in set(fired.tolist()):
            continue
        gone = (s.chart, s.rule) not in still
        if gone and (bool((fired == p).all()) or s.key == chosen):
            out[s.key] = [label]
        elif s.key == chosen:
            out[s.key] = []
    if chosen and chosen not in out and (now.get(chosen) is None or now[chosen].state == "open"):
        out[chosen] = []
    return out


def answered_words(answers: dict[str, list[str]], reading: bool = False) -> list[str]:
    """``xbar/beyond-limits/… (all 3 firing points)`` for each answered signal, for dialogs and the trail;
    ``reading``: the answers of one reading's exclusion (a signal listed without points still fires)."""
    out = []
    for key, labs in answers.items():
        n = len(labs)
        if n:
            out.append(f"{key} ({n} firing point{'s' if n != 1 else ''})")
        elif reading:
            out.append(f"{key} (still fires without this reading: it stays open)")
        else:
            out.append(f"{key} (none of its firing points: it stays open)")
    return out
