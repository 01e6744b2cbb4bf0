"""assess(): the combined result, one-sided specs, bad inputs, warnings and verdicts."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from workbench.core.capability.assess import assess, validate_spec
from workbench.core.capability.formulas import bissell_interval, cp_chi2_interval
from workbench.core.model import Spec, WorkbenchError


def readings_with(mean: float, sd: float, n: int = 60, seed: int = 30) -> np.ndarray:
    """Normal readings rescaled to exactly this sample mean and SD (ddof=1)."""
    z = np.random.default_rng(seed).normal(size=n)
    return mean + sd * (z - z.mean()) / z.std(ddof=1)


def test_nist_example_through_assess():
    # NIST/SEMATECH e-Handbook 6.1.6 [from memory; arithmetic exact]: USL 20, LSL 8, mean 16,
    # sigma 2 -> Cp 1.0, Cpu 0.6667, Cpl 1.3333, Cpk 0.6667 (same sigma within and overall here)
    cap = assess(readings_with(16.0, 2.0), 2.0, "rbar", Spec(lsl=8.0, usl=20.0, method="normal"))
    for name, want in (("cp", 1.0), ("cpu", 0.6667), ("cpl", 1.3333), ("cpk", 0.6667),
                       ("pp", 1.0), ("ppu", 0.6667), ("ppl", 1.3333), ("ppk", 0.6667)):
        assert getattr(cap, name) == pytest.approx(want, abs=1e-4), name
    # Kane (1986) [definition]: k = |m - mean| / half-width = |14 - 16| / 6
    assert cap.k == pytest.approx(1 / 3, abs=1e-12)
    # target defaults to the midpoint; Cpm = Cp / sqrt(1 + ((mean - T)/s)^2) [definition]
    assert cap.target == 14.0 and cap.cpm == pytest.approx(1 / np.sqrt(2), abs=1e-12)
    # bounds come from the published formulas with n = 60
    assert cap.cp_ci == pytest.approx(cp_chi2_interval(1.0, 60, 0.95), abs=1e-12)
    assert cap.cpk_ci == pytest.approx(bissell_interval(2 / 3, 60, 0.95), abs=1e-9)
    # normal fallout [definition]: 1e6 Phi(-3 Cpu) above, 1e6 Phi(-3 Cpl) below
    assert cap.ppm_within.above == pytest.approx(1e6 * stats.norm.sf(2.0), rel=1e-9)
    assert cap.ppm_within.below == pytest.approx(1e6 * stats.norm.cdf(-4.0), rel=1e-9)


def test_within_and_overall_sigmas_are_kept_apart():
    cap = assess(readings_with(10.0, 1.0), 0.5, "sbar", Spec(lsl=7.0, usl=13.0, method="normal"))
    assert cap.cp == pytest.approx(2.0) and cap.pp == pytest.approx(1.0)
    assert cap.sigma_overall == pytest.approx(1.0) and cap.sigma_ratio == pytest.approx(2.0)
    assert any("variation between subgroups" in w and "1.33" in w for w in cap.warnings)


@pytest.mark.parametrize("spec, present, absent", [
    (Spec(usl=20.0), ("cpu", "cpk", "ppu", "ppk"), ("cp", "cpl", "pp", "ppl", "cpm", "k", "cp_ci", "pp_ci", "cpm_ci")),
    (Spec(lsl=8.0), ("cpl", "cpk", "ppl", "ppk"), ("cp", "cpu", "pp", "ppu", "cpm", "k", "cp_ci", "pp_ci", "cpm_ci")),
])
def test_one_sided_specs_give_only_the_meaningful_indices(spec, present, absent):
    cap = assess(readings_with(16.0, 2.0), 2.0, "rbar", spec)
    for name in present:
        assert getattr(cap, name) is not None, name
    for name in absent:
        assert getattr(cap, name) is None, name
    assert cap.cpk == (cap.cpu if spec.usl is not None else cap.cpl)
    side = "above" if spec.usl is not None else "below"
    assert getattr(cap.ppm_overall, "below" if side == "above" else "above") is None


@pytest.mark.parametrize("spec, message", [
    (Spec(lsl=10.0, usl=5.0), "must be below the USL"),
    (Spec(lsl=5.0, usl=5.0), "must be below the USL"),
    (Spec(lsl=0.0, usl=10.0, target=12.0), "outside the specification"),
    (Spec(usl=10.0, target=11.0), "outside the specification"),
    (Spec(), "no specification given"),
    (None, "no specification given"),
    (Spec(usl=10.0, confidence=1.0), "confidence level"),
    (Spec(usl=10.0, confidence=0.0), "confidence level"),
    (Spec(usl=10.0, required=0.0), "required minimum"),
    (Spec(usl=10.0, required=-1.33), "required minimum"),
    (Spec(usl=10.0, method="magic"), "unknown capability method"),
    (Spec(usl=10.0, bounds="upper"), "unknown kind of confidence bounds"),
    (Spec(usl=float("nan")), "finite number"),
    (Spec(usl="ten"), "must be a number"),
])
def test_bad_specifications_are_clear_one_line_errors(spec, message):
    with pytest.raises(WorkbenchError, match=message) as info:
        validate_spec(spec)
    assert "\n" not in str(info.value)


def test_bad_readings_and_sigma():
    with pytest.raises(WorkbenchError, match="at least 2 readings"):
        assess(np.array([1.0, np.nan]), 1.0, "rbar", Spec(usl=5.0))
    with pytest.raises(WorkbenchError, match="within-subgroup sigma"):
        assess(readings_with(1.0, 1.0), -1.0, "rbar", Spec(usl=5.0))
    with pytest.raises(WorkbenchError, match="open_signals"):
        assess(readings_with(1.0, 1.0), 1.0, "rbar", Spec(usl=5.0), open_signals=-1)


def test_zero_sigma_gives_none_indices_and_a_warning():
    # documented choice: sigma = 0 is not an error; the indices it defines are None
    cap = assess(np.full(40, 3.0), 0.0, "rbar", Spec(lsl=1.0, usl=5.0))
    for name in ("cp", "cpk", "pp", "ppk", "cpm", "cp_ci", "ppk_ci", "ppm_within", "ppm_overall", "normality"):
        assert getattr(cap, name) is None, name
    assert any("All 40 readings are equal" in w for w in cap.warnings)
    assert cap.verdict.startswith("No capability verdict")
    cap = assess(readings_with(3.0, 0.5), 0.0, "rbar", Spec(lsl=1.0, usl=5.0, method="normal"))
    assert cap.cp is None and cap.pp is not None and cap.headline == "Ppk"
    assert any("\u03c3 within is 0" in w for w in cap.warnings)


def test_non_finite_readings_are_dropped_with_a_warning():
    x = np.append(readings_with(3.0, 0.5), [np.nan, np.inf])
    cap = assess(x, 0.5, "rbar", Spec(lsl=1.0, usl=5.0))
    assert cap.n == 60 and any("2 non-finite readings" in w for w in cap.warnings)


def test_stability_gate_small_sample_and_standing_cautions():
    cap = assess(readings_with(16.0, 1.0, n=20), 1.0, "mrbar", Spec(lsl=8.0, usl=20.0), open_signals=3)
    assert "not shown to be in control" in cap.warnings[0] and "do not predict future output" in cap.warnings[0]
    assert any("fewer than 30" in w for w in cap.warnings)
    assert any("do not replace" in c and "local regulations" in c for c in cap.cautions)
    assert any("Bissell" in c and "mrbar/d2" in c for c in cap.cautions)
    clean = assess(readings_with(16.0, 1.0, n=40), 1.0, "mrbar", Spec(lsl=8.0, usl=20.0))
    assert not any("in control" in w or "fewer than 30" in w for w in clean.warnings)


def test_verdicts_against_the_required_minimum_use_the_lower_bound():
    spec = Spec(lsl=0.0, usl=12.0, method="normal")
    # Cpk 1.5 with n 200: the lower end of the 95% Bissell interval is above 1.33
    cap = assess(readings_with(6.0, 4 / 3, n=200), 4 / 3, "rbar", spec)
    assert cap.meets_required and cap.bound_meets_required
    # figures by the one formatting rule: 4 significant figures [common practice]
    assert cap.verdict.startswith("Cpk 1.500 meets the required 1.330, and the lower end of its 95% confidence "
                                  "interval")
    assert "Cpk 1.500 reaches the common 1.33 but not 1.67." in cap.common_practice and "Montgomery" in cap.common_practice
    # Cpk 1.40 with n 30: meets, but the lower bound does not
    cap = assess(readings_with(6.0, 6 / 4.2, n=30), 6 / 4.2, "rbar", spec)
    assert cap.meets_required and cap.bound_meets_required is False and "does not" in cap.verdict
    # the customer's 1.67: Cpk 1.50 falls short
    cap = assess(readings_with(6.0, 4 / 3, n=200), 4 / 3, "rbar", Spec(lsl=0.0, usl=12.0, required=1.67))
    assert cap.meets_required is False and "falls short of the required 1.670" in cap.verdict


def test_lower_bounds_option():
    # bounds="lower": one-sided lower confidence bounds, upper end unbounded
    cap = assess(readings_with(6.0, 1.0, n=50), 1.0, "rbar", Spec(lsl=0.0, usl=12.0, bounds="lower"))
    assert cap.ci_kind == "lower" and np.isinf(cap.cpk_ci[1])
    assert cap.cpk_ci[0] == pytest.approx(bissell_interval(2.0, 50, 0.95, "lower")[0], abs=1e-9)
    assert "95% lower confidence bound" in cap.verdict


def test_near_ties_are_printed_with_enough_digits():
    # 1.3296 must not read as "1.33 falls short of the required 1.33"
    cap = assess(readings_with(6.0, 6 / (3 * 1.3296), n=500), 6 / (3 * 1.3296), "rbar", Spec(lsl=0.0, usl=12.0))
    assert "1.330 falls short of the required 1.33" not in cap.verdict
    assert "falls short" in cap.verdict and "1.3296" in cap.verdict
