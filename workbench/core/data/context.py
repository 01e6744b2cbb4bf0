"""Context columns per subgroup: the lot, operator, shift or tool id a long file repeats on each reading.

A context column of long data has one value per row; a subgroup keeps the value of its first row,
and where the value varies inside the subgroup, the set of its distinct values in first-seen order
(shown ``L-2291 | L-2292``).  Vectorised: one ``pandas.factorize`` per column, a comparison of
each row with its subgroup's first row, and Python work only for the subgroups that vary.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from workbench.core.model import CONTEXT_JOIN


def sets(texts: np.ndarray, sg: np.ndarray, first: np.ndarray) -> tuple[np.ndarray, dict[int, tuple[str, ...]]]:
    """Per-subgroup display text and, for the subgroups where the column varies, its distinct values.

    Parameters
    ----------
    texts : numpy.ndarray of str
        The column's cell text of each row, rows in subgroup (time) order.
    sg : numpy.ndarray of int
        Each row's subgroup code (0 … m − 1).
    first : numpy.ndarray of int
        Each subgroup's first row.

    Returns
    -------
    (numpy.ndarray of str, dict)
        The display text of each subgroup (its one value, or its values joined by ``CONTEXT_JOIN``) and
        {subgroup: distinct non-empty values in first-seen order} for the subgroups with more than one.
    """
    codes, uniq = pd.factorize(texts)
    display = texts[first]
    differs = codes != codes[first][sg]
    if not differs.any():
        return display, {}
    varies = np.zeros(len(first), bool)
    varies[sg[differs]] = True
    rows = np.flatnonzero(varies[sg])
    pair = sg[rows].astype(np.int64) * max(len(uniq), 1) + codes[rows]
    rows = rows[~pd.Series(pair).duplicated().to_numpy()]           # each (subgroup, value) once, first seen
    rows = rows[np.argsort(sg[rows], kind="stable")]
    g, c = sg[rows], codes[rows]
    cuts = np.flatnonzero(np.r_[True, g[1:] != g[:-1], True])
    shown = display.astype(object)
    found: dict[int, tuple[str, ...]] = {}
    for a, b in zip(cuts[:-1].tolist(), cuts[1:].tolist()):
        values = tuple(str(v) for v in uniq[c[a:b]] if str(v) != "")
        if len(values) > 1:
            found[int(g[a])] = values
            shown[g[a]] = CONTEXT_JOIN.join(values)
        elif values:
            shown[g[a]] = values[0]
    return np.asarray(shown, dtype=str), found
