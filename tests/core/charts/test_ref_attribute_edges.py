"""Count charts where the first suite did not look: frozen (Phase II) limits built by the kernel itself, a
rate of 1, an np limit capped at n, under-dispersed counts, the advice each warning gives, and inputs
passed as plain lists.

Written against the mutants that survived tests/core/charts/test_attribute.py (tests/MUTATION.md); each
test names the mutations it kills.  Limits follow the published formulas, written out here
[definition; Montgomery, *Introduction to SQC*, ch. 7]: p̄ ± 3√(p̄(1−p̄)/nᵢ), n·p̄ ± 3√(n·p̄(1−p̄)),
c̄ ± 3√c̄, ū ± 3√(ū/nᵢ); a negative lower limit is 0, a p limit above 1 is 1, an np limit above n is n.
Laney (2002), Quality Engineering 14(4): p′ / u′ multiply each point's sigma by sigma_z.
"""
import numpy as np
import pytest
from scipy import stats

from workbench.core.charts import attribute as A
from workbench.core.charts.attribute import attribute_chart
from workbench.core.model import WorkbenchError

SIZES = np.array([50, 80, 120, 50, 200, 75, 90, 60], float)
COUNTS = np.array([4, 9, 10, 2, 15, 8, 5, 6], float)


def formula(kind, rate, sizes, m):
    """(centre, sigma) of each point at ``rate`` by the textbook formulas [definition]."""
    if kind == "p":
        return np.full(m, rate), np.sqrt(rate * (1 - rate) / sizes)
    if kind == "np":
        return sizes * rate, np.sqrt(sizes * rate * (1 - rate))
    if kind == "c":
        return np.full(m, rate), np.full(m, np.sqrt(rate))
    return np.full(m, rate), np.sqrt(rate / sizes)


@pytest.mark.parametrize("kind", ["p", "np", "c", "u"])
@pytest.mark.parametrize("sigma_z", [None, 1.6])
def test_frozen_limits_use_the_frozen_rate_and_each_subgroup_size(kind, sigma_z):
    """Phase II: the kernel given a frozen rate (and Laney's sigma_z when it was used) draws limits from
    that rate and each subgroup's own size; nothing is re-estimated from the counts.

    Kills the frozen rate ignored (``fixed_rate is None or True``, or not passed on), sigma multiplied by
    ``frozen_sigma_z and 1``, ``or 2`` or divided by it, the caps of the frozen branch (``1`` for p changed
    or applied to every kind, ``n`` for np dropped), each field of the frozen ChartResult and AttributeInfo
    dropped or set to None, and the frozen title's parts."""
    sizes = np.full(8, 100.0) if kind in ("np", "c") else SIZES
    counts = COUNTS
    rate = 0.3 if kind in ("p", "np") else 7.5     # far from the counts' own estimate
    chart, info = attribute_chart(kind, counts, sizes, np.zeros(8, bool), frozen_rate=rate,
                                  frozen_sigma_z=sigma_z)
    plain, _ = attribute_chart(kind, counts, sizes, np.zeros(8, bool))
    centre, sigma = formula(kind, rate, sizes, 8)
    sigma = sigma * (sigma_z or 1.0)
    cap = {"p": 1.0, "np": sizes[0]}.get(kind, np.inf)
    assert chart.center == pytest.approx(centre, rel=1e-12)
    assert chart.sigma == pytest.approx(sigma, rel=1e-12)
    assert chart.ucl == pytest.approx(np.minimum(centre + 3 * sigma, cap), rel=1e-12)
    assert chart.lcl == pytest.approx(np.maximum(centre - 3 * sigma, 0.0), rel=1e-12, abs=1e-15)
    assert chart.values == pytest.approx(plain.values) and chart.excluded.tolist() == [False] * 8
    assert (chart.name, chart.role, chart.flags, chart.rules) == (kind, plain.role, {}, ())
    laney = f" (Laney {kind}′)" if sigma_z else ""
    assert chart.title == plain.title + laney + ", frozen limits"
    assert info.kind == kind and info.center == rate and info.sigma_z == sigma_z
    assert info.laney_used is bool(sigma_z) and info.laney_recommended is False and info.warnings == ()
    assert info.dispersion_p is None and info.totals == (counts.sum(), sizes.sum())


def test_frozen_limits_are_capped_at_one_and_at_n():
    """A frozen rate of 0.45 on samples of 5: the p limit 0.45 + 3·√(0.45·0.55/5) = 1.117 is cut to 1 and
    the np limit 2.25 + 3·√(5·0.45·0.55) = 5.59 to 5 [definition].  Kills the p cap 1 → 2 and the np cap
    n → ∞ or ``sizes[1]`` read before the sizes are known constant (the same here) in the frozen branch."""
    sizes = np.full(6, 5.0)
    p, _ = attribute_chart("p", [1, 2, 3, 2, 1, 2], sizes, None, frozen_rate=0.45)
    assert np.all(p.ucl == 1.0)
    np_chart, _ = attribute_chart("np", [1, 2, 3, 2, 1, 2], sizes, None, frozen_rate=0.45)
    assert np.all(np_chart.ucl == 5.0)


