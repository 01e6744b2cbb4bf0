"""The textbook X̄-S form for unequal subgroup sizes: pooled s̄ with A3(nᵢ), B3(nᵢ), B4(nᵢ).

Source: Montgomery, *Introduction to Statistical Quality Control*, ch. 6, the X̄ and s charts with
variable sample size, worked on the piston-ring inside diameters of Table 6.4 (25 samples of 3 to 5
rings). Published: x̿ = 74.001, s̄ = 0.0103; for n = 5 the X̄ limits 74.015 / 73.986 and the s chart
UCL 0.0215; for n = 3 the X̄ limits 74.021 / 73.981 and s UCL 0.0264 [from memory; the readings of
samples 1–22 checked against a transcription of the table, 23–25 from memory; every published figure
arithmetic-checked]. Factors from their definitions: A3 = 3/(c4√n), B4 = 1 + 3√(1 − c4²)/c4
[definition, /work/shared/REFERENCES.md].
"""
from __future__ import annotations

import math

import numpy as np
import pytest

from tests.conftest import make_dataset
from workbench.core.analysis import analyse, capability_sigma
from workbench.core.model import Settings, Spec

ROWS = [
    [74.030, 74.002, 74.019, 73.992, 74.008], [73.995, 73.992, 74.001], [73.988, 74.024, 74.021, 74.005, 74.002],
    [74.002, 73.996, 73.993, 74.015, 74.009], [73.992, 74.007, 74.015, 73.989, 74.014],
    [74.009, 73.994, 73.997, 73.985], [73.995, 74.006, 73.994, 74.000], [73.985, 74.003, 73.993, 74.015, 73.988],
    [74.008, 73.995, 74.009, 74.005], [73.998, 74.000, 73.990, 74.007, 73.995],
    [73.994, 73.998, 73.994, 73.995, 73.990], [74.004, 74.000, 74.007, 74.000, 73.996], [73.983, 74.002, 73.998],
    [74.006, 73.967, 73.994, 74.000, 73.984], [74.012, 74.014, 73.998], [74.000, 73.984, 74.005, 73.998, 73.996],
    [73.994, 74.012, 73.986, 74.005], [74.006, 74.010, 74.018, 74.003, 74.000],
    [73.984, 74.002, 74.003, 74.005, 73.997], [74.000, 74.010, 74.013], [73.982, 74.001, 74.015, 74.005, 73.996],
    [74.004, 73.999, 73.990, 74.006, 74.009], [74.010, 73.989, 73.990, 74.009, 74.014],
    [74.015, 74.008, 73.993, 74.000, 74.010], [73.982, 73.984, 73.995, 74.017, 74.013],
]


def _c4(n):   # [definition]
    return math.sqrt(2.0 / (n - 1)) * math.exp(math.lgamma(n / 2) - math.lgamma((n - 1) / 2))


@pytest.fixture(scope="module")
def a():
    values = np.full((25, 5), np.nan)
    for i, r in enumerate(ROWS):
        values[i, :len(r)] = r
    return analyse(make_dataset(values), Settings(chart="xbar-s", sigma="pooled-sbar", spec=Spec(lsl=73.95,
                                                                                                  usl=74.05)))


def test_montgomery_variable_sample_size_example(a):
    n = a.n
    assert sorted(set(n.tolist())) == [3, 4, 5]
    xbar, s = a.charts
    assert a.center == pytest.approx(74.001, abs=5e-4)              # printed to 3 dp [from memory]
    assert a.sigma_within == pytest.approx(0.0103, abs=5e-5)       # s̄ [from memory]
    five, three = int(np.flatnonzero(n == 5)[0]), int(np.flatnonzero(n == 3)[0])
    assert xbar.ucl[five] == pytest.approx(74.015, abs=1e-3) and xbar.lcl[five] == pytest.approx(73.986, abs=1e-3)
    assert xbar.ucl[three] == pytest.approx(74.021, abs=1e-3) and xbar.lcl[three] == pytest.approx(73.981, abs=1e-3)
    assert s.ucl[five] == pytest.approx(0.0215, abs=1e-4) and s.ucl[three] == pytest.approx(0.0264, abs=1e-4)
    assert s.lcl[five] == 0.0 and s.center[three] == pytest.approx(a.sigma_within)   # centre s̄ for every n


def test_limits_are_a3_and_b4_times_the_pooled_sbar(a):
    """Against the definitions, computed here from the readings (not from the code's constants)."""
    n = np.array([len(r) for r in ROWS])
    sd = np.array([np.std(r, ddof=1) for r in ROWS])
    sbar = math.sqrt(np.sum((n - 1) * sd ** 2) / (n.sum() - n.size))
    grand = sum(sum(r) for r in ROWS) / n.sum()
    xbar, s = a.charts
    for i, k in enumerate(n):
        a3 = 3.0 / (_c4(k) * math.sqrt(k))
        b4 = 1.0 + 3.0 * math.sqrt(1.0 - _c4(k) ** 2) / _c4(k)
        assert xbar.ucl[i] == pytest.approx(grand + a3 * sbar, abs=1e-9)
        assert xbar.lcl[i] == pytest.approx(grand - a3 * sbar, abs=1e-9)
        assert s.ucl[i] == pytest.approx(b4 * sbar, abs=1e-9)


def test_capability_uses_an_unbiased_sigma(a):
    d = int(np.sum(a.n - 1))
    assert capability_sigma(a) == pytest.approx(a.sigma_within / _c4(d + 1), rel=1e-12)
    pooled = analyse(a.dataset, Settings(chart="xbar-s", sigma="pooled"))
    assert capability_sigma(a) == pytest.approx(pooled.sigma_within, rel=1e-12)   # the same σ as `pooled`
