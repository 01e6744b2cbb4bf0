"""Capability formulas on one-sided specifications, degenerate inputs and the one-sided bounds, each
against a reference computed here or printed.

Written against the mutants that survived the first selection (tests/MUTATION.md): the one-sided branches
of the percentile indices, the ``None`` paths, Cpm and its Boyles interval, the fallout per side.  Sources:
ISO 22514-2 percentile method (Clements 1989) with the fitted quantiles from scipy.stats [definition;
reference library]; Kane (1986) index definitions; the Cp chi-square interval and Bissell's interval with
the worked values of /work/shared/REFERENCES.md; normal fallout 1e6·Φ(−3C) [definition].
"""
import math

import numpy as np
import pytest
from scipy import stats

from workbench.core.capability import formulas as F

LOGN = stats.lognorm(s=0.5, scale=10.0)
Q_LOW, Q_MID, Q_HIGH = LOGN.ppf(0.00135), LOGN.ppf(0.5), LOGN.ppf(0.99865)


def test_percentile_indices_one_sided_and_degenerate():
    """Only an LSL: Ppl = (X50 − LSL)/(X50 − X0.135), no Ppu, no Pp, Ppk = Ppl; only a USL the mirror
    [ISO 22514-2, quantiles of a lognormal from scipy.stats].  A quantile spread of zero on a side gives no
    index there.  Kills the one-sided branches and the ``q_mid > q_low`` / ``q_high > q_mid`` /
    ``q_high > q_low`` guards (``>=``, ``and`` → ``or``, dropped)."""
    lower_only = F.percentile_indices(Q_LOW, Q_MID, Q_HIGH, 4.0, None)
    ppl = (Q_MID - 4.0) / (Q_MID - Q_LOW)
    assert lower_only.lower == pytest.approx(ppl, rel=1e-12) and lower_only.worst == pytest.approx(ppl, rel=1e-12)
    assert lower_only.upper is None and lower_only.potential is None
    upper_only = F.percentile_indices(Q_LOW, Q_MID, Q_HIGH, None, 40.0)
    ppu = (40.0 - Q_MID) / (Q_HIGH - Q_MID)
    assert upper_only.upper == pytest.approx(ppu, rel=1e-12) and upper_only.worst == pytest.approx(ppu, rel=1e-12)
    assert upper_only.lower is None and upper_only.potential is None
    both = F.percentile_indices(Q_LOW, Q_MID, Q_HIGH, 4.0, 40.0)
    assert both.potential == pytest.approx(36.0 / (Q_HIGH - Q_LOW), rel=1e-12)
    assert both.worst == pytest.approx(min(ppl, ppu), rel=1e-12)
    flat_low = F.percentile_indices(5.0, 5.0, 9.0, 1.0, 20.0)
    assert flat_low.lower is None and flat_low.upper == pytest.approx(15.0 / 4.0) and flat_low.potential == 19.0 / 4.0
    flat_high = F.percentile_indices(1.0, 5.0, 5.0, 1.0, 20.0)
    assert flat_high.upper is None and flat_high.lower == pytest.approx(1.0)
    point = F.percentile_indices(5.0, 5.0, 5.0, 1.0, 20.0)
    assert point == F.Indices(None, None, None, None)


def test_normal_indices_without_a_usable_sigma_or_with_one_limit():
    """No sigma, a NaN, zero or negative sigma: no index at all; one limit: that side only, Cpk = it
    [Kane 1986].  NIST e-Handbook 6.1.6: USL 20, LSL 8, mean 16, σ 2 → Cpu 0.6667, Cpl 1.3333 [from
    memory; arithmetic exact]."""
    for sigma in (None, float("nan"), 0.0, -1.0):
        assert F.normal_indices(16.0, sigma, 8.0, 20.0) == F.Indices(None, None, None, None)
    upper = F.normal_indices(16.0, 2.0, None, 20.0)
    assert upper.upper == pytest.approx(2 / 3) and upper.worst == pytest.approx(2 / 3)
    assert upper.lower is None and upper.potential is None
    lower = F.normal_indices(16.0, 2.0, 8.0, None)
    assert lower.lower == pytest.approx(4 / 3) and lower.worst == pytest.approx(4 / 3) and lower.upper is None


