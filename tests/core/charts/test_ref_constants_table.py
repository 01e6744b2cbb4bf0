"""``constants.table`` where every subgroup has the same size, including the smallest size and a single
subgroup.  Written against the survivors of tests/core/charts/test_constants.py (tests/MUTATION.md).
c4(2) = √(2/π), c4(4) = 0.9213 [closed form; printed, Montgomery App. VI]."""
import math

import numpy as np
import pytest

from workbench.core.charts import constants as K


def test_equal_sizes_of_two_and_a_single_subgroup():
    """Kills the equal-size path reading the second subgroup (``ns.flat[1]``: a single subgroup has none)
    and its guard ``> 2`` / ``>= 3`` (subgroups of two then get no constant)."""
    assert K.table(np.full(3, 2), K.c4) == pytest.approx(np.full(3, math.sqrt(2 / math.pi)), abs=1e-12)
    assert K.table(np.array([4]), K.c4) == pytest.approx([0.9213], abs=1.01e-4)