def test_plain_np_upper_limit_is_capped_at_n():
    """n = 5, p̄ = 0.6: n·p̄ + 3√(n·p̄(1−p̄)) = 3 + 3.286 = 6.29 > 5, so the limit is 5 [definition].
    Kills the np cap of the plain chart set to ∞ (``kind == "XXnpXX"``, ``"NP"``, ``and False``)."""
    chart, _ = attribute_chart("np", [3, 4, 2, 3, 3], np.full(5, 5.0), None)
    assert chart.center == pytest.approx(np.full(5, 3.0))
    assert np.all(chart.ucl == 5.0)
    assert chart.lcl == pytest.approx(np.full(5, max(0.0, 3 - 3 * np.sqrt(5 * 0.6 * 0.4))))


@pytest.mark.parametrize("kind", ["p", "np"])
def test_every_unit_defective_gives_no_limits_and_says_so(kind):
    """A rate of exactly 1 (every unit defective) has no binomial spread: no limits, no sigma_z, and the
    warning says why [definition: p(1−p) = 0].  Kills ``rate > 1`` / ``>= 2`` and the kinds ``"XXpXX"``,
    ``"P"``, ``"XXnpXX"``, ``"NP"`` in both tests of a full rate, and the words "every unit defective"
    altered or replaced by "no defectives" (``rate <= 1``)."""
    sizes = np.full(5, 20.0)
    chart, info = attribute_chart(kind, sizes.copy(), sizes, None)
    assert np.all(np.isnan(chart.sigma)) and np.all(np.isnan(chart.ucl)) and np.all(np.isnan(chart.lcl))
    assert info.sigma_z is None and info.dispersion_p is None and not info.laney_recommended
    assert info.warnings == (f"every unit defective in the subgroups used for the limits, so no {kind} "
                             "limits can be set",)
    _, none_info = attribute_chart(kind, np.zeros(5), sizes, None)
    assert none_info.warnings[0].startswith("no defectives in the subgroups used for the limits")


def test_counts_that_vary_less_than_sampling_predicts_are_flagged():
    """Counts of 10 in every sample of 100 (p chart) vary far less than binomial sampling predicts: the
    lower tail of X² = Σz² on m − 1 df [Pearson's index of dispersion; scipy.stats.chi2 as the reference] is
    below 1 % and the warning names the likely causes.  Kills ``Σ z/z`` for ``Σ z²`` in that tail and the
    warning's words altered or dropped."""
    counts = np.array([10, 10, 11, 10, 9, 10, 10, 10, 11, 10, 9, 10])
    sizes = np.full(12, 100.0)
    _, info = attribute_chart("p", counts, sizes, None)
    pbar = counts.sum() / sizes.sum()
    z = (counts / sizes - pbar) / np.sqrt(pbar * (1 - pbar) / sizes)
    assert stats.chi2.cdf(np.sum(z * z), 11) < 0.01          # the reference: clearly under-dispersed
    assert len(info.warnings) == 1
    w = info.warnings[0]
    assert w.startswith("the subgroups vary less than binomial sampling predicts (sigma_z ")
    assert w.endswith("): check for mixed streams in each subgroup or edited counts")


def overdispersed(kind, m=30, seed=3):
    rng = np.random.default_rng(seed)
    sizes = np.full(m, 5000.0)
    return rng.binomial(5000, rng.beta(50, 450, m)).astype(float), sizes


def test_the_advice_of_each_overdispersion_warning():
    """Over-dispersed counts (beta-binomial, simulated): a p chart under ``auto`` offers Laney p′ and says
    how to turn it on; an np chart says to use a p chart, a c chart a u chart; ``on`` for np or c says the
    correction is for p and u only, and no such note appears for p or u [Laney (2002): p′ and u′ only].

    Kills ``spread = None``, the setup words lower-cased, the other chart named wrongly (``other = None``,
    ``"XXpXX"``, ``"P"``, ``"u"`` for np, ``"XXuXX"``, ``"U"``), and the note's condition
    (``or``, ``!=``, ``"XXonXX"``, ``"ON"``, ``and offered``) or its text set to None."""
    counts, sizes = overdispersed("p")
    _, p_auto = attribute_chart("p", counts, sizes, None, laney="auto")
    assert p_auto.warnings[0].startswith("the subgroups vary more than binomial sampling explains (sigma_z ")
    assert p_auto.warnings[0].endswith("offered (setup: Laney correction on, or --laney on)")
    _, p_on = attribute_chart("p", counts, sizes, None, laney="on")
    assert p_on.warnings == ("Laney p′ limits used on request",)
    for kind, other, model in (("np", "p", "binomial"), ("c", "u", "Poisson")):
        _, info = attribute_chart(kind, counts, sizes, None, laney="auto")
        assert len(info.warnings) == 1, info.warnings
        assert info.warnings[0].startswith(f"the subgroups vary more than {model} sampling explains")
        assert info.warnings[0].endswith(f"; Laney's correction is not offered for {kind} charts, use a {other} "
                                         "chart")
        _, on = attribute_chart(kind, counts, sizes, None, laney="on")
        assert on.warnings[-1] == (f"Laney's correction is offered for p and u charts only; plain {kind} "
                                   "limits shown")
    _, u_on = attribute_chart("u", counts, sizes, None, laney="on")
    assert u_on.warnings == ("Laney u′ limits used on request",)
    plain_c, c_off = attribute_chart("c", counts[:5] * 0 + 3, None, None, laney="off")
    assert not any("offered for p and u" in w for w in c_off.warnings)


