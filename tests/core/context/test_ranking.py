"""The context ranking against scipy.stats and the Benjamini–Hochberg procedure written from its definition."""
from __future__ import annotations

import dataclasses

import numpy as np
import pytest
from scipy import stats

from tests.conftest import make_dataset
from workbench.core.analysis import analyse
from workbench.core.context.ranking import FDR, MIN_LEVEL, bh_adjust, context_of, rank
from workbench.core.model import Exclusion


def _with_context(values, **columns):
    ds = make_dataset(values)
    return dataclasses.replace(ds, extras={k: np.asarray(v, dtype=str) for k, v in columns.items()})


def _bh_reference(p, q):
    """Benjamini & Hochberg (1995), J. R. Stat. Soc. B 57:289–300 [definition]: order the m p-values
    p(1) ≤ … ≤ p(m); let k be the largest i with p(i) ≤ i·q/m; reject the hypotheses of p(1) … p(k)."""
    m = len(p)
    order = sorted(range(m), key=lambda i: p[i])
    k = 0
    for rank_, i in enumerate(order, start=1):
        if p[i] <= rank_ * q / m:
            k = rank_
    return {order[j] for j in range(k)}


def _adjusted_reference(p):
    """The BH adjusted p-value [definition, same source]: p̃(i) = min over j ≥ i of min(1, m·p(j)/j)."""
    m = len(p)
    order = sorted(range(m), key=lambda i: p[i])
    out = [0.0] * m
    for pos, i in enumerate(order):
        out[i] = min(min(1.0, m * p[order[j]] / (j + 1)) for j in range(pos, m))
    return out


@pytest.mark.parametrize("seed", range(6))
def test_adjusted_p_values_and_rejections_follow_the_definition(seed):
    """Mutation killed: a step-down instead of step-up, a missing cap at 1, ranks counted from 0."""
    rng = np.random.default_rng(seed)
    p = np.r_[rng.uniform(0, 0.02, 3), rng.uniform(0, 1, 7), [0.01, 0.01]]  # ties included
    adj = bh_adjust(p)
    np.testing.assert_allclose(adj, _adjusted_reference(list(p)), rtol=0, atol=1e-12)
    for q in (0.05, 0.1, 0.2):
        assert {i for i in range(p.size) if adj[i] <= q} == _bh_reference(list(p), q)


def _demo_like(seed=3, m=60):
    rng = np.random.default_rng(seed)
    values = rng.normal(10.0, 1.0, (m, 4))
    values[30:45] += 0.8                                    # a step that the lot explains
    lot = np.where(np.arange(m) < 30, "A", np.where(np.arange(m) < 45, "B", "C"))
    shift = np.where((np.arange(m) // 6) % 2 == 0, "day", "night")
    who = rng.choice(["p", "q", "r"], m)
    return _with_context(values, lot=lot, shift=shift, who=who, serial=[f"S{i}" for i in range(m)],
                         line=["L3"] * m)


def test_each_column_equals_scipy_f_oneway_and_kruskal_by_level():
    """scipy.stats.f_oneway / scipy.stats.kruskal as the reference, on the X̄ values grouped by level in the
    test; η² = SS_between/SS_total and the level means in σ units from their definitions.
    Mutation killed: excluded subgroups kept in, η² over SS_within, the σ units without the centre line."""
    ds = _demo_like()
    a = analyse(ds, exclusions=[Exclusion("3"), Exclusion("40")])
    r = context_of(a)
    x = a.location.values
    keep = ~a.excluded_subgroups
    assert keep.sum() == 58 and r.used == 58
    cl, sigma = a.location.center[0], a.location.sigma[0]
    for col in ("lot", "shift", "who"):
        s = r.of(col)
        labels = ds.extras[col][keep]
        levels = list(dict.fromkeys(labels.tolist()))
        groups = [x[keep][labels == lv] for lv in levels]
        f, p = stats.f_oneway(*groups)
        h, pk = stats.kruskal(*groups)
        assert (s.f, s.p, s.h, s.p_kruskal) == pytest.approx((f, p, h, pk), rel=1e-12)
        allx = np.concatenate(groups)
        ss_b = sum(g.size * (g.mean() - allx.mean()) ** 2 for g in groups)
        assert s.eta2 == pytest.approx(ss_b / ((allx - allx.mean()) ** 2).sum(), rel=1e-12)
        assert [lv.value for lv in s.levels] == levels and [lv.subgroups for lv in s.levels] == [g.size for g in groups]
        assert [lv.sigmas for lv in s.levels] == pytest.approx([(g.mean() - cl) / sigma for g in groups], rel=1e-12)


def test_leads_are_the_bh_rejections_at_the_stated_fdr_and_come_first():
    ds = _demo_like()
    r = rank(analyse(ds))
    tested = [s for s in r.columns if not s.skipped]
    p = [s.p for s in tested]
    assert {s.column for s in r.leads} == {tested[i].column for i in _bh_reference(p, FDR)}   # BH (1995)
    assert r.columns[0].column == "lot" and r.columns[0].lead                                  # the planted step
    assert [s.p_adjusted for s in tested] == sorted(s.p_adjusted for s in tested)


def test_unusable_columns_are_skipped_with_the_rule_named():
    """A level per subgroup (an ID), one level, and levels with fewer than MIN_LEVEL subgroups are not tested."""
    r = rank(analyse(_demo_like()))
    assert r.of("serial").skipped.startswith("a level per subgroup")
    assert r.of("line").skipped == "one level"
    m = 30
    rare = ["a", "b"] * 2 + [f"x{i}" for i in range(m - 4)]       # many levels of one or two subgroups
    r2 = rank(analyse(_with_context(np.random.default_rng(1).normal(0, 1, (m, 3)), rare=rare)))
    assert r2.of("rare").skipped is not None and not r2.leads
    few = ["a"] * (m - 2) + ["b"] * 2                               # the second level has 2 < MIN_LEVEL subgroups
    assert MIN_LEVEL == 3
    r3 = rank(analyse(_with_context(np.random.default_rng(2).normal(0, 1, (m, 3)), few=few)))
    assert r3.of("few").skipped.startswith("too few subgroups per level")


def test_no_lead_on_pure_noise_columns_in_at_least_95_percent_of_seeded_runs():
    """In-control data with five context columns unrelated to it (random per subgroup, lots of random length,
    alternating crews): under the complete null Benjamini–Hochberg keeps the chance of any rejection at or
    below the FDR (Benjamini & Hochberg 1995, Theorem 1, independent tests) [definition].
    Mutation killed: no adjustment across columns (any of five p < 0.05 happens in about 20 % of runs)."""
    runs, with_lead = 300, 0
    for seed in range(runs):
        rng = np.random.default_rng([17, seed])
        m = 80
        values = rng.normal(50.0, 2.0, (m, 5))
        cuts = np.sort(rng.choice(np.arange(5, m - 5), 3, replace=False))
        ds = _with_context(values,
                           picker=rng.choice(["a", "b", "c"], m),
                           lot=np.searchsorted(cuts, np.arange(m), side="right").astype(str),
                           crew=((np.arange(m) // 10) % 2).astype(str),
                           bay=rng.choice(["left", "right"], m),
                           pallet=rng.choice([f"P{i}" for i in range(8)], m))
        with_lead += bool(rank(analyse(ds)).leads)
    assert with_lead / runs <= 0.05, with_lead
