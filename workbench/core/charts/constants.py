"""Control chart constants from their exact definitions.

d2, d3 and c4 are computed, never typed in: c4 from the gamma function, d2 and d3 by
numerical integration of the distribution of the range of ``n`` standard normal
readings.  Every other constant (A2, A3, B3, B4, D3, D4, E2) is derived from them.
Values are cached per ``n``.

References
----------
Tippett, L. H. C. (1925). On the extreme individuals and the range of samples taken from a
normal population. *Biometrika* 17, 364-387 (the expected range, d2).
Montgomery, D. C. *Introduction to Statistical Quality Control*, Appendix VI (definitions of
the factors for constructing variables control charts).
"""
from __future__ import annotations

import math
from functools import lru_cache
from math import exp, lgamma, sqrt

import numpy as np

from workbench.core.model import WorkbenchError

MAX_N = 1000
"""Largest subgroup size for which constants are computed."""

# Gauss-Legendre nodes on [-L, L]; the integrands below are smooth and vanish well inside |x| < 9
# for every n <= MAX_N, so a fixed high-order rule is accurate to ~1e-12.  Built on first use, so
# importing the module (and every command) stays fast.
_L = 9.5


_ERFC = np.frompyfunc(math.erfc, 1, 1)


def ndtr(x: np.ndarray) -> np.ndarray:
    """Φ(x) = erfc(−x/√2)/2 with the standard library's ``math.erfc`` (exact to rounding for |x| < 38).

    Only the nodes of the quadrature rules below need it (|x| ≤ 9.5), once per process; the standard
    library keeps a report that never shows a p-value from loading scipy for it.
    """
    return 0.5 * _ERFC(-np.asarray(x, float) / math.sqrt(2.0)).astype(float)


def log_ndtr(x: np.ndarray) -> np.ndarray:
    """log Φ(x) for the quadrature nodes (|x| ≤ 9.5, where Φ(x) > 1e-21 so no underflow)."""
    return np.log(ndtr(x))


# Cached by assignment, not by a decorator: the same function, but mutation testing (mutmut leaves
# decorated functions alone) then reaches its body.  See DEVELOPERS.md "Mutation testing".
def _rule(points: int) -> tuple[np.ndarray, np.ndarray]:
    """Gauss-Legendre nodes and weights on [-1, 1] by Newton's method on P_n (all nodes at once).

    Starting values cos(π(i − 1/4)/(n + 1/2)) and the three-term recurrence for P_n and its
    derivative; weights 2 / ((1 − t²) P_n'(t)²).  Plain numpy, no linear algebra: the eigenvalue
    route (Golub-Welsch) calls a multi-threaded BLAS, which on a busy two-core machine spent
    seconds spinning for a 400-point rule.

    References
    ----------
    Press, W. H. et al. *Numerical Recipes*, 3rd ed. (2007), §4.6 (gauleg).
    """
    n = int(points)
    i = np.arange(1, n + 1, dtype=float)
    t = np.cos(np.pi * (i - 0.25) / (n + 0.5))
    for _ in range(100):
        p0, p1 = np.ones_like(t), t.copy()
        for k in range(2, n + 1):
            p0, p1 = p1, ((2 * k - 1) * t * p1 - (k - 1) * p0) / k
        dp = n * (t * p1 - p0) / (t * t - 1.0)
        step = p1 / dp
        t = t - step
        if float(np.max(np.abs(step))) < 1e-15:
            break
    p0, p1 = np.ones_like(t), t.copy()
    for k in range(2, n + 1):
        p0, p1 = p1, ((2 * k - 1) * t * p1 - (k - 1) * p0) / k
    dp = n * (t * p1 - p0) / (t * t - 1.0)
    w = 2.0 / ((1.0 - t * t) * dp * dp)
    return t[::-1].copy(), w[::-1].copy()


_rule = lru_cache(maxsize=None)(_rule)


def _outer() -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    t, w = _rule(400)
    x = t * _L
    return x, w * _L, ndtr(x), log_ndtr(x), log_ndtr(-x)


_outer = lru_cache(maxsize=1)(_outer)


