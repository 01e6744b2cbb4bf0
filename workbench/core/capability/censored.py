"""Models fitted to rounded readings: interval-censored maximum likelihood and a binned test of fit.

A reading x from a gauge with resolution δ says only that the value lay in [x − δ/2, x + δ/2].
The likelihood of the readings is then the product over the distinct readings of
(F(x + δ/2) − F(x − δ/2))^count, and the fit is judged on the counts per resolution cell
(Pearson's chi-square, adjacent cells pooled until each expects at least 5 readings).
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy import optimize, special, stats

from workbench.core.capability.nonnormal import BinnedFit, Candidate, FitInfo, ad_of, frozen

MAX_CELLS = 2000
"""More resolution cells than this are merged into blocks of whole cells (the likelihood stays exact
for the wider cells; it only loses a little efficiency)."""
MIN_EXPECTED = 5.0
"""Pool adjacent cells until each expects at least this many readings (Cochran's rule, common practice)."""
PARAMS = {"normal": 2, "lognormal": 2, "weibull": 2, "gamma": 2, "box-cox": 3}


@dataclass(frozen=True)
class Cells:
    """Readings counted per resolution cell."""

    lower: np.ndarray
    """Lower edge of each cell that holds readings (x − δ/2 for a single grid step)."""
    upper: np.ndarray
    """Upper edge of each such cell."""
    counts: np.ndarray
    """Readings in each cell."""
    width: float
    """Cell width: δ, or a whole multiple of it when the cells were merged."""
    edges: np.ndarray
    """All inner edges from the lowest to the highest occupied cell (for the test of fit)."""
    all_counts: np.ndarray
    """Counts of every cell between the edges, empty ones included (len(edges) + 1; the end cells open)."""


def cells_of(x: np.ndarray, step: float) -> Cells:
    """Count the readings ``x`` per cell of the grid ``step`` (cells merged to at most MAX_CELLS)."""
    k = np.round(np.asarray(x, dtype=float) / step).astype(np.int64)
    k0 = int(k.min())
    span = int(k.max()) - k0 + 1
    m = max(1, math.ceil(span / MAX_CELLS))
    b = (k - k0) // m
    nb = int(b.max()) + 1
    all_counts = np.bincount(b, minlength=nb)
    lo_all = (k0 + np.arange(nb) * m - 0.5) * step
    hi_all = lo_all + m * step
    occ = all_counts > 0
    return Cells(lo_all[occ], hi_all[occ], all_counts[occ].astype(float), m * step, hi_all[:-1],
                 all_counts.astype(float))


def model_cdf(name: str, params: dict, x: np.ndarray, shift: float = 0.0):
    """(cdf, sf) of a fitted model at the original-scale values ``x``."""
    if name == "normal":
        z = (x - params["mean"]) / params["sd"]
        return special.ndtr(z), special.ndtr(-z)
    u = x + shift
    if name == "box-cox":
        lam, m, s = params["lambda"], params["mean"], params["sd"]
        with np.errstate(all="ignore"):
            y = special.boxcox(np.maximum(u, 1e-300), lam)
        z = np.where(u > 0, (y - m) / s, -np.inf)
        return special.ndtr(z), special.ndtr(-z)
    d = frozen(name, tuple(params.items()))
    return d.cdf(u), d.sf(u)


def cell_probabilities(name: str, params: dict, lower: np.ndarray, upper: np.ndarray, shift: float = 0.0):
    """Probability of each cell [lower, upper] under the model (accurate in both tails)."""
    cl, sl = model_cdf(name, params, lower, shift)
    cu, su = model_cdf(name, params, upper, shift)
    return np.where(cu < 0.5, cu - cl, sl - su)


def loglik(name: str, params: dict, cells: Cells, shift: float = 0.0) -> float:
    """Interval-censored log-likelihood Σ count · log P(cell)."""
    p = cell_probabilities(name, params, cells.lower, cells.upper, shift)
    with np.errstate(divide="ignore"):
        return float(np.dot(cells.counts, np.log(np.maximum(p, 0.0))))


def _unpack(name: str, start: dict, th: np.ndarray) -> dict:
    """Parameters from the optimiser's scaled, unconstrained vector (0 = the start)."""
    if name == "normal":
        return {"mean": start["mean"] + start["sd"] * th[0], "sd": start["sd"] * math.exp(th[1])}
    if name == "lognormal":
        ml, s = math.log(start["scale"]), start["s"]
        return {"s": s * math.exp(th[1]), "scale": math.exp(ml + s * th[0])}
    if name == "weibull":
        b, ls = 1.0 / start["c"], math.log(start["scale"])
        return {"c": 1.0 / (b * math.exp(th[1])), "scale": math.exp(ls + b * th[0])}
    if name == "gamma":
        mean, sd = start["a"] * start["scale"], math.sqrt(start["a"]) * start["scale"]
        mu, sg = mean + sd * th[0], sd * math.exp(th[1])
        return {"a": (mu / sg) ** 2, "scale": sg * sg / mu}
    if name == "box-cox":
        lam0, m0, s0 = start["lambda"], start["mean"], start["sd"]
        med0 = float(special.inv_boxcox(m0, lam0))
        sdo0 = s0 / med0 ** (lam0 - 1.0)
        lam = lam0 + th[0]
        med = med0 + sdo0 * th[1]
        sdo = sdo0 * math.exp(th[2])
        return {"lambda": lam, "mean": float(special.boxcox(med, lam)), "sd": sdo * med ** (lam - 1.0)}
    raise ValueError(name)


def fit_censored(name: str, start: dict, cells: Cells, shift: float = 0.0) -> tuple[dict, float]:
    """Interval-censored maximum-likelihood parameters of ``name`` from the continuous fit ``start``.

    Returns the parameters (same names as ``start``) and the maximised log-likelihood.

    References
    ----------
    Lindley, D. V. (1950), "Grouping corrections and maximum likelihood equations", Proc. Cambridge
    Phil. Soc. 46; Kulldorff, G. (1961), *Contributions to the theory of estimation from grouped and
    partially grouped samples* (maximum likelihood from grouped data).
    """
    k = PARAMS[name]

    def nll(th):
        try:
            p = _unpack(name, start, th)
        except (ValueError, OverflowError, ZeroDivisionError):
            return np.inf
        if not all(math.isfinite(v) for v in p.values()):
            return np.inf
        v = -loglik(name, p, cells, shift)
        return v if math.isfinite(v) else np.inf

    th = np.zeros(k)
    best = nll(th)
    for _ in range(3):
        res = optimize.minimize(nll, th, method="Nelder-Mead",
                                options={"xatol": 1e-10, "fatol": 1e-11, "maxiter": 4000 * k,
                                         "initial_simplex": th + np.vstack([np.zeros(k), 0.05 * np.eye(k)])})
        if not res.fun < best - 1e-10:
            if res.fun <= best:
                th, best = res.x, res.fun
            break
        th, best = res.x, res.fun
    return _unpack(name, start, th), -float(best)


def binned_fit(name: str, params: dict, cells: Cells, shift: float = 0.0) -> BinnedFit:
    """Pearson's chi-square of the counts per cell against the fitted model, sparse cells pooled.

    The end cells are open (below the lowest / above the highest inner edge); adjacent cells are
    pooled from the left until each expects at least MIN_EXPECTED readings, and a short remainder
    joins the last pooled cell.

    References
    ----------
    Pearson, K. (1900); Cochran, W. G. (1954), "Some methods for strengthening the common χ² tests",
    Biometrics 10 (expected counts of at least about 5); degrees of freedom reduced by the number of
    parameters fitted from the grouped data (Fisher 1924; Cramér 1946, ch. 30).
    """
    n = float(cells.all_counts.sum())
    c, s = model_cdf(name, params, cells.edges, shift)
    cdf = np.concatenate([[0.0], c, [1.0]])
    sf = np.concatenate([[1.0], s, [0.0]])
    p = np.where(cdf[1:] < 0.5, cdf[1:] - cdf[:-1], sf[:-1] - sf[1:])
    e = n * np.maximum(p, 0.0)
    obs, exp_ = [], []
    acc_o = acc_e = 0.0
    for o_j, e_j in zip(cells.all_counts, e):
        acc_o += o_j
        acc_e += e_j
        if acc_e >= MIN_EXPECTED:
            obs.append(acc_o)
            exp_.append(acc_e)
            acc_o = acc_e = 0.0
    if acc_o or acc_e:
        if obs:
            obs[-1] += acc_o
            exp_[-1] += acc_e
        else:
            obs, exp_ = [acc_o], [acc_e]
    o, e = np.asarray(obs), np.asarray(exp_)
    with np.errstate(divide="ignore", invalid="ignore"):
        chi2 = float(np.sum(np.where(e > 0, (o - e) ** 2 / e, 0.0)))
    df = len(o) - 1 - PARAMS[name]
    pval = float(stats.chi2.sf(chi2, df)) if df >= 1 else None
    return BinnedFit(chi2, df, pval, len(o))


def refit(fit: FitInfo, x: np.ndarray, step: float) -> FitInfo:
    """The candidates of ``fit`` refitted to the readings as intervals of width ``step``.

    Each continuous fit is the start of its interval-censored fit; the candidates are ranked again
    by AIC = 2k − 2 log L of the interval likelihoods (comparable: every model sees the same cells),
    and each carries its binned test of fit.  A candidate whose refit fails keeps no place (the
    reason is added to ``skipped``).
    """
    cells = cells_of(x, step)
    out, skipped = [], list(fit.skipped)
    for c in fit.candidates:
        shift = 0.0 if c.name == "normal" else fit.shift
        try:
            params, ll = fit_censored(c.name, dict(c.params), cells, shift)
        except (ValueError, OverflowError, FloatingPointError) as exc:
            skipped.append(f"{c.name}: the interval fit failed ({exc})")
            continue
        if not math.isfinite(ll):
            skipped.append(f"{c.name}: the interval fit failed (no finite likelihood)")
            continue
        items = tuple((k, float(v)) for k, v in params.items())
        with np.errstate(all="ignore"):
            ad = ad_of(c.name, items, x, fit.shift)
        out.append(Candidate(c.name, items, ll, 2.0 * PARAMS[c.name] - 2.0 * ll, ad,
                             binned_fit(c.name, params, cells, shift)))
    if not out:
        return fit
    out.sort(key=lambda c: c.aic)
    best, second = out[0], (out[1] if len(out) > 1 else None)
    return FitInfo(best.name, best.params, fit.criterion, best.aic, second.name if second else None,
                   second.aic if second else None, tuple(out), tuple(skipped), fit.shift, float(step))
