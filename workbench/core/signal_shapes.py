"""Shapes, cause families and change points of signals in words and JSON: what every view states.

The figures come from :func:`workbench.core.charts.changepoint.signal_shapes` (computed once per
analysis); this module only words them, the same way for the TUI, the text, Markdown and JSON reports.
"""
from __future__ import annotations

from typing import Any

import numpy as np

from workbench.core.charts import changepoint as CP
from workbench.core.charts import shapes as S
from workbench.core.model import Analysis
from workbench.core.text import num, printable

CAUTION = ("The change point is an estimate for a step in the mean: a drift or several changes make it "
           "less reliable. The likely span is the set of start points whose likelihood is within "
           "χ²₁(0.95)/2 ≈ 1.92 of the best (a common large-sample approximation, not an exact interval). "
           "Cause families are suggestions of where to look first, not findings.")


def guidance() -> dict[str, Any]:
    """What the reports state once about the estimators and the cause families."""
    return {"change_point_estimators": dict(CP.ESTIMATORS), "lookback_subgroups": CP.LOOKBACK,
            "likelihood_drop": CP.LIKELIHOOD_DROP,
            "shapes": {sid: {"words": sh.words,
                             "cause_families": {role: [{"category": c, "words": w} for c, w in S.families(sid, role)]
                                                for role in ("location", "spread")}}
                       for sid, sh in S.SHAPES.items()},
            "cause_families_source": S.SOURCE, "caution": CAUTION}


def _label(labels, i: int | None, glue: bool = False) -> str | None:
    """The label of position ``i``; ``glue`` joins its words with no-break spaces (so wrapping never
    splits a timestamp)."""
    if i is None:
        return None
    text = printable(str(labels[i]))
    return text.replace(" ", "\u00a0") if glue else text


def change_json(a: Analysis, cp: CP.ChangePoint | None) -> dict[str, Any] | None:
    """``signals[].change_point``: index, label, the likely span, the estimator and the shift in sigmas."""
    if cp is None:
        return None
    labels = a.dataset.labels
    shift = cp.shift if cp.shift == cp.shift else None
    lab = lambda i: None if i is None else str(labels[i])  # noqa: E731  (as records() gives them)
    return {"index": cp.index, "label": lab(cp.index), "low": cp.low, "high": cp.high,
            "low_label": lab(cp.low), "high_label": lab(cp.high),
            "estimator": cp.estimator, "shift_sigma": shift}


def change_words(a: Analysis, cp: CP.ChangePoint | None, glue: bool = False) -> str:
    """``the shift most likely began at subgroup 10:00 (likely between 09:30 and 10:30; +1.3σ)``."""
    if cp is None:
        return ""
    labels = a.dataset.labels
    text = f"the shift most likely began at subgroup {_label(labels, cp.index, glue)}"
    extra = []
    if cp.low is not None and cp.low != cp.high:
        extra.append(f"likely between {_label(labels, cp.low, glue)} and {_label(labels, cp.high, glue)}")
    elif cp.low is not None:
        extra.append("no other start nearly as likely")
    else:
        extra.append("the CUSUM's own estimate")
    if cp.shift == cp.shift:
        extra.append(f"{'+' if cp.shift > 0 else ''}{num(cp.shift, 2)}σ")
    return text + " (" + "; ".join(extra) + ")"


def change_short(a: Analysis, cp: CP.ChangePoint | None) -> str:
    """The short form for the signals list: ``began 10:00`` (a label is never cut)."""
    return "" if cp is None else f"began {_label(a.dataset.labels, cp.index)}"


def records(a: Analysis, out: list[dict[str, Any]]) -> None:
    """Add ``shape`` (its id), ``cause_families`` (the cause categories to look at first, in order) and
    ``change_point`` to the JSON records of every signal, in the signal table's order.  The words of
    each shape and family are stated once, in :func:`guidance`; the per-signal lists are shared
    objects and the change points are built from whole arrays, so a long list stays cheap."""
    t = CP.signal_shapes(a)
    ids = list(S.SHAPES)
    cats = {(sid, spread): _categories(sid, "spread" if spread else "location") for sid in ids
            for spread in (False, True)}
    shape = t.shape.tolist()
    spread = t.role.tolist()
    for i, d in enumerate(out):
        sid = ids[shape[i]]
        d["shape"] = sid
        d["cause_families"] = cats[(sid, spread[i])]
        d["change_point"] = None
    rows = np.flatnonzero(t.index >= 0)
    if rows.size == 0:
        return
    labels = a.dataset.labels
    has_span = t.low[rows] >= 0
    lo, hi = np.where(has_span, t.low[rows], t.index[rows]), np.where(has_span, t.high[rows], t.index[rows])
    names = (None, CP.STEP_MLE, CP.CUSUM_LAST_ZERO)
    shifts = [None if v != v else v for v in t.shift[rows].tolist()]
    for r, i, l, h, span, li, lli, hli, est, sh in zip(
            rows.tolist(), t.index[rows].tolist(), lo.tolist(), hi.tolist(), has_span.tolist(),
            _labels(labels, t.index[rows]), _labels(labels, lo), _labels(labels, hi),
            t.estimator[rows].tolist(), shifts):
        out[r]["change_point"] = {"index": i, "label": li, "low": l if span else None, "high": h if span else None,
                                  "low_label": lli if span else None, "high_label": hli if span else None,
                                  "estimator": names[est], "shift_sigma": sh}


def _labels(labels, positions: np.ndarray) -> list[str]:
    """Labels as the JSON's ``subgroups`` give them (JSON escapes what a terminal must not see)."""
    return [str(x) for x in labels[positions].tolist()]


def _categories(shape_id: str, role: str) -> list[str]:
    return [c for c, _ in S.families(shape_id, role)]


def index_of(a: Analysis, s) -> int:
    """Position of signal ``s`` in the analysis's signal table (by key among those starting where it does)."""
    table = a.signals
    first = getattr(table, "first", None)
    if first is None:
        return next(i for i, x in enumerate(table) if x.key == s.key)
    lo, hi = (int(v) for v in np.searchsorted(first, [s.first, s.first + 1]))
    return next(i for i in range(lo, hi) if table[i].key == s.key)


def record(a: Analysis, s, d: dict[str, Any]) -> None:
    """``shape``, ``cause_families`` and ``change_point`` of one signal, added to its JSON dict ``d``."""
    t = CP.signal_shapes(a)
    i = index_of(a, s)
    sid, role = t.shape_id(i), t.role_of(i)
    d["shape"] = sid
    d["cause_families"] = _categories(sid, role)
    d["change_point"] = change_json(a, t.change(i))


def summary(a: Analysis, i: int, glue: bool = False) -> tuple[str, str, str]:
    """(shape words, change-point words, cause categories in order) of signal ``i`` (``glue``: see
    :func:`change_words`)."""
    t = CP.signal_shapes(a)
    sid, role = t.shape_id(i), t.role_of(i)
    cats = ", ".join(dict.fromkeys(c for c, _ in S.families(sid, role)))
    return S.SHAPES[sid].words, change_words(a, t.change(i), glue), cats
