"""What changed there: the context columns of the data (lot, operator, shift, tool id, …) as leads.

Modules (import them directly; this package imports nothing on its own):

* ``ranking`` — how strongly each context column's levels separate the plotted statistic (one-way ANOVA,
  Kruskal–Wallis, η², level means in σ units), ranked, with the Benjamini–Hochberg step-up adjustment.
* ``leads``   — the context changes near an anchor (a signal's first point, a change point, a range's ends),
  nearest first, each with its column's separation.
* ``words``   — the plain-words sentences of both, and the caution that they are leads, not verdicts.

The per-subgroup context values themselves are read with the data (``core/data/context.py``).
"""
