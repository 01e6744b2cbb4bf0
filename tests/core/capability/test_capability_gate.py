"""Capability on the demo: a misfit withholds the verdict; the stability gate speaks while signals remain."""
from pathlib import Path

import numpy as np

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


def test_excluding_the_mis_keyed_reading_changes_the_model_choice():
    ds = load(DEMO)
    a = analyse(ds, Settings(spec=SPEC), [Exclusion("2026-03-03 15:30", "H2")])
    assert capability_of(a).ppm_observed.total == 0  # the 509.6 reading was the only one above the USL
