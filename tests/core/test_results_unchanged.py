"""The faster paths give the results of the plain computations they replace.

References are the definitions computed the obvious way with numpy (row reductions, per-stream
means and SDs) and scipy.stats (f_oneway, kruskal), on the bundled demo and on seeded data.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from tests.conftest import make_dataset
from workbench.core.analysis import analyse, comparison_of
from workbench.core.charts.variables import subgroup_stats
from workbench.core.data.reader import load
from workbench.core.model import Exclusion, Settings

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "filler_line3.csv"


@pytest.mark.parametrize("k", [1, 2, 3, 5, 7, 8, 12])
def test_subgroup_stats_are_numpys_row_reductions_bit_for_bit(k):
    # [definition] mean, sample SD (ddof=1) and range of each row, as numpy computes them
    v = np.round(np.random.default_rng(k).normal(500, 0.5, (3001, k)), 2)
    s = subgroup_stats(v)
    np.testing.assert_array_equal(s.mean, v.mean(axis=1))
    if k > 1:
        np.testing.assert_array_equal(s.sd, v.std(axis=1, ddof=1))
        np.testing.assert_array_equal(s.range, v.max(axis=1) - v.min(axis=1))
    else:
        assert np.isnan(s.sd).all() and np.isnan(s.range).all()
    assert (s.n == k).all()


def _plain_comparison(values, excluded_cells):
    groups = [col[~ex & ~np.isnan(col)] for col, ex in zip(values.T, excluded_cells.T)]
    return groups, [g.mean() for g in groups], [g.std(ddof=1) for g in groups]


@pytest.mark.parametrize("exclusions", [(), ("2026-03-03 08:00",), ("2026-03-02 12:30:H2",)])
def test_stream_comparison_on_the_demo_equals_the_definitions(exclusions):
    ds = load(DEMO)
    excl = [Exclusion.parse(e, ds.streams) for e in exclusions]
    a = analyse(ds, Settings(), excl)
    cmp_ = comparison_of(a)
    groups, means, sds = _plain_comparison(ds.values, np.asarray(a.excluded_cells))
    np.testing.assert_allclose(cmp_.means, means, rtol=1e-12)
    np.testing.assert_allclose(cmp_.sds, sds, rtol=1e-12)
    assert cmp_.counts == tuple(g.size for g in groups)
    # [printed] one-way ANOVA and Kruskal & Wallis (1952), as scipy.stats computes them
    assert cmp_.anova_f == pytest.approx(stats.f_oneway(*groups).statistic, rel=1e-12)
    assert cmp_.kruskal_h == pytest.approx(stats.kruskal(*groups).statistic, rel=1e-10)
    assert "counted" in cmp_.kruskal_ranks  # the demo's readings have a resolution


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_stream_comparison_on_seeded_data_with_missing_cells(seed):
    rng = np.random.default_rng(seed)
    v = rng.normal(10, 1, (400, 4))  # full precision: the ranks come from the sort
    v[rng.random(v.shape) < 0.03] = np.nan
    a = analyse(make_dataset(v), Settings(), [Exclusion("7"), Exclusion("9", "S3")])
    cmp_ = comparison_of(a)
    groups, means, sds = _plain_comparison(v, np.asarray(a.excluded_cells))
    np.testing.assert_allclose(cmp_.means, means, rtol=1e-12)
    np.testing.assert_allclose(cmp_.sds, sds, rtol=1e-12)
    assert cmp_.kruskal_h == pytest.approx(stats.kruskal(*groups).statistic, rel=1e-10)
    assert "sort" in cmp_.kruskal_ranks


def test_signal_list_of_the_report_is_signal_json_of_each_signal():
    # [definition] the JSON report lists signal_json(a, s) for every signal, in the table's order
    from workbench.core.analysis import freeze
    from workbench.core.report import signal_json, signals_json
    ds = load(DEMO)
    a = analyse(ds, Settings(rules="nelson"))
    assert len(a.signals) > 3
    states = {a.signals[0].key: "explained", a.signals[2].key: "no-cause-found"}
    for st in (None, states):
        assert signals_json(a, st) == [signal_json(a, s, st) for s in a.signals]
    rng = np.random.default_rng(8)
    v = np.round(rng.normal(10, 1, (3000, 5)), 1)
    v[2500:2510] += 1.5
    first = analyse(make_dataset(v[:2000]), Settings(rules="nelson"))
    later = analyse(make_dataset(v), Settings(rules="nelson"), frozen=freeze(first))
    got = signals_json(later, {})
    assert got == [signal_json(later, s, {}) for s in later.signals]
    assert {d["phase"] for d in got} == {1, 2} and all(d["state"] == "open" for d in got)


def test_iterating_the_signal_table_makes_the_signals_indexing_makes():
    # [definition] a SignalTable behaves like the tuple of its Signals, whichever way they are made
    from workbench.core.charts.signals import SignalTable
    rng = np.random.default_rng(9)
    v = np.round(rng.normal(10, 1, (3000, 5)), 1)
    v[1200:1215] += 1.2
    a = analyse(make_dataset(v), Settings(rules="nelson"))
    table = a.signals
    assert len(table) > 20
    fresh = SignalTable(list(table.groups), a.dataset.labels)
    by_index = [fresh[i] for i in range(len(fresh))]
    assert list(table) == by_index
    partly = SignalTable(list(table.groups), a.dataset.labels)
    assert partly[5] == by_index[5]  # one made before the rest
    assert list(partly) == by_index and partly[5] is list(partly)[5]
