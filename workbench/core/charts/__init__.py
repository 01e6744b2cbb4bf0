"""Control charts: the constants, the chart kernels, the run rules and the signals they make.

Owns the statistics of the charts; ``workbench.core.analysis.analyse`` assembles them.

Modules (import them directly; this package imports nothing on its own):

* ``constants``  — c4, d2, d3 from their definitions and the derived factors (A2, A3, D3, D4, B3, B4, E2).
* ``variables``  — X̄-R, X̄-S and I-MR kernels with per-point limits and the sigma estimators.
* ``attribute``  — p, np, c, u and Laney p′ / u′.
* ``smallshift`` — EWMA and the two-sided tabular CUSUM.
* ``rules``      — the run rules, vectorised, and the rule sets.
* ``signals``    — firings grouped into signals (``SignalTable``).
"""

__all__ = ["constants", "variables", "attribute", "smallshift", "rules", "signals"]
