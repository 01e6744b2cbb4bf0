"""Count charts: frozen limits for Phase II keep the rate and follow each new sample size."""
import numpy as np
import pytest

from workbench.core.analysis import analyse, freeze
from workbench.core.model import Dataset, Layout, Settings


def _counts(counts, sizes):
    m = len(counts)
    return Dataset(path="c.csv", sha256="0" * 64, rows=m, size_bytes=0, layout=Layout("individuals"),
                   labels=np.array([f"B{i + 1:03d}" for i in range(m)]), streams=("rejected",), values=None,
                   counts=np.asarray(counts, float)[:, None], sizes=np.asarray(sizes, float)[:, None])


def test_frozen_p_chart_uses_the_phase1_rate_and_new_sizes():
    rng = np.random.default_rng(3)
    sizes = rng.integers(800, 1200, 30)
    counts = rng.binomial(sizes, 0.02)
    a = analyse(_counts(counts, sizes), Settings(chart="p"))
    fz = freeze(a)
    assert fz.center == pytest.approx(counts.sum() / sizes.sum()) and fz.sigma == 1.0
    new_sizes = np.r_[sizes, [500, 2000]]
    new_counts = np.r_[counts, [40, 10]]
    b = analyse(_counts(new_counts, new_sizes), Settings(chart="p"), frozen=fz)
    p = b.location
    assert b.phase2_start == 30
    assert np.all(p.center == pytest.approx(fz.center))  # the new rows do not move the rate
    # p chart limits p̄ ± 3√(p̄(1−p̄)/nᵢ) with the frozen p̄ [definition]
    assert p.ucl[30] == pytest.approx(fz.center + 3 * np.sqrt(fz.center * (1 - fz.center) / 500))
    assert 30 in p.flags["beyond-limits"]  # 40 of 500 is far above the frozen rate
