"""Size of a departure from normal, not only its p-value.

Sources: the 0.135 % and 99.865 % points are Φ(∓3) [definition]; the Student t quantiles come
from scipy.stats.t (an implementation outside the project) and the scale of a t(ν) reading is
√(ν/(ν−2)) [definition].  The threshold (2.5 % of the tolerance) is the project's stated rule.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from workbench.core.capability.assess import assess
from workbench.core.capability.departure import MATTERS, departure, quantiles
from workbench.core.capability.nonnormal import fit_models
from workbench.core.model import Spec


def test_large_sample_from_t30_rejects_yet_keeps_the_normal_method():
    rng = np.random.default_rng(30)
    x = 10.0 + stats.t.rvs(30, size=1_000_000, random_state=rng)
    cap = assess(x, None, "mrbar", Spec(lsl=5.5, usl=14.5, method="auto"))
    assert cap.normality.ad_p < 0.05 and not cap.normality.passed        # p rejects
    d = cap.departure
    assert d is not None and d.share is not None and d.share < MATTERS and d.matters is False
    assert cap.method == "normal" and cap.headline == "Ppk"
    # the size it reports is a real distance: the true t(30) tail point lies beyond the normal one,
    # and no fitted family may claim more than the true departure of the data's own tails [definition]
    true_gap = stats.t.ppf(0.99865, 30) - 3.0 * np.sqrt(30 / 28)
    assert 0 < true_gap / 9.0 < MATTERS                                   # about 1.8 % of the tolerance
    assert abs(d.high) <= true_gap * 1.2


def test_a_skewed_process_departs_by_more_than_the_threshold():
    x = np.random.default_rng(31).lognormal(0.0, 0.35, 2000)
    cap = assess(x, None, "mrbar", Spec(lsl=0.2, usl=4.0, method="auto"))
    assert cap.departure.matters and cap.method in ("percentile", "box-cox")


def test_departure_is_measured_against_the_normal_candidate():
    x = np.random.default_rng(32).gamma(4.0, 1.0, 800)
    fit = fit_models(x, None, ("normal", "gamma"))
    d = departure(fit, 0.0, 16.0)
    g = dict(next(c for c in fit.candidates if c.name == "gamma").params)
    nrm = dict(next(c for c in fit.candidates if c.name == "normal").params)
    p = stats.norm.cdf([-3.0, 3.0])                                       # [definition]
    assert d.low == pytest.approx(stats.gamma.ppf(p[0], g["a"], 0, g["scale"]) - (nrm["mean"] - 3 * nrm["sd"]))
    assert d.high == pytest.approx(stats.gamma.ppf(p[1], g["a"], 0, g["scale"]) - (nrm["mean"] + 3 * nrm["sd"]))
    assert d.share == pytest.approx(max(abs(d.low), abs(d.high)) / 16.0)
    # one-sided: only the limited side counts, against twice the distance from the mean to the limit
    up = departure(fit, None, 16.0)
    assert up.share == pytest.approx(abs(d.high) / (2 * (16.0 - nrm["mean"])))
    assert quantiles("normal", (("mean", 0.0), ("sd", 1.0)), 0.0, [0.5])[0] == 0.0
