"""Expected firing points on in-control data: the formulas against independent references and simulation."""
from __future__ import annotations

import functools
import math

import numpy as np
import pytest
from scipy import stats

from tests.conftest import make_dataset
from workbench.core.analysis import analyse
from workbench.core.charts.expected import alternating_probability
from workbench.core.model import Dataset, Exclusion, Layout, Settings
from workbench.core.rule_summary import rule_summary

KNOWN = Settings(chart="imr", sigma="known", known_mean=0.0, known_sigma=1.0, rules="nelson")
Q1, Q2 = stats.norm.sf(1), stats.norm.sf(2)
# Exact per-point probabilities on iid N(0, 1) points once the rule's window is full, from the pattern
# definitions of the Western Electric Handbook (1956) and Nelson (1984) [definition]; Φ from scipy.stats [reference
# library]; (probability, first 0-based point where the full window exists, {earlier point: probability}).
EXACT = {
    "beyond-limits": (2 * stats.norm.sf(3), 0, {}),                     # 2Φ(−3)
    "zone-a": (2 * Q2 * (1 - (1 - Q2) ** 2), 2, {1: 2 * Q2 ** 2}),
    "zone-b": (2 * Q1 * (4 * Q1 ** 3 * (1 - Q1) + Q1 ** 4), 4, {3: 2 * Q1 ** 4}),
    "same-side": (2 * 0.5 ** 9, 8, {}),
    "trend": (2 / math.factorial(6), 5, {}),
    "alternating": (2 * 199_360_981 / math.factorial(14), 13, {}),  # A(14) = 199,360,981, OEIS A000111 [from memory]
    "hugging": ((1 - 2 * Q1) ** 15, 14, {}),
    "avoid-centre": ((2 * Q1) ** 8, 7, {}),
}


def test_alternating_permutations_counted_exactly():
    # A(5) = 16 and A(14) = 199,360,981 (Euler zigzag numbers, OEIS A000111) [from memory]
    assert alternating_probability(5) == pytest.approx(2 * 16 / math.factorial(5), rel=1e-15)
    assert alternating_probability(14) == pytest.approx(EXACT["alternating"][0], rel=1e-15)


def test_expected_column_is_the_exact_probability_times_the_points():
    n = 1_000
    a = analyse(make_dataset(np.zeros(n) + np.arange(n) % 3 * 0.1), KNOWN)
    rows = {(r.chart, r.rule): r for r in rule_summary(a)}
    for rule, (p, first, head) in EXACT.items():
        r = rows[("i", rule)]
        assert r.points == n
        assert r.expected == pytest.approx(p * (n - first) + sum(head.values()), rel=1e-9), rule
    # an excluded point leaves the sequence: one point fewer [definition]
    b = analyse(a.dataset, KNOWN, [Exclusion("7")])
    r = {(r.chart, r.rule): r for r in rule_summary(b)}[("i", "beyond-limits")]
    assert r.points == n - 1 and r.expected == pytest.approx(EXACT["beyond-limits"][0] * (n - 1), rel=1e-9)


def _batch_se(positions: np.ndarray, n: int, batches: int = 200) -> float:
    hits = np.zeros(n)
    hits[positions] = 1
    means = hits.reshape(batches, -1).sum(axis=1)
    return float(means.std(ddof=1) * math.sqrt(batches))


@functools.lru_cache(maxsize=1)
def _simulated():
    n = 200_000
    a = analyse(make_dataset(np.random.default_rng(20261202).standard_normal(n)), KNOWN)
    return n, a, {r.rule: r for r in rule_summary(a) if r.chart == "i"}


@pytest.mark.parametrize("rule", list(EXACT))
def test_expected_firing_points_match_simulated_in_control_data(rule):
    n, a, rows = _simulated()
    row = rows[rule]
    fired = a.location.flags[rule]
    assert row.firing_points == fired.size
    # firings of one rule cluster, so the standard error comes from batch totals [common practice]
    se = _batch_se(fired, n)
    assert abs(row.firing_points - row.expected) < 4 * se, (row.firing_points, row.expected, se)


def test_range_chart_beyond_limits_uses_the_range_distribution():
    m, k = 40_000, 5
    x = np.random.default_rng(7).standard_normal((m, k))
    a = analyse(make_dataset(x), Settings(chart="xbar-r", sigma="known", known_mean=0.0, known_sigma=1.0))
    row = next(r for r in rule_summary(a) if r.chart == "r")
    ucl = a.spread.ucl[0]  # D4·d2·σ with σ = 1; D3 = 0 for n = 5, so no lower limit [printed]
    p = stats.studentized_range.sf(ucl, k, np.inf)  # the range of k normal readings [reference library]
    assert row.expected == pytest.approx(p * m, rel=1e-6)
    assert abs(row.firing_points - row.expected) < 4 * math.sqrt(row.expected)  # independent subgroups: Poisson


def test_p_chart_beyond_limits_uses_binomial_tails():
    m, size, p = 5_000, 100, 0.08
    counts = np.random.default_rng(3).binomial(size, p, m).astype(float)
    ds = Dataset(path="p.csv", sha256="0" * 64, rows=m, size_bytes=0, layout=Layout("individuals"),
                 labels=np.array([str(i + 1) for i in range(m)]), streams=("x",), values=None,
                 counts=counts[:, None], sizes=np.full((m, 1), float(size)))
    a = analyse(ds, Settings(chart="p"))
    row = next(r for r in rule_summary(a) if r.chart == "p")
    pbar, ucl, lcl = a.location.center[0], a.location.ucl[0], a.location.lcl[0]
    ref = stats.binom.sf(math.floor(ucl * size), size, pbar) + stats.binom.cdf(math.ceil(lcl * size) - 1, size, pbar)
    assert row.expected == pytest.approx(ref * m, rel=1e-9)  # [reference library]
    assert abs(row.firing_points - row.expected) < 4 * math.sqrt(row.expected)


def test_states_are_counted_per_rule():
    x = np.r_[np.zeros(30), 9.0, np.zeros(30), -9.0]
    a = analyse(make_dataset(x), KNOWN)
    keys = [s.key for s in a.signals if s.rule == "beyond-limits" and s.chart == "i"]
    assert len(keys) == 2
    row = next(r for r in rule_summary(a, lambda k: "explained" if k == keys[0] else "open")
               if r.rule == "beyond-limits" and r.chart == "i")
    assert (row.signals, row.firing_points, row.open, row.explained, row.excluded) == (2, 2, 1, 1, 0)