def test_centring_and_cpm():
    """k = |midpoint − mean| / half-width, so Cpk = Cp(1 − k): NIST 6.1.6 gives k = 1/3, Cp 1, Cpk 2/3
    [from memory; arithmetic].  Cpm = (USL − LSL)/(6√(s² + (mean − T)²)) [Chan, Cheng & Spiring 1988;
    plug-in form]: T = 14 gives 12/(6√8) = 0.70711; on target it is Cp; a zero root gives None; a
    specification of no width has no k.  Kills the Cpm root's sign, square and guard, and k's guard."""
    assert F.centring_k(16.0, 8.0, 20.0) == pytest.approx(1 / 3)
    assert F.centring_k(16.0, 8.0, 8.0) is None and F.centring_k(16.0, 9.0, 8.0) is None
    assert F.cpm_index(16.0, 2.0, 14.0, 8.0, 20.0) == pytest.approx(12 / (6 * math.sqrt(8.0)), rel=1e-12)
    assert F.cpm_index(16.0, 2.0, 16.0, 8.0, 20.0) == pytest.approx(1.0, rel=1e-12)
    assert F.cpm_index(16.0, 2.0, 18.0, 8.0, 20.0) == pytest.approx(12 / (6 * math.sqrt(8.0)), rel=1e-12)
    assert F.cpm_index(16.0, 0.0, 16.0, 8.0, 20.0) is None


@pytest.mark.parametrize("xi", [0.0, 0.5, -1.2])
def test_boyles_interval_two_sided_and_lower(xi):
    """Boyles (1991): ν = n(1 + ξ²)²/(1 + 2ξ²), bounds Ĉpm·√(χ²_{α/2,ν}/ν) … Ĉpm·√(χ²_{1−α/2,ν}/ν); one-sided
    lower bound with χ²_{α,ν} and +∞ above [chi-square quantiles from scipy.stats].  Kills every part of
    ``boyles_cpm_interval`` (ν's powers and signs, α, the two quantiles, the lower bound, the +∞)."""
    n, cpm = 30, 1.2
    nu = n * (1 + xi ** 2) ** 2 / (1 + 2 * xi ** 2)
    low, high = F.boyles_cpm_interval(cpm, n, xi, 0.95)
    assert low == pytest.approx(cpm * math.sqrt(stats.chi2.ppf(0.025, nu) / nu), rel=1e-10)
    assert high == pytest.approx(cpm * math.sqrt(stats.chi2.ppf(0.975, nu) / nu), rel=1e-10)
    one, inf = F.boyles_cpm_interval(cpm, n, xi, 0.90, bounds="lower")
    assert one == pytest.approx(cpm * math.sqrt(stats.chi2.ppf(0.10, nu) / nu), rel=1e-10) and inf == math.inf
    lows, highs = F.boyles_cpm_interval(np.array([cpm, 2 * cpm]), np.array([n, n]), np.array([xi, xi]))
    assert lows == pytest.approx([low, 2 * low]) and highs == pytest.approx([high, 2 * high])


