"""Run rules where the first suite did not look: a centre and sigma other than 0 and 1, a sigma of zero,
the lower side of each boundary, the rule table and the rule-set parser.

Written against the mutants that survived tests/core/charts/test_rules.py (tests/MUTATION.md); each test
names the mutations it kills.  The expected firings follow from the pattern definitions of the Western
Electric *Statistical Quality Control Handbook* (1956) and Nelson (1984), JQT 16(4) [definition], as in
test_rules.py.
"""
import re

import numpy as np
import pytest

from workbench.core.charts import rules as R
from workbench.core.model import WorkbenchError


def fires(rule, x, centre=0.0, sigma=1.0, same_side=8, limit=3.0):
    """Where ``rule`` fires on ``x`` with a constant centre and sigma (limits at centre ± limit·sigma)."""
    x = np.asarray(x, float)
    n = x.size
    rs = R.RuleSet(rule, (rule,), same_side)
    c, s = np.full(n, centre), np.full(n, float(sigma))
    out = R.evaluate(x, c, s, c - limit * s, c + limit * s, np.zeros(n, bool), rs)
    assert out[rule].rule == rule
    return out[rule].fired.tolist()


def test_zones_are_measured_from_the_centre_in_units_of_sigma():
    """Centre 10, sigma 2: zone A starts at 14 and 6, zone B at 12 and 8, hugging is within 8 … 12.

    Kills ``d = x + c`` and ``z = d * s`` in the z-scores (the first suite used centre 0 and sigma 1, where
    both give the same zones) and a Firing that loses its rule id."""
    assert fires("zone-a", [10, 14.5, 10, 14.2, 10], 10, 2) == [3]       # 2 of 3 beyond 2σ above
    assert fires("zone-a", [10, 13.9, 13.9, 10], 10, 2) == []           # 1.95σ: zone B only
    assert fires("zone-a", [10, 5.5, 10, 5.0], 10, 2) == [3]             # below: z = −2.25, −2.5
    assert fires("zone-b", [12.5, 12.2, 12.1, 12.9, 10], 10, 2) == [3]   # 4 of 5 beyond 1σ
    assert fires("hugging", [11.9] * 15, 10, 2) == [14]                  # |z| = 0.95 < 1
    assert fires("avoid-centre", [12.2, 7.8] * 4, 10, 2) == [7]          # |z| = 1.1
    assert fires("hugging", [9.0] * 15, 10, 0.5) == []                   # |z| = 2: not within 1σ


def test_a_sigma_of_zero_puts_every_point_off_the_centre_infinitely_far():
    """Sigma 0 (a constant process): a point above the centre is beyond every zone above it, a point below
    beyond every zone below, and a point on the centre is in zone C [definition: z = (x − centre)/σ → ±∞,
    and 0 on the centre].

    Kills the sigma-zero branch of the z-scores: ``s >= 0`` for the zero test (0/0 then gives NaN and a run
    on the centre no longer hugs), the point on the centre coded ±∞ or 1, a point below coded +∞, the
    ``0``/``1`` thresholds of that branch and each argument of its ``np.where`` dropped or set to None."""
    assert fires("hugging", [5.0] * 15, 5.0, 0.0) == [14]
    assert fires("zone-a", [5.1, 4.9, 5.1], 5.0, 0.0) == [2]             # above, below, above: 2 of 3 above
    assert fires("zone-a", [4.9, 5.1, 4.9], 5.0, 0.0) == [2]             # below, above, below
    assert fires("zone-a", [5.5, 5.5], 5.0, 0.0) == [1]
    assert fires("avoid-centre", [5.1, 4.9] * 4, 5.0, 0.0) == [7]
    assert fires("avoid-centre", [5.1, 4.9, 5.0, 4.9, 5.1, 4.9, 5.1, 4.9], 5.0, 0.0) == []  # one on the centre


def test_each_boundary_on_the_lower_side_too():
    """A point exactly 2σ below is not beyond 2σ; a point on the centre breaks a run below it; a tie breaks a
    falling trend [definition: "beyond", "on one side", "steadily falling" are strict].

    Kills ``z <= -lim`` in the zone rules, ``x <= c`` in the same-side run and ``d <= 0`` for a fall."""
    assert fires("zone-a", [0, -2.0, -2.0, 0]) == []
    assert fires("zone-b", [-1.0, -1.0, -1.0, -1.0, -1.5]) == []
    assert fires("same-side", [-0.1] * 4 + [0.0] + [-0.1] * 4, same_side=8) == []
    assert fires("trend", [5, 4, 3, 3, 1, 0, -1]) == []


def test_a_run_of_two_and_the_run_length_limits():
    """``same-side:2`` is the shortest run the parser accepts and fires on each second point of a run
    [definition]; 50 is the longest.

    Kills the window-of-1 shortcut widened to ``w == 2`` (a window of two then returns the points instead of
    their counts) and the bounds ``3 <=``, ``2 <``, ``< 50`` and ``<= 51`` of the run length."""
    assert fires("same-side", [0.1, 0.1, -0.1, -0.1, 0.1], same_side=2) == [1, 3]
    assert R.resolve("same-side:2").same_side == 2
    assert R.resolve("same-side:50").same_side == 50
    for bad in ("same-side:1", "same-side:51"):
        with pytest.raises(WorkbenchError):
            R.resolve(bad)