def test_plain_titles_and_the_untouched_fields():
    """The plain chart's title is the chart's name alone, the Laney chart's adds " (Laney p′)"; the kernel
    leaves ``flags`` and ``rules`` empty for the rules module; info names the kind.  Kills the plain title's
    empty suffix replaced (``"XXXX"``), ``rules=None`` and the info's kind set to None."""
    counts, sizes = overdispersed("p")
    plain, info = attribute_chart("p", counts, sizes, None, laney="off")
    laney, _ = attribute_chart("p", counts, sizes, None, laney="on")
    assert plain.title == "Proportion defective" and laney.title == "Proportion defective (Laney p′)"
    assert (plain.flags, plain.rules, info.kind) == ({}, (), "p")


def test_a_c_chart_with_sizes_totals_the_units():
    """A c chart given (constant) sizes totals the units inspected; without sizes it counts the subgroups
    (``AttributeInfo.totals``).  Kills ``sizes is not None and False`` in the c chart's total."""
    counts = np.array([3, 5, 2, 6, 4], float)
    _, with_sizes = attribute_chart("c", counts, np.full(5, 10.0), [False, True, False, False, False])
    assert with_sizes.totals == (15.0, 40.0)
    _, without = attribute_chart("c", counts, None, [False, True, False, False, False])
    assert without.totals == (15.0, 4.0)


def test_exclusions_as_none_or_as_zeros_and_ones():
    """``excluded`` may be None (nothing excluded) or 0/1 numbers: the same chart as the boolean mask.
    Kills ``np.zeros(m, None)`` (a float mask that cannot be negated) and ``np.asarray(excluded)`` without
    ``bool`` (``~`` of 0/1 integers is −1/−2, which then index the wrong subgroups)."""
    base, _ = attribute_chart("u", COUNTS, SIZES, np.zeros(8, bool))
    none, _ = attribute_chart("u", COUNTS, SIZES, None)
    assert none.center == pytest.approx(base.center) and none.ucl == pytest.approx(base.ucl)
    mask = [0, 1, 0, 0, 0, 0, 1, 0]
    as_bool, _ = attribute_chart("u", COUNTS, SIZES, np.array(mask, bool))
    as_ints, _ = attribute_chart("u", COUNTS, SIZES, np.array(mask))
    keep = ~np.array(mask, bool)
    assert as_ints.center[0] == pytest.approx(COUNTS[keep].sum() / SIZES[keep].sum())  # ū [definition]
    assert as_ints.center == pytest.approx(as_bool.center) and as_ints.excluded.dtype == bool


def test_a_varying_size_names_the_first_subgroup_that_differs():
    """An np chart needs one sample size: the error names the first subgroup whose size differs from the
    first subgroup's (README: bad input names the row).  Kills the comparison made with ``sizes[1]``."""
    with pytest.raises(WorkbenchError, match="^subgroup 2: the sample size varies"):
        attribute_chart("np", [1, 2, 2, 1], [50, 60, 60, 60], None)


@pytest.mark.parametrize("p,text", [(0.0004, "p < 0.001"), (0.001, "p = 0.001"), (0.0123, "p = 0.012"),
                                    (0.5, "p = 0.500")])
def test_p_values_in_the_warnings(p, text):
    """p-values are shown to 3 decimals, below 0.001 as "p < 0.001" [common practice in reporting].
    Kills each part of ``_p_text``: the condition forced, ``<=``, ``1.001`` and the words altered."""
    assert A._p_text(p) == text


def test_frozen_defect_limits_have_no_upper_cap():
    """Defects have no upper bound: frozen at c̄ = 7.5 the c chart (5 units a sample) and the u chart (one
    unit a sample) keep 7.5 + 3√7.5 = 15.72 [definition].  Kills the frozen branch capping every chart but
    p at the first sample size (``kind == "np" or True``)."""
    for kind, sizes in (("c", np.full(4, 5.0)), ("u", np.full(4, 1.0))):
        chart, _ = attribute_chart(kind, [3, 5, 2, 6], sizes, None, frozen_rate=7.5)
        assert chart.ucl == pytest.approx(np.full(4, 7.5 + 3 * np.sqrt(7.5)), rel=1e-12), kind
