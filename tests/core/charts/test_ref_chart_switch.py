"""The automatic choice between X̄-R and X̄-S at 9, 10 and 11 readings per subgroup.

[common practice] The range is used for subgroups of up to 10 readings; above that the standard
deviation is preferred, because the range wastes the information in the middle readings
(Montgomery, Introduction to SQC, ch. 6: the S chart "for n > 10 or 12").  The project's rule, stated in
its README and in analysis.resolve_chart, puts the switch after 10.
"""
from __future__ import annotations

import numpy as np
import pytest

from tests.conftest import make_dataset
from workbench.core.analysis import analyse
from workbench.core.model import Settings


@pytest.mark.parametrize("k, chart, sigma", [(9, "xbar-r", "rbar"), (10, "xbar-r", "rbar"), (11, "xbar-s", "sbar")])
def test_auto_chart_switches_to_xbar_s_above_10_readings(k, chart, sigma):
    """Mutations killed: the switch written ``k < 10`` (10 readings would get X̄-S) or ``k <= 11``."""
    v = np.random.default_rng(k).normal(20.0, 1.0, (25, k))
    a = analyse(make_dataset(v), Settings())
    assert (a.chart, a.sigma_method) == (chart, sigma)
    assert [c.name for c in a.charts] == ["xbar", "r" if chart == "xbar-r" else "s"]
    assert not any("range wastes information" in w for w in a.warnings)