def _inner() -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Nodes of the inner integral over y in (-L, x) for each outer node x: Φ(y), log(1 − Φ(y)), weights."""
    t, wt = _rule(200)
    xo = _outer()[0][:, None]
    half = (xo + _L) / 2.0
    y = half * t[None, :] + (xo - _L) / 2.0
    return ndtr(y), log_ndtr(-y), half * wt[None, :]


_inner = lru_cache(maxsize=1)(_inner)


def _check_n(n: int) -> int:
    if int(n) != n or n < 2 or n > MAX_N:
        raise WorkbenchError(f"chart constants need a subgroup size between 2 and {MAX_N}, not {n}")
    return int(n)


def c4(n: int) -> float:
    """Bias-correction factor of the sample standard deviation, E[s] = c4·σ.

    c4(n) = sqrt(2/(n-1)) · Γ(n/2) / Γ((n-1)/2), computed with log-gamma.

    References
    ----------
    Montgomery, *Introduction to Statistical Quality Control*, Appendix VI.
    """
    n = _check_n(n)
    return sqrt(2.0 / (n - 1)) * exp(lgamma(n / 2.0) - lgamma((n - 1) / 2.0))


c4 = lru_cache(maxsize=None)(c4)


def d2(n: int) -> float:
    """Expected range of ``n`` standard normal readings.

    d2(n) = ∫ [1 − Φ(x)^n − (1 − Φ(x))^n] dx over the real line.

    References
    ----------
    Tippett (1925), *Biometrika* 17.
    """
    n = _check_n(n)
    _x, w, _phi, log_phi, log_1m_phi = _outer()
    integrand = 1.0 - np.exp(n * log_phi) - np.exp(n * log_1m_phi)
    return float(np.dot(w, integrand))


d2 = lru_cache(maxsize=None)(d2)


def d3(n: int) -> float:
    """Standard deviation of the range of ``n`` standard normal readings.

    E[W²] = 2 ∬_{y<x} [1 − Φ(x)^n − (1−Φ(y))^n + (Φ(x) − Φ(y))^n] dy dx and
    d3 = sqrt(E[W²] − d2²).

    References
    ----------
    Montgomery, *Introduction to Statistical Quality Control*, Appendix VI (definition);
    the double integral follows from P(W > w) for the range of a normal sample.
    """
    n = _check_n(n)
    # Inner integral over y in (-L, x) for each outer node x, by a Gauss-Legendre rule mapped
    # onto that interval.
    _xo, wo, phi_o, log_phi_o, _ = _outer()
    phi_y, log_1m_phi_y, wy = _inner()
    diff = np.clip(phi_o[:, None] - phi_y, 0.0, 1.0)
    f = 1.0 - np.exp(n * log_phi_o)[:, None] - np.exp(n * log_1m_phi_y) + diff**n
    inner = np.sum(f * wy, axis=1)
    ew2 = 2.0 * float(np.dot(wo, inner))
    return sqrt(max(ew2 - d2(n) ** 2, 0.0))


d3 = lru_cache(maxsize=None)(d3)


def a2(n: int) -> float:
    """A2 = 3 / (d2·√n): X̄ chart limits from R̄."""
    return 3.0 / (d2(n) * sqrt(n))


def a3(n: int) -> float:
    """A3 = 3 / (c4·√n): X̄ chart limits from S̄."""
    return 3.0 / (c4(n) * sqrt(n))


def b3(n: int) -> float:
    """B3 = max(0, 1 − 3·√(1−c4²)/c4): S chart lower factor."""
    c = c4(n)
    return max(0.0, 1.0 - 3.0 * sqrt(1.0 - c * c) / c)


def b4(n: int) -> float:
    """B4 = 1 + 3·√(1−c4²)/c4: S chart upper factor."""
    c = c4(n)
    return 1.0 + 3.0 * sqrt(1.0 - c * c) / c


def d3_factor(n: int) -> float:
    """D3 = max(0, 1 − 3·d3/d2): R chart lower factor (named D3 in the tables)."""
    return max(0.0, 1.0 - 3.0 * d3(n) / d2(n))


def d4_factor(n: int) -> float:
    """D4 = 1 + 3·d3/d2: R chart upper factor."""
    return 1.0 + 3.0 * d3(n) / d2(n)


def e2(n: int = 2) -> float:
    """E2 = 3 / d2: individuals chart limits from the average moving range of span n."""
    return 3.0 / d2(n)


def table(ns: np.ndarray, fn) -> np.ndarray:
    """Evaluate a constant for an array of subgroup sizes (NaN where n < 2)."""
    ns = np.asarray(ns)
    if ns.size and ns.min() == ns.max():
        v = fn(int(ns.flat[0])) if ns.flat[0] >= 2 else np.nan
        return np.full(ns.shape, v)
    out = np.full(ns.shape, np.nan)
    for n in np.unique(ns):
        if n >= 2:
            out[ns == n] = fn(int(n))
    return out
