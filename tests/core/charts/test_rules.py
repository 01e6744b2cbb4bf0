"""Run rules on constructed sequences and on simulated in-control data."""
import math

import numpy as np
import pytest
from scipy import stats

from workbench.core.charts import rules as R
from workbench.core.model import WorkbenchError
from workbench.core.charts.signals import group_firings


def fires(rule, x, same_side=8, lcl=-3.0, ucl=3.0, excluded=None):
    x = np.asarray(x, float)
    n = x.size
    rs = R.RuleSet(rule, (rule,), same_side)
    ex = np.zeros(n, bool) if excluded is None else np.asarray(excluded, bool)
    out = R.evaluate(x, np.zeros(n), np.ones(n), np.full(n, lcl), np.full(n, ucl), ex, rs)
    return out[rule].fired.tolist()


# Constructed sequences: the expected firings follow from the rule definitions in the issue and in
# Nelson (1984) / Western Electric (1956) [definition]; zones in units of sigma with centre 0.

# --- beyond-limits: strictly outside; a point exactly on a limit does not fire --------------------
def test_beyond_limits_strict():
    assert fires("beyond-limits", [0, 3.0, -3.0, 3.0001, -3.5, 2.9]) == [3, 4]


# --- zone-a: 2 of 3 beyond 2 sigma, same side; fires at the completing point -----------------------
def test_zone_a_patterns():
    assert fires("zone-a", [0, 2.5, 0, 2.1, 0]) == [3]          # 2 of 3 (gap of one)
    assert fires("zone-a", [0, 2.5, 2.1, 0, 0]) == [2]          # 2 in a row
    assert fires("zone-a", [0, 2.5, -2.5, 0, 0]) == []          # opposite sides
    assert fires("zone-a", [0, 2.0, 2.0, 0]) == []              # exactly 2 sigma is not beyond
    assert fires("zone-a", [2.5, 0, 0, 2.5]) == []              # 2 of 4 is not 2 of 3
    assert fires("zone-a", [0, -2.2, -0.5, -2.9]) == [3]


def test_zone_b_patterns():
    assert fires("zone-b", [1.5, 1.2, 0.2, 1.1, 1.9]) == [4]
    assert fires("zone-b", [1.5, 1.2, 1.1, 1.9, 1.3]) == [3, 4]  # completes at 4th point, continues
    assert fires("zone-b", [1.5, 1.2, -1.1, 1.9, 1.3]) == [4]   # 4 of 5 above, one below
    assert fires("zone-b", [1.5, -1.2, -1.1, 1.9, 1.3]) == []
    assert fires("zone-b", [1.0, 1.2, 1.1, 1.9, 1.3]) == [4]     # 1.0 exactly is not beyond 1 sigma


def test_same_side_run_and_centre_line_breaks():
    x = [0.1] * 8
    assert fires("same-side", x, 8) == [7]
    assert fires("same-side", x, 9) == []
    assert fires("same-side", [0.1] * 4 + [0.0] + [0.1] * 4, 8) == []  # a point on the centre breaks the run
    assert fires("same-side", [-0.2] * 10, 9) == [8, 9]


def test_trend_strict_and_ties():
    assert fires("trend", [0, 1, 2, 3, 4, 5]) == [5]
    assert fires("trend", [0, 1, 2, 2, 4, 5, 6]) == []        # a tie breaks the trend
    assert fires("trend", [5, 4, 3, 2, 1, 0, -1]) == [5, 6]
    assert fires("trend", [0, 1, 2, 3, 4]) == []


def test_alternating():
    up_down = [0.5 if i % 2 else -0.5 for i in range(14)]
    assert fires("alternating", up_down) == [13]
    assert fires("alternating", up_down[:13]) == []
    broken = list(up_down)
    broken[7] = broken[6]  # a tie breaks the alternation
    assert fires("alternating", broken) == []


def test_hugging_and_avoid_centre():
    assert fires("hugging", [0.5] * 15) == [14]
    assert fires("hugging", [0.5] * 14 + [1.0]) == []            # exactly 1 sigma is not within
    assert fires("avoid-centre", [1.5, -1.5] * 4) == [7]
    assert fires("avoid-centre", [1.5, -1.5, 1.0, -1.5, 1.5, -1.5, 1.5, -1.5]) == []


def test_excluded_points_leave_the_sequence():
    x = [0.1] * 4 + [-5] + [0.1] * 4
    ex = [False] * 4 + [True] + [False] * 4
    assert fires("same-side", x, 8, excluded=ex) == [8]
    assert fires("beyond-limits", x, excluded=ex) == []


