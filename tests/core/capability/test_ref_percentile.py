"""The percentile method's indices against quantiles computed here with scipy.stats.

ISO 22514-2 percentile method (Clements 1989) [definition]:
Pp = (USL - LSL)/(X99.865 - X0.135), Ppu = (USL - X50)/(X99.865 - X50), Ppl = (X50 - LSL)/(X50 - X0.135),
Ppk = min(Ppl, Ppu), where X_q is the q-quantile of the fitted distribution and 0.135 % = Phi(-3),
99.865 % = Phi(3).  The reference fits the same family with scipy.stats' own maximum-likelihood fit
(location fixed at 0) and takes its quantiles with scipy; nothing of the product's formulas is used.
"""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from workbench.core.capability.assess import assess
from workbench.core.model import Spec

FAMILIES = {"lognormal": stats.lognorm, "gamma": stats.gamma}


def reference(x: np.ndarray, family: str, lsl: float, usl: float) -> dict[str, float]:
    shape, _, scale = FAMILIES[family].fit(x, floc=0.0)
    dist = FAMILIES[family](shape, 0.0, scale)
    lo, mid, hi = dist.ppf([stats.norm.cdf(-3.0), 0.5, stats.norm.cdf(3.0)])
    ppl, ppu = (mid - lsl) / (mid - lo), (usl - mid) / (hi - mid)
    return {"pp": (usl - lsl) / (hi - lo), "ppl": ppl, "ppu": ppu, "ppk": min(ppl, ppu), "q": (lo, mid, hi)}


@pytest.mark.parametrize("family, sample, lsl, usl", [
    # strongly right-skewed: the lower tail is short, so Ppl differs from a spread taken from the upper tail
    ("lognormal", lambda r: r.lognormal(1.0, 0.5, 400), 0.9, 12.0),
    ("gamma", lambda r: r.gamma(2.5, 1.2, 400), 0.1, 10.0),
])
def test_percentile_indices_equal_the_iso_definition_on_scipy_quantiles(family, sample, lsl, usl):
    """Mutation killed: Ppl computed from the upper-tail spread, (X50 - LSL)/(X99.865 - X50), in
    capability/formulas.py:percentile_indices (the rest of the suite passes with it)."""
    x = sample(np.random.default_rng(2027))
    cap = assess(x, None, "mrbar", Spec(lsl=lsl, usl=usl, method="percentile"))
    assert cap.method == "percentile" and cap.fit.distribution == family
    ref = reference(x, family, lsl, usl)
    # the same scipy fit on the same readings: agreement to the fit's own precision [definition]
    assert cap.percentiles == pytest.approx(ref["q"], rel=1e-6)
    for name in ("pp", "ppl", "ppu", "ppk"):
        assert getattr(cap, name) == pytest.approx(ref[name], rel=1e-6), name
    # the skew makes the upper spread far wider than the lower one, so a swapped spread cannot pass
    lo, mid, hi = ref["q"]
    assert hi - mid > 1.5 * (mid - lo)