# Pattern lengths of the published tests [definition: Western Electric (1956); Nelson (1984)]: the rule run
# of one side is 8 points in the Western Electric rules and 9 in Nelson's.
WINDOW = {"beyond-limits": 1, "zone-a": 3, "zone-b": 5, "trend": 6, "alternating": 14, "hugging": 15,
          "avoid-centre": 8}
# the numbers each rule's words must state (the pattern as published)
NUMBERS = {"beyond-limits": (), "zone-a": ("2 of 3", "2 sigma"), "zone-b": ("4 of 5", "1 sigma"),
           "trend": ("6 points",), "alternating": ("14 points",), "hugging": ("15 points", "1 sigma"),
           "avoid-centre": ("8 points", "1 sigma")}


@pytest.mark.parametrize("name,run", [("western-electric", 8), ("nelson", 9)])
def test_the_rule_table_states_each_published_pattern(name, run):
    """Each rule of a set has its id, the published window and words that state the pattern's numbers in
    plain lower-case words (they are shown in the signals list and the reports).

    Kills the 101 mutants of the rule table (``_rules``): a changed window, an id or a dictionary key
    altered, words altered (``XX…XX`` or upper case) and ``RuleSet.rule`` building the table without the
    set's run length."""
    rs = R.resolve(name)
    assert rs.same_side == run
    for rid in rs.ids:
        rule = rs.rule(rid)
        assert rule.id == rid
        assert rule.window == (run if rid == "same-side" else WINDOW[rid]), rid
        assert re.fullmatch(r"[a-z0-9][a-z0-9 ,]*[a-z]", rule.words), rule.words
        for words in NUMBERS.get(rid, (f"{run} points in a row",)):
            assert words in rule.words, (rid, rule.words)
    assert "beyond a control limit" in rs.rule("beyond-limits").words
    assert "same side" in rs.rule("zone-a").words and "same side" in rs.rule("zone-b").words
    # the one-side run's words follow the set's run length, the others do not depend on it
    if name == "nelson":
        for rid in ("trend", "alternating", "hugging", "avoid-centre"):
            assert "in a row" in rs.rule(rid).words
        assert "rising or falling" in rs.rule("trend").words
        assert "alternating up and down" in rs.rule("alternating").words
        assert "within 1 sigma of the centre line" in rs.rule("hugging").words
        assert "more than 1 sigma from the centre line" in rs.rule("avoid-centre").words
        assert "on one side of the centre line" in rs.rule("same-side").words


def test_rule_set_names_round_trip_and_custom_lists_default_to_the_nelson_run():
    """A resolved set's name resolves to the same set (the name is what files and the command line carry);
    a custom list runs ``same-side`` over 9 points unless told (``resolve``'s documented default).

    Kills the name set to None or joined with ``XX,XX`` (the round trip then fails), the set name of a
    named set dropped, the custom default 9 changed to None or 10, and ``continue`` → ``break`` on an empty
    item (``"trend,,zone-a"`` lost zone-a)."""
    for spec in ("western-electric", "nelson", "limits-only", "trend,beyond-limits", "zone-a, trend"):
        rs = R.resolve(spec)
        again = R.resolve(rs.name)
        assert (again.ids, again.same_side) == (rs.ids, rs.same_side), spec
    assert R.resolve("western-electric").name == "western-electric"
    assert R.resolve("trend,beyond-limits").name == "beyond-limits,trend"
    assert R.resolve("same-side").same_side == 9
    assert R.resolve("trend,,zone-a").ids == ("zone-a", "trend")


def test_bad_rule_lists_are_refused_with_the_choices_named():
    """An empty list says so; ``same-side:9:10`` is not a run length; an unknown rule names every set and
    every rule (bad input: one clear line, README "Bad input").

    Kills ``spec or "XXXX"`` (an empty list then reads as an unknown rule), ``split(":")`` without its limit,
    ``rsplit`` and a limit of 2 (each takes 9 or 10 from ``9:10``), and the list of choices set to None or
    joined with other separators."""
    for empty in ("", None, " , "):
        with pytest.raises(WorkbenchError, match="empty rule list"):
            R.resolve(empty)
    with pytest.raises(WorkbenchError, match="bad run length"):
        R.resolve("same-side:9:10")
    with pytest.raises(WorkbenchError) as err:
        R.resolve("zone-q")
    sets = ", ".join(("western-electric", "nelson", "limits-only"))
    rules = ", ".join(("beyond-limits", "zone-a", "zone-b", "same-side", "trend", "alternating", "hugging",
                       "avoid-centre"))
    assert f"(sets: {sets}; rules: {rules})" in str(err.value)
