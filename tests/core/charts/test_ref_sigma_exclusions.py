"""R̄/d2 and S̄/c4 after many subgroups are excluded, against the remaining subgroups alone.

With 10 % or more of the subgroups left out the estimate is computed directly (not by the cached
sum); the reference here is R̄/d2 and S̄/c4 over the subgroups that remain, with subgroups of unequal
size averaged as Rᵢ/d2(nᵢ) and sᵢ/c4(nᵢ) [definition: Montgomery, Introduction to SQC, ch. 6], using the
printed constants (Montgomery, Introduction to SQC, Appendix VI [printed]):
d2(4) = 2.059, d2(5) = 2.326, c4(4) = 0.9213, c4(5) = 0.9400.
Tolerance 5e-4 relative: the printed constants are rounded to 3-4 decimals (2.326 vs 2.32593).
"""
from __future__ import annotations

import numpy as np
import pytest

from tests.conftest import make_dataset
from workbench.core.analysis import analyse
from workbench.core.model import Exclusion, Settings

D2 = {4: 2.059, 5: 2.326}       # Montgomery, Introduction to SQC, App. VI [printed]
C4 = {4: 0.9213, 5: 0.9400}     # same table [printed]


def readings():
    v = np.random.default_rng(41).normal(50.0, 2.0, (120, 5))
    v[3::7, 4] = np.nan  # every 7th subgroup from the 4th is one reading short: n = 4 there
    return v


@pytest.mark.parametrize("chart, sigma", [("xbar-r", "rbar"), ("xbar-s", "sbar")])
@pytest.mark.parametrize("share", [0.10, 0.25])
def test_sigma_after_excluding_many_subgroups_uses_only_the_remaining_ones(chart, sigma, share):
    """Mutations killed: d2 dropped from R̄/d2 (or c4 from S̄/c4) on the direct path used once ≥ 5 % of
    the subgroups are excluded (charts/variables.py estimate_sigma); the suite's only check of that path
    excluded 2 of 200 and compared with the product's own constants."""
    v = readings()
    m = v.shape[0]
    out = np.random.default_rng(7).choice(m, int(round(share * m)), replace=False)
    a = analyse(make_dataset(v), Settings(chart=chart, sigma=sigma), [Exclusion(str(i + 1)) for i in out])
    keep = np.delete(v, out, axis=0)
    units = []
    for row in keep:
        x = row[~np.isnan(row)]
        n = x.size
        units.append((x.max() - x.min()) / D2[n] if sigma == "rbar" else x.std(ddof=1) / C4[n])
    ref = float(np.mean(units))
    print(f"{chart}: {len(out)} of {m} excluded, sigma {a.sigma_within:.6f}, reference {ref:.6f}")
    assert a.chart == chart and a.sigma_method == sigma
    assert a.sigma_within == pytest.approx(ref, rel=5e-4)
    # the centre line is the size-weighted grand mean of the remaining subgroups, Σnᵢx̄ᵢ/Σnᵢ
    # [definition: Montgomery, Introduction to SQC, ch. 6, variable sample size]
    assert a.center == pytest.approx(np.nanmean(keep), rel=1e-12)