def test_cp_and_bissell_intervals_with_the_worked_values():
    """Cp: USL 62, LSL 38, n 20, s 1.75 → Ĉp 2.2857, 95 % bounds 1.5649 … 3.0056 [REFERENCES.md:
    Montgomery's example, exact from Ĉp]; lower one-sided: Ĉp·√(χ²_{0.05,19}/19) [scipy.stats].  Bissell:
    Ĉpk 1.15, n 45 → 0.8907 … 1.4093 [printed in a trade article]; lower one-sided with z = 1.645.  A
    bound kind other than the two is refused."""
    cp = 24 / (6 * 1.75)
    low, high = F.cp_chi2_interval(cp, 20)
    assert (low, high) == (pytest.approx(1.5649, abs=1e-4), pytest.approx(3.0056, abs=1e-4))
    one, inf = F.cp_chi2_interval(cp, 20, bounds="lower")
    assert one == pytest.approx(cp * math.sqrt(stats.chi2.ppf(0.05, 19) / 19), rel=1e-10) and inf == math.inf
    low, high = F.bissell_interval(1.15, 45)
    assert (low, high) == (pytest.approx(0.8907, abs=1e-4), pytest.approx(1.4093, abs=1e-4))
    one, inf = F.bissell_interval(1.15, 45, bounds="lower")
    z = stats.norm.ppf(0.95)
    assert one == pytest.approx(1.15 - z * math.sqrt(1 / (9 * 45) + 1.15 ** 2 / 88), rel=1e-10) and inf == math.inf
    with pytest.raises(ValueError):
        F.bissell_interval(1.15, 45, bounds="upper")
    with pytest.raises(ValueError):
        F.cp_chi2_interval(1.15, 45, bounds="both")


@pytest.mark.parametrize("c,ppm,tol", [(1.00, 1349.9, 0.05), (1.33, 33.0, 0.05), (1.50, 3.40, 0.005),
                                       (2.00, 0.00099, 0.000005)])
def test_ppm_from_a_one_sided_index(c, ppm, tol):
    """1e6·Φ(−3C) [REFERENCES.md, definition]: 1349.9, 33.0, 3.40, 0.00099 ppm."""
    assert F.ppm_from_index(c) == pytest.approx(ppm, abs=tol)


def test_fallout_per_side_and_in_total():
    """Normal fallout 1e6·Φ((LSL − μ)/σ) below and 1e6·(1 − Φ((USL − μ)/σ)) above [definition]: a centred
    process with Cp = 1 has 2699.8 ppm in all [REFERENCES.md]; one limit gives that side only; no usable
    sigma gives no fallout; observed fallout counts readings strictly outside (a reading on a limit is in
    specification).  Kills the one-sided and None paths of ``fallout``, ``normal_fallout`` and
    ``observed_fallout``."""
    both = F.normal_fallout(14.0, 2.0, 8.0, 20.0)
    assert both.total == pytest.approx(2699.8, abs=0.05) and both.below == pytest.approx(both.above)
    up = F.normal_fallout(16.0, 2.0, None, 20.0)
    assert up.below is None and up.above == pytest.approx(1e6 * stats.norm.sf(2.0)) and up.total == up.above
    down = F.normal_fallout(16.0, 2.0, 8.0, None)
    assert down.above is None and down.below == pytest.approx(1e6 * stats.norm.cdf(-4.0)) and down.total == down.below
    for sigma in (None, float("nan"), 0.0):
        assert F.normal_fallout(16.0, sigma, 8.0, 20.0) is None
    x = np.array([8.0, 9.0, 20.0, 21.0, 7.0, 12.0, 13.0, 14.0, 15.0, 16.0])
    seen = F.observed_fallout(x, 8.0, 20.0)
    assert (seen.below, seen.above, seen.total) == (100000.0, 100000.0, 200000.0)
    one = F.observed_fallout(x, None, 20.0)
    assert (one.below, one.above, one.total) == (None, 100000.0, 100000.0)
    other = F.observed_fallout(x, 8.0, None)
    assert (other.below, other.above, other.total) == (100000.0, None, 100000.0)
    empty = F.observed_fallout(np.array([]), 8.0, 20.0)
    assert (empty.below, empty.above, empty.total) == (0.0, 0.0, 0.0)
    assert F.fallout(8.0, 20.0, None, 0.001) == F.Fallout(None, 1000.0, 1000.0)
    assert F.fallout(None, None, 0.5, 0.5) == F.Fallout(None, None, 0.0)
