"""Process capability against a specification.

Owns the indices (Cp, Cpk, Pp, Ppk, Cpm …), their confidence bounds, expected and observed fallout,
the normality checks, the non-normal methods (Box-Cox, fitted distributions by the percentile method),
the choice between them, and the words and report sections of a capability result.

Modules (import them directly; this package imports nothing on its own, so a report without a
specification never loads scipy.stats):

* ``assess``    — ``assess(readings, sigma_within, …)`` → ``Capability``; ``validate_spec``.
* ``formulas``  — index formulas, bounds (chi-square, Bissell, Boyles) and fallout.
* ``method``    — choosing normal / Box-Cox / percentile.
* ``normality`` — Anderson–Darling with a p-value and a second opinion; for rounded readings the
  chi-square of the interval-censored normal fit over the resolution cells.
* ``nonnormal`` — Box-Cox and the fitted models.
* ``resolution`` — the readings' grid δ, distinct values, δ/σ and the coarse-resolution rule of thumb.
* ``censored``  — interval-censored maximum-likelihood fits and the binned test of fit (rounded readings).
* ``departure`` — how far a non-normal model's 0.135 % / 99.865 % points lie from the normal model's.
* ``words``     — verdicts, warnings and cautions in plain words.
* ``statements`` — the figures as statements led by the verdict (fit view and reports).
* ``picture``   — the specification strip and the normal quantile plot, as text.
* ``histogram``, ``report`` — the text histogram and the report sections (JSON, text, Markdown).
"""

__all__ = ["assess", "formulas", "method", "normality", "nonnormal", "resolution", "censored", "departure",
           "words", "statements", "picture", "histogram", "report"]
