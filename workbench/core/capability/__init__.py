"""Process capability against a specification.

Owns the indices (Cp, Cpk, Pp, Ppk, Cpm …), their confidence bounds, expected and observed fallout,
the normality checks, the non-normal methods (Box-Cox, fitted distributions by the percentile method),
the choice between them, and the words and report sections of a capability result.

Modules (import them directly; this package imports nothing on its own, so a report without a
specification never loads scipy.stats):

* ``assess``    — ``assess(readings, sigma_within, …)`` → ``Capability``; ``validate_spec``.
* ``formulas``  — index formulas, bounds (chi-square, Bissell, Boyles) and fallout.
* ``method``    — choosing normal / Box-Cox / percentile.
* ``normality`` — Anderson–Darling with a p-value and a second opinion.
* ``nonnormal`` — Box-Cox and the fitted models.
* ``words``     — verdicts, warnings and cautions in plain words.
* ``histogram``, ``report`` — the text histogram and the report sections (JSON, text, Markdown).
"""

__all__ = ["assess", "formulas", "method", "normality", "nonnormal", "words", "histogram", "report"]
