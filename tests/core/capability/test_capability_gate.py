"""Capability on the demo: a misfit withholds the verdict; the stability gate speaks while signals remain."""
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from workbench.core.analysis import analyse, capability_of
from workbench.core.capability.assess import assess
from workbench.core.data.reader import load
from workbench.core.model import Exclusion, Settings, Spec

DEMO = Path(__file__).resolve().parents[3] / "demo_data" / "filler_line3.csv"
SPEC = Spec(lsl=497.0, usl=503.0, target=500.0)  # stated in demo_data/README.md (invented scenario)


def test_an_outlier_no_model_fits_withholds_the_verdict():
    a = analyse(load(DEMO), Settings(spec=SPEC))
    cap = capability_of(a)
    assert cap.method != "normal"
    assert cap.verdict.startswith("No capability verdict")
    assert any("describes the readings poorly" in w for w in cap.warnings)
    assert any("not shown to be in control" in w for w in cap.warnings)


def test_normal_data_keep_their_verdict():
    # a clearly normal sample (seeded): the normal model is kept and a verdict is given
    x = np.random.default_rng(8).normal(500, 0.4, 400)
    cap = assess(x, 0.4, "rbar", SPEC)
    assert cap.method == "normal" and "meets the required" in cap.verdict


def test_excluding_the_mis_keyed_reading_removes_the_only_reading_above_the_usl():
    """Mutation killed: a single excluded reading dropping its whole subgroup from the capability
    readings (model.Analysis.readings with ``excluded_cells.any(axis=1)``): 858 readings instead of 863,
    still no reading above the USL, so the former check (observed ppm 0 after the exclusion) passed.

    Observed fallout = readings strictly above the USL / readings used [definition]; the demo's one
    reading above 503 is the mis-keyed 509.6 (demo_data/README.md, invented scenario).
    """
    ds = load(DEMO)
    readings = ds.values[np.isfinite(ds.values)]
    assert readings.size == 864 and np.count_nonzero(readings > SPEC.usl) == 1
    before = capability_of(analyse(ds, Settings(spec=SPEC)))
    assert before.n == 864
    assert before.ppm_observed.above == pytest.approx(1e6 / 864, rel=1e-12)
    assert before.ppm_observed.below == 0.0
    a = analyse(ds, Settings(spec=SPEC), [Exclusion("2026-03-03 15:30", "H2")])
    after = capability_of(a)
    assert after.n == 863
    assert (after.ppm_observed.above, after.ppm_observed.total) == (0.0, 0.0)
    # the capability works on the 863 readings left: their Anderson-Darling A² by its definition,
    # A² = -n - (1/n) Σ (2i - 1)[ln Φ(zᵢ) + ln(1 - Φ(z₍ₙ₊₁₋ᵢ₎))], z from the mean and the SD (n - 1)
    # [definition: Stephens (1974), as used by scipy.stats.anderson]
    kept = np.sort(readings[readings != 509.6])
    z = (kept - kept.mean()) / kept.std(ddof=1)
    i = np.arange(1, kept.size + 1)
    a2 = -kept.size - np.sum((2 * i - 1) * (stats.norm.logcdf(z) + stats.norm.logsf(z[::-1]))) / kept.size
    assert after.normality.ad_statistic == pytest.approx(a2, rel=1e-9)