def test_grouping_adjacent_firings_into_one_signal():
    x = np.array([0.1] * 12, float)
    rs = R.RuleSet("same-side", ("same-side",), 8)
    n = x.size
    f = R.evaluate(x, np.zeros(n), np.ones(n), np.full(n, -3.0), np.full(n, 3.0), np.zeros(n, bool), rs)
    fr = f["same-side"]
    g = group_firings("i", "same-side", "", np.searchsorted(fr.index, fr.fired), fr.index, fr.members, 8)
    assert g.first.tolist() == [0] and g.last.tolist() == [11]
    assert g.points.tolist() == list(range(12)) and g.fired.tolist() == [7, 8, 9, 10, 11]


def test_grouping_keeps_separate_patterns_apart_and_members_only():
    # zone-a firings at 3 and 9 are far apart: two signals, each made of its zone-A points only
    x = np.array([0, 2.5, 0, 2.1, 0, 0, 0, -2.2, -2.4, 0, 0], float)
    rs = R.RuleSet("zone-a", ("zone-a",), 8)
    n = x.size
    fr = R.evaluate(x, np.zeros(n), np.ones(n), np.full(n, -3.0), np.full(n, 3.0), np.zeros(n, bool), rs)["zone-a"]
    g = group_firings("i", "zone-a", "", np.searchsorted(fr.index, fr.fired), fr.index, fr.members, 3)
    assert g.first.tolist() == [1, 7] and g.last.tolist() == [3, 8]
    assert g.points.tolist() == [1, 3, 7, 8] and g.point_ptr.tolist() == [0, 2, 4]


def test_rule_sets_resolve():
    assert R.resolve("western-electric").ids == ("beyond-limits", "zone-a", "zone-b", "same-side")
    assert R.resolve("western-electric").same_side == 8
    assert R.resolve("nelson").same_side == 9 and len(R.resolve("nelson").ids) == 8
    assert R.resolve("trend,beyond-limits").ids == ("beyond-limits", "trend")
    assert R.resolve("same-side:7").same_side == 7
    with pytest.raises(WorkbenchError):
        R.resolve("zone-q")


# --- simulated in-control data: firing rate per point equals the exact window probability -------
def _alternating_probability(n_points: int) -> float:
    # Probability that n iid continuous points alternate (either way) = 2·A(n)/n!, A the Euler zigzag
    # numbers (Andre's theorem) [definition], computed here by the Entringer/boustrophedon recursion.
    row = [1]
    for _ in range(n_points):
        new = [0]
        for v in reversed(row):
            new.append(new[-1] + v)
        row = new
    return 2 * row[-1] / math.factorial(n_points)


# Exact per-point firing probabilities on iid N(0,1) points, derived from the pattern definitions of the
# Western Electric Handbook (1956) and Nelson (1984) [definition]; Φ from scipy.stats.norm (reference library).
P1, P2 = stats.norm.sf(1), stats.norm.sf(2)
EXACT = {
    "beyond-limits": 2 * stats.norm.sf(3),                         # 2Φ(−3) [definition]
    "zone-a": 2 * P2 * (1 - (1 - P2) ** 2),                        # completing point in A, ≥1 of other 2
    "zone-b": 2 * P1 * (4 * P1 ** 3 * (1 - P1) + P1 ** 4),         # completing point in B+, ≥3 of other 4
    "same-side": 2 * 0.5 ** 9,                                     # Nelson run of 9
    "trend": 2 / math.factorial(6),                                # 2/6! [definition]
    "alternating": _alternating_probability(14),
    "hugging": (1 - 2 * P1) ** 15,                                 # 15 in a row with |z| < 1
    "avoid-centre": (2 * P1) ** 8,                                 # 8 in a row with |z| > 1
}


def test_alternating_probability_known_value():
    # Euler zigzag number A(5) = 16 -> probability 2·16/120 (OEIS A000111) [definition]
    assert _alternating_probability(5) == pytest.approx(32 / 120)


@pytest.mark.parametrize("rule", list(EXACT))
def test_firing_rate_on_in_control_normal_data(rule):
    rng = np.random.default_rng(20261202)
    n = 1_000_000
    x = rng.standard_normal(n)
    rs = R.RuleSet("nelson", R.RULE_IDS, 9)
    f = R.evaluate(x, np.zeros(n), np.ones(n), np.full(n, -3.0), np.full(n, 3.0), np.zeros(n, bool), rs)
    hits = np.zeros(n)
    hits[f[rule].fired] = 1
    # firings overlap, so the standard error comes from batch means (200 batches of 5,000)
    batches = hits.reshape(200, -1).mean(axis=1)
    se = batches.std(ddof=1) / math.sqrt(batches.size)
    assert abs(hits.mean() - EXACT[rule]) < 4 * se, (hits.mean(), EXACT[rule], se)


def test_short_sequences_do_not_break_the_rules():
    # fewer points than any window: nothing fires and nothing fails
    for n in (0, 1, 2):
        for rule in R.RULE_IDS:
            assert fires(rule, [0.5] * n) == []
