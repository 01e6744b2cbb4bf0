"""The shape a signal shows, in plain words, and the families of causes usually looked at first.

Each signal gets one shape from its rule and its points (:func:`shape_of`): a single far point, a
sustained shift, a drift, alternation, points hugging the centre line, points avoiding it (a mixture
of two levels).  Each shape carries the cause families the published interpretation guidance of
run patterns lists for it, each filed under one of the default cause categories.  They are
suggestions for where to look, never a finding: the views show them beside the cause categories
and never pick one.

Sources (the lists below are common practice, written from memory of these texts, not copied):

* Western Electric Co. (1956), *Statistical Quality Control Handbook*, Part B, the chapter on
  interpreting control-chart patterns ("freaks", shifts in level, trends, cycles and systematic
  variables, stratification, mixtures).
* Montgomery, D. C., *Introduction to Statistical Quality Control*, the section on the analysis of
  patterns on control charts (shift in level, trend, cyclic, mixture, stratification).
"""
from __future__ import annotations

from dataclasses import dataclass

SOURCE = ("Western Electric Co. (1956), Statistical Quality Control Handbook (interpreting patterns); "
          "Montgomery, Introduction to Statistical Quality Control (analysis of patterns on control charts) "
          "— common practice, from memory")
"""Where the cause families come from, in one line for the reports."""


@dataclass(frozen=True)
class Shape:
    """A pattern a chart can show."""

    id: str
    """single | shift | drift | alternation | stratification | mixture."""
    words: str
    """The shape in plain words."""


SHAPES = {s.id: s for s in (
    Shape("single", "a single far point"),
    Shape("shift", "a sustained shift"),
    Shape("drift", "a drift (trend)"),
    Shape("alternation", "alternation (up and down in turn)"),
    Shape("stratification", "points hugging the centre line (stratification)"),
    Shape("mixture", "points avoiding the centre line (a mixture of two levels)"),
)}

_LOCATION: dict[str, tuple[tuple[str, str], ...]] = {
    "single": (("measurement", "a misread, mis-keyed or mis-recorded value"),
               ("method", "a one-off setting, or a step skipped for this subgroup"),
               ("material", "a few units of a different lot, or a damaged unit"),
               ("machine", "a restart after a stop, a momentary fault")),
    "shift": (("material", "a new lot or supplier"),
              ("people", "a new operator or shift"),
              ("method", "a changed setting, recipe or procedure"),
              ("machine", "maintenance, a repair or a tool change"),
              ("measurement", "a new gauge, a recalibration or a changed inspection standard")),
    "drift": (("machine", "tool or die wear, a fixture working loose, gradual deterioration"),
              ("environment", "temperature or humidity changing through the day or season"),
              ("people", "fatigue over a shift"),
              ("material", "a lot ageing or being used up")),
    "alternation": (("method", "over-adjustment: correcting after every subgroup"),
                    ("machine", "two machines, heads or fixtures sampled in turn"),
                    ("people", "two operators working in turn"),
                    ("measurement", "two gauges used in turn")),
    "stratification": (("method", "limits from another period or computed wrongly; each subgroup mixes "
                                  "several streams, so the within-subgroup spread is too wide"),
                       ("machine", "several heads, spindles or cavities in every subgroup"),
                       ("measurement", "readings rounded or edited toward the target")),
    "mixture": (("machine", "two machines, heads or cavities running at different levels"),
                ("material", "two lots or suppliers mixed"),
                ("people", "two operators or shifts working differently"),
                ("method", "over-control swinging the process between two settings")),
}
_SPREAD: dict[str, tuple[tuple[str, str], ...]] = {
    "single": (("measurement", "one misread or mis-keyed reading in the subgroup"),
               ("material", "one unit unlike the others"),
               ("machine", "one head, spindle or cavity out of step for a moment")),
    "shift": (("machine", "wear or looseness: worn bearings, a loose fixture"),
              ("material", "less uniform material"),
              ("people", "a new or less practised operator"),
              ("measurement", "the gauge's repeatability changed")),
}


def families(shape_id: str, role: str = "location") -> tuple[tuple[str, str], ...]:
    """The cause families for a shape: (cause category, what to look at), in the order to look.

    A spread chart (R, S, MR) has its own lists for a single point and a shift; its other shapes
    use the location lists."""
    if role == "spread" and shape_id in _SPREAD:
        return _SPREAD[shape_id]
    return _LOCATION.get(shape_id, ())


def shape_of(rule: str, npoints: int, runs: int, small_shift: bool = False) -> str:
    """The shape id of one signal.

    Parameters
    ----------
    rule : the rule id that fired
    npoints : the number of points that make the pattern
    runs : runs on one side of the centre line among the pattern's points (1: all on one side; 2: one
        crossing; 3: two crossings or more)
    small_shift : the chart is an EWMA or CUSUM, whose every signal is accumulated evidence of a shift

    Notes
    -----
    beyond-limits is a single far point, unless two or more consecutive points lie beyond the same
    limit (a shift); zone-a, zone-b and same-side are shifts; avoid-centre is a mixture of two levels
    when its points cross the centre line at least twice, else a shift (up and staying up, or up and
    back once); trend is a drift, alternating alternation, hugging stratification.
    """
    if small_shift:
        return "shift"
    if rule == "beyond-limits":
        return "shift" if npoints >= 2 and runs == 1 else "single"
    if rule in ("zone-a", "zone-b", "same-side"):
        return "shift"
    if rule == "avoid-centre":
        return "mixture" if runs >= 3 else "shift"
    return {"trend": "drift", "alternating": "alternation", "hugging": "stratification"}.get(rule, "single")


def suggestion_lines(shape_id: str, role: str = "location", began: str = "") -> list[str]:
    """The shape (and, when known, where it began) and its cause families for a dialog, as two short
    paragraphs: ``Shape: a sustained shift — began 08:00 (most likely).`` and ``Often looked at first
    (suggestions; none is chosen): material — a new lot or supplier; people — …``."""
    shape = SHAPES.get(shape_id)
    if shape is None:
        return []
    head = f"Shape: {shape.words}" + (f" — {began} (most likely)" if began else "") + "."
    return [head, "Often looked at first (suggestions; none is chosen): "
            + "; ".join(f"{cat} — {words}" for cat, words in families(shape_id, role)) + "."]
