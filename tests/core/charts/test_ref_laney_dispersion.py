"""Laney's correction is offered only when both conditions hold: sigma_z > 1.5 AND the chi-square
dispersion test rejects at the 1 % level (the rule stated in charts/attribute.py).

References computed here: sigma_z = mean |Δz| / 1.128 [printed: Laney (2002), Quality Engineering 14(4),
average moving range of the z-scores over d2(2) = 1.128]; X² = Σ zᵢ² on m − 1 degrees of freedom, upper
tail from scipy.stats.chi2 [definition: Pearson's binomial index-of-dispersion test].  The counts are
constructed so that p̄ = 0.1 exactly with n = 400 per subgroup, so σ of a count is √(400·0.1·0.9) = 6 and
each zᵢ is (countᵢ − 40)/6 [definition of the p chart's z-score].
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from workbench.core.charts.attribute import attribute_chart

N, M = 400, 30


def counts_for(z: np.ndarray) -> np.ndarray:
    return 40.0 + 6.0 * z


def reference(z: np.ndarray) -> tuple[float, float]:
    return float(np.mean(np.abs(np.diff(z))) / 1.128), float(stats.chi2.sf(np.sum(z * z), z.size - 1))


def run(z: np.ndarray):
    return attribute_chart("p", counts_for(z), np.full(M, N), np.zeros(M, bool), laney="auto")


def test_sigma_z_above_1_5_but_dispersion_not_significant_is_not_offered():
    """Mutation killed: the dispersion-test condition dropped (sigma_z > 1.5 alone offers Laney).
    Data: z alternating ±1 — large moving ranges (sigma_z = 2/1.128 = 1.77) but Σz² = 30 on 29 df."""
    z = np.tile([1.0, -1.0], M // 2)
    sigma_z, p = reference(z)
    assert sigma_z > 1.5 and p > 0.01  # the data pass one condition and fail the other
    _, info = run(z)
    assert info.center == pytest.approx(0.1, abs=1e-15)
    assert info.sigma_z == pytest.approx(sigma_z, rel=1e-12)
    assert info.dispersion_p == pytest.approx(p, rel=1e-9)
    assert not info.laney_recommended and not info.laney_used
    assert not any("Laney" in w for w in info.warnings)


def test_dispersion_significant_but_sigma_z_small_is_not_offered():
    """Mutation killed: the sigma_z condition dropped (the dispersion test alone offers Laney).
    Data: a step from z = −2 to z = +2 — Σz² = 120 on 29 df rejects, but one jump in 29 moving ranges
    gives sigma_z = (4/29)/1.128 = 0.12."""
    z = np.r_[np.full(M // 2, -2.0), np.full(M // 2, 2.0)]
    sigma_z, p = reference(z)
    assert sigma_z < 1.5 and p < 0.01
    _, info = run(z)
    assert info.sigma_z == pytest.approx(sigma_z, rel=1e-12)
    assert info.dispersion_p == pytest.approx(p, rel=1e-9)
    assert not info.laney_recommended


def test_both_conditions_offer_the_correction():
    """The control case: z alternating ±2 passes both (sigma_z = 3.55, Σz² = 120), so the test above
    cannot pass by never offering."""
    z = np.tile([2.0, -2.0], M // 2)
    sigma_z, p = reference(z)
    assert sigma_z > 1.5 and p < 0.01
    chart, info = run(z)
    assert info.laney_recommended and not info.laney_used
    assert any("Laney p′ limits are offered" in w for w in info.warnings)
    # auto keeps the plain limits: p̄ ± 3√(p̄(1 − p̄)/n) = 0.1 ± 0.045 [definition]
    assert chart.ucl[0] == pytest.approx(0.145, abs=1e-12)
