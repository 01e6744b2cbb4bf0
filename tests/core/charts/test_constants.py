"""Chart constants against the published table and the closed forms."""
import math

import numpy as np
import pytest

from workbench.core.charts import constants as K

# Montgomery, Introduction to Statistical Quality Control, Appendix VI [printed, 3-4 dp]
# (same figures in Pyzdek, The Handbook for Quality Management, appendix).
#        n   A2     A3     c4      B3     B4     d2     d3     D3     D4
TABLE = [
    (2, 1.880, 2.659, 0.7979, 0.000, 3.267, 1.128, 0.853, 0.000, 3.267),
    (3, 1.023, 1.954, 0.8862, 0.000, 2.568, 1.693, 0.888, 0.000, 2.574),
    (4, 0.729, 1.628, 0.9213, 0.000, 2.266, 2.059, 0.880, 0.000, 2.282),
    (5, 0.577, 1.427, 0.9400, 0.000, 2.089, 2.326, 0.864, 0.000, 2.114),
    (6, 0.483, 1.287, 0.9515, 0.030, 1.970, 2.534, 0.848, 0.000, 2.004),
    (7, 0.419, 1.182, 0.9594, 0.118, 1.882, 2.704, 0.833, 0.076, 1.924),
    (8, 0.373, 1.099, 0.9650, 0.185, 1.815, 2.847, 0.820, 0.136, 1.864),
    (10, 0.308, 0.975, 0.9727, 0.284, 1.716, 3.078, 0.797, 0.223, 1.777),
    (15, 0.223, 0.789, 0.9823, 0.428, 1.572, 3.472, 0.756, 0.347, 1.653),
    (20, 0.180, 0.680, 0.9869, 0.510, 1.490, 3.735, 0.729, 0.415, 1.585),
    (25, 0.153, 0.606, 0.9896, 0.565, 1.435, 3.931, 0.708, 0.459, 1.541),
]
# Tolerance against printed tables: 1e-3 for 3-decimal columns, 1e-4 for 4-decimal (REFERENCES.md:
# printed tables disagree with each other in the last digit).
T3, T4 = 1.01e-3, 1.01e-4


@pytest.fixture(autouse=True)
def computed_afresh():
    """Each test computes the constants afresh: a value cached by an earlier caller (another test, or
    mutation testing's first run in the same process) would hide a wrong computation."""
    for cached in (K.c4, K.d2, K.d3, K._outer, K._inner, K._rule):
        cached.cache_clear()


@pytest.mark.parametrize("n,A2,A3,c4,B3,B4,d2,d3,D3,D4", TABLE)
def test_constants_match_printed_table(n, A2, A3, c4, B3, B4, d2, d3, D3, D4):
    assert K.a2(n) == pytest.approx(A2, abs=T3)
    assert K.a3(n) == pytest.approx(A3, abs=T3)
    assert K.c4(n) == pytest.approx(c4, abs=T4)
    assert K.b3(n) == pytest.approx(B3, abs=T3)
    assert K.b4(n) == pytest.approx(B4, abs=T3)
    assert K.d2(n) == pytest.approx(d2, abs=T3)
    assert K.d3(n) == pytest.approx(d3, abs=T3)
    assert K.d3_factor(n) == pytest.approx(D3, abs=T3)
    assert K.d4_factor(n) == pytest.approx(D4, abs=T3)


def test_closed_forms():
    # [definition] closed forms listed in REFERENCES.md
    assert K.c4(2) == pytest.approx(math.sqrt(2 / math.pi), abs=1e-12)
    assert K.c4(3) == pytest.approx(math.sqrt(math.pi) / 2, abs=1e-12)
    assert K.d2(2) == pytest.approx(2 / math.sqrt(math.pi), abs=1e-9)
    assert K.d3(2) == pytest.approx(math.sqrt(2 - 4 / math.pi), abs=1e-9)
    assert K.d2(3) == pytest.approx(3 / math.sqrt(math.pi), abs=1e-9)
    # Individuals charts: E2(2) = 2.660 printed (3/1.128); exact 2.658681 [definition]
    assert K.e2(2) == pytest.approx(2.658681, abs=1e-6)
    assert K.e2(2) == pytest.approx(2.660, abs=2e-3)


def test_d2_against_scipy_quadrature():
    # scipy.integrate.quad of the defining integral (REFERENCES.md [definition]) as the reference
    from scipy import integrate, stats
    for n in (4, 9, 37, 100):
        f = lambda x: 1 - stats.norm.cdf(x) ** n - (1 - stats.norm.cdf(x)) ** n  # noqa: E731
        ref, _ = integrate.quad(f, -12, 12, limit=200)
        assert K.d2(n) == pytest.approx(ref, abs=1e-8)


