"""The in-control ARL that the EWMA's default limits give (README, Statistical conventions).

The default limits are exact (time-varying).  Their in-control average run length is computed here
by the Brook & Evans (1972) Markov chain, with the absorbing boundary moved at each step to the limit
the chart draws for that point [definition]; once the limits have settled the remaining run is the
fundamental matrix (I − Q)⁻¹.  The README states about 494 for λ = 0.2, L = 2.962 (the default) and
about 486 for λ = 0.1, L = 2.814, from a 200,000-run simulation; the asymptotic limits give about 500
(Lucas & Saccucci 1990 [from memory]).
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from workbench.core.charts.smallshift import ewma_chart


def _arl(lam: float, L: float, asymptotic: bool, cells: int = 301) -> float:
    steps = 400
    chart = ewma_chart(np.zeros(steps), 0.0, 1.0, np.zeros(steps, bool), lam, L, asymptotic)
    width = chart.ucl                                    # the limit the chart draws at each point (σ units)
    h = width[-1]
    edges = np.linspace(-h, h, cells + 1)
    mid = (edges[:-1] + edges[1:]) / 2
    # P(z_t in cell k | z_{t-1} = mid_j), z_t = (1 − λ) z_{t−1} + λ x_t, x ~ N(0, 1)
    q = (stats.norm.cdf((edges[None, 1:] - (1 - lam) * mid[:, None]) / lam)
         - stats.norm.cdf((edges[None, :-1] - (1 - lam) * mid[:, None]) / lam))
    p = np.zeros(cells)
    p[cells // 2] = 1.0                                  # z_0 = target
    arl = 1.0                                            # the run includes the signalling point
    for t in range(steps):
        p = (p @ q) * (np.abs(mid) < width[t])           # still inside the limit drawn at point t + 1
        if abs(width[t] - h) < 1e-12 * h:
            return arl + float(p @ np.linalg.solve(np.eye(cells) - q, np.ones(cells)))
        arl += p.sum()
    raise AssertionError("the limits did not settle")


@pytest.mark.parametrize("lam, L, stated", [(0.2, 2.962, 494.0), (0.1, 2.814, 486.0)])
def test_default_exact_limits_give_the_stated_arl(lam, L, stated):
    exact, asym = _arl(lam, L, False), _arl(lam, L, True)
    assert asym == pytest.approx(500.0, abs=5.0)         # the table's design value [from memory]
    assert exact == pytest.approx(stated, abs=4.0)       # README, from simulation (standard error about 1.1)
    assert exact < asym                                   # narrower early limits signal sooner
