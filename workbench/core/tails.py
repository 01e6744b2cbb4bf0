"""Upper tail probabilities of the F and chi-square distributions, in plain Python.

The headless report needs two p-values (one-way ANOVA and Kruskal–Wallis) and the normal
distribution function; importing scipy for them costs more than the rest of a report of a
million readings.  These are the classical continued-fraction algorithms; the tests check them
against scipy.special / scipy.stats.

References
----------
Press, W. H., Teukolsky, S. A., Vetterling, W. T. & Flannery, B. P. *Numerical Recipes*, 3rd ed.,
§6.2 (incomplete gamma function: series and Lentz continued fraction) and §6.4 (incomplete beta
function, continued fraction).
Abramowitz, M. & Stegun, I. A. (1964), 26.6.2 (F tail as an incomplete beta) and 26.4.19 (chi-square
tail as an incomplete gamma).
"""
from __future__ import annotations

import math

import numpy as np

_EPS = 1e-15
_TINY = 1e-300
_MAXIT = 100_000


def _lentz(coef, first: float) -> float:
    """Evaluate a continued fraction b0 + a1/(b1 + a2/(b2 + ...)) by the modified Lentz method."""
    f = first if first != 0 else _TINY
    c, d = f, 0.0
    for m in range(1, _MAXIT):
        a, b = coef(m)
        d = b + a * d
        d = 1.0 / (d if abs(d) > _TINY else _TINY)
        c = b + a / c
        c = c if abs(c) > _TINY else _TINY
        delta = c * d
        f *= delta
        if abs(delta - 1.0) < _EPS:
            return f
    raise ArithmeticError("continued fraction did not converge")


def _betacf(a: float, b: float, x: float) -> float:
    """Continued fraction of the incomplete beta function (Numerical Recipes betacf)."""
    def coef(k: int) -> tuple[float, float]:
        m = k // 2
        if k % 2:  # odd terms d_{2m+1}
            return -(a + m) * (a + b + m) * x / ((a + 2 * m) * (a + 2 * m + 1)), 1.0
        return m * (b - m) * x / ((a + 2 * m - 1) * (a + 2 * m)), 1.0
    return 1.0 / _lentz(coef, 1.0)


def beta_inc(a: float, b: float, x: float) -> float:
    """Regularised incomplete beta function I_x(a, b)."""
    if x <= 0.0:
        return 0.0
    if x >= 1.0:
        return 1.0
    log_front = (math.lgamma(a + b) - math.lgamma(a) - math.lgamma(b) + a * math.log(x) + b * math.log1p(-x))
    if x < (a + 1.0) / (a + b + 2.0):
        return math.exp(log_front) * _betacf(a, b, x) / a
    return 1.0 - math.exp(log_front) * _betacf(b, a, 1.0 - x) / b


def f_sf(f: float, dfn: float, dfd: float) -> float:
    """P(F > f) for an F(dfn, dfd) variable: I_{dfd/(dfd + dfn·f)}(dfd/2, dfn/2)."""
    if not f > 0:
        return 1.0
    return beta_inc(dfd / 2.0, dfn / 2.0, dfd / (dfd + dfn * f))


def gamma_q(a: float, x: float) -> float:
    """Regularised upper incomplete gamma function Q(a, x)."""
    if x <= 0.0:
        return 1.0
    log_front = -x + a * math.log(x) - math.lgamma(a)
    if x < a + 1.0:  # series for P, then Q = 1 − P
        term = total = 1.0 / a
        ap = a
        for _ in range(_MAXIT):
            ap += 1.0
            term *= x / ap
            total += term
            if abs(term) < abs(total) * _EPS:
                break
        return max(0.0, 1.0 - total * math.exp(log_front))
    def coef(k: int) -> tuple[float, float]:  # Q = e^{-x} x^a / Γ(a) · 1/(x+1−a − 1(1−a)/(x+3−a − ...))
        return -k * (k - a), x + 2 * k + 1.0 - a
    return math.exp(log_front) / _lentz(coef, x + 1.0 - a)


def chi2_sf(x: float, df: float) -> float:
    """P(X > x) for a chi-square variable with ``df`` degrees of freedom: Q(df/2, x/2)."""
    return gamma_q(df / 2.0, x / 2.0)


_erfc = np.frompyfunc(math.erfc, 1, 1)


def norm_cdf(x: np.ndarray) -> np.ndarray:
    """Φ(x) = erfc(−x/√2)/2, elementwise (math.erfc, accurate to a few ulp)."""
    return _erfc(-np.asarray(x, float) / math.sqrt(2.0)).astype(float) / 2.0


def log_norm_cdf(x: np.ndarray) -> np.ndarray:
    """log Φ(x) for |x| ≤ 30 (no underflow in that range)."""
    return np.log(norm_cdf(x))