def test_d3_against_scipy_double_integral():
    # scipy.integrate.dblquad of E[W^2] from REFERENCES.md [definition]
    from scipy import integrate, stats
    n = 6
    Phi = stats.norm.cdf
    f = lambda y, x: 1 - Phi(x) ** n - (1 - Phi(y)) ** n + (Phi(x) - Phi(y)) ** n  # noqa: E731
    ew2, _ = integrate.dblquad(f, -10, 10, lambda x: -10, lambda x: x)
    assert K.d3(n) == pytest.approx(math.sqrt(2 * ew2 - K.d2(n) ** 2), abs=1e-7)


def test_every_n_up_to_100_is_defined_and_monotone():
    d2s = [K.d2(n) for n in range(2, 101)]
    assert all(b > a for a, b in zip(d2s, d2s[1:]))  # expected range grows with n
    c4s = [K.c4(n) for n in range(2, 101)]
    assert all(0 < c < 1 for c in c4s) and all(b > a for a, b in zip(c4s, c4s[1:]))
    assert all(0 < K.d3(n) < 1 for n in range(2, 101))


def test_bad_n_is_refused():
    from workbench.core.model import WorkbenchError
    for n in (0, 1, 1.5, K.MAX_N + 1):
        with pytest.raises(WorkbenchError):
            K.c4(n)


def test_normal_distribution_function_of_the_quadrature_equals_scipy():
    """Φ and log Φ at the quadrature nodes (|x| ≤ 9.5) agree with scipy.special.ndtr / log_ndtr
    [reference library]. Kills a dropped 1/2, a sign of the argument or a missing √2."""
    from scipy import special
    from workbench.core.charts.constants import log_ndtr, ndtr
    x = np.linspace(-9.5, 9.5, 401)
    assert np.allclose(ndtr(x), special.ndtr(x), rtol=1e-13, atol=0)
    assert np.allclose(log_ndtr(x), special.log_ndtr(x), rtol=1e-12, atol=1e-15)


@pytest.mark.parametrize("points", [2, 5, 200, 400])
def test_gauss_legendre_rule_matches_numpy_and_integrates_polynomials_exactly(points):
    """The quadrature rule behind d2 and d3 (Newton's method, no linear algebra) against
    ``numpy.polynomial.legendre.leggauss`` (reference library) and against the exact integrals
    ∫₋₁¹ x^(2k) dx = 2/(2k+1), which an n-point Gauss rule reproduces for 2k ≤ 2n − 1 (calculus; the
    defining property of Gauss-Legendre quadrature).  Kills: a wrong starting guess that converges to a
    repeated node, a dropped factor 2 in the weights, nodes in the opposite order to the weights."""
    from workbench.core.charts.constants import _rule
    t, w = _rule(points)
    t_ref, w_ref = np.polynomial.legendre.leggauss(points)
    assert np.max(np.abs(t - t_ref)) < 1e-14
    assert np.max(np.abs(w - w_ref) / w_ref) < 1e-8  # numpy's own weights carry ~1e-10 relative error at 400
    for k in range(0, points):
        exact = 2.0 / (2 * k + 1)
        assert abs(float(np.dot(w, t ** (2 * k))) - exact) <= 1e-12 * exact
        assert abs(float(np.dot(w, t ** (2 * k + 1)))) < 1e-13  # odd powers integrate to 0


def test_subgroup_size_bounds_and_the_default_span_of_e2():
    """The largest size (MAX_N) is computed, one more is refused (the bound is inclusive); e2() is the
    individuals chart's E2 for moving ranges of span 2: 3/d2(2) = 3·√π/2 [closed form].  Kills ``n >=
    MAX_N`` in the size check and the default span 3 (written against the mutation report)."""
    assert 0.999 < K.c4(K.MAX_N) < 1.0
    assert K.e2() == pytest.approx(3 * math.sqrt(math.pi) / 2, abs=1e-9)


def test_table_of_a_constant_per_subgroup_size():
    """``table`` evaluates a constant per subgroup size, NaN below 2 (a subgroup of one has no range):
    c4(2) = √(2/π), c4(3) = √π/2 [closed forms], c4(5) = 0.9400 [printed].  Kills the mutants of
    ``table`` (no test reached it: the constant path for equal sizes, the per-size loop, the n ≥ 2 guards)."""
    c2, c3 = math.sqrt(2 / math.pi), math.sqrt(math.pi) / 2
    got = K.table(np.array([2, 3, 1, 2, 5, 0]), K.c4)
    assert got[[0, 1, 3]] == pytest.approx([c2, c3, c2], abs=1e-12)
    assert got[4] == pytest.approx(0.9400, abs=T4) and np.isnan(got[2]) and np.isnan(got[5])
    same = K.table(np.full(4, 3), K.c4)
    assert same.shape == (4,) and same == pytest.approx(np.full(4, c3), abs=1e-12)
    assert np.all(np.isnan(K.table(np.ones(3, int), K.c4)))
    assert K.table(np.array([], int), K.c4).shape == (0,)
    grid = K.table(np.array([[2, 3], [3, 2]]), K.c4)
    assert grid.shape == (2, 2) and grid[0, 1] == pytest.approx(c3, abs=1e-12)
