"""The reading grid of a gauge (its resolution) and what it does to a capability study.

A gauge that rounds to a step δ turns each reading x into the statement "the value lay in
[x − δ/2, x + δ/2]".  This module finds δ, counts the distinct readings and judges whether the
resolution is coarse for the task; ``censored`` fits models to the readings as such intervals.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

MAX_DECIMALS = 8
"""Finest grid looked for: 10⁻⁸ of the readings' unit (finer grids count as continuous)."""
MIN_STEPS_IN_SPREAD = 10
"""Common practice: at least about ten resolution steps across the process spread (6σ)."""
MAX_TOLERANCE_SHARE = 0.10
"""Common practice (the ten-to-one rule): resolution at most 1/10 of the tolerance."""


@dataclass(frozen=True)
class Resolution:
    """The reading grid of the readings and how it compares with their spread and the tolerance."""

    step: float | None
    """δ, the step of the readings' grid (None: no grid of 10⁻⁸ or coarser was found)."""
    decimals: int | None
    """Decimal places that carry the grid (0 for whole numbers; None without a grid)."""
    distinct: int
    """Number of distinct readings."""
    step_over_sigma: float | None
    """δ / σ overall (None without a grid or without spread)."""
    steps_in_spread: float | None
    """6σ / δ: resolution steps across the natural spread (common practice wants about 10 or more)."""
    tolerance_share: float | None
    """δ / (USL − LSL) (None without a grid or for a one-sided specification)."""
    rounded: bool
    """The readings repeat on the grid, so models are fitted to them as intervals [x − δ/2, x + δ/2]."""
    coarse: bool
    """Fewer than about ten steps across the spread, or δ above 1/10 of the tolerance."""


def detect_step(x: np.ndarray) -> tuple[float | None, int | None]:
    """The reading grid δ of ``x`` and the number of decimals that carry it.

    The fewest decimals d (0 … 8) at which every reading times 10^d is a whole number (to the
    precision of a double) give the grid's unit; δ is the greatest common divisor of the gaps
    between the distinct whole numbers, times 10^−d.  Readings in steps of 0.5 or 0.2 therefore
    give δ = 0.5 or 0.2, not 0.1.
    """
    v = np.unique(np.asarray(x, dtype=float))
    return _step_of_distinct(v[np.isfinite(v)])


def _on_grid(s: np.ndarray) -> bool:
    tol = np.maximum(1e-6, 64 * np.finfo(float).eps * np.abs(s))
    return bool(np.all(np.abs(s - np.round(s)) <= tol))


def _step_of_distinct(v: np.ndarray) -> tuple[float | None, int | None]:
    if v.size < 2:
        return None, None
    probe = v[:: max(1, v.size // 1000)]
    first = next((d for d in range(MAX_DECIMALS + 1) if _on_grid(probe * 10.0 ** d)), None)
    if first is None:                       # not even a sample of the readings lies on a grid
        return None, None
    for d in range(first, MAX_DECIMALS + 1):
        s = v * 10.0 ** d
        if np.max(np.abs(s)) >= 2.0 ** 52:
            return None, None
        if _on_grid(s):
            k = np.round(s).astype(np.int64)
            g = int(np.gcd.reduce(np.diff(k)))
            return g / 10.0 ** d, d
    return None, None


def resolution(x: np.ndarray, sigma: float, lsl: float | None, usl: float | None) -> Resolution:
    """Resolution of the readings ``x`` against their spread ``sigma`` and the specification."""
    x = np.asarray(x, dtype=float)
    v = np.unique(x)
    distinct = int(v.size)
    step, dec = _step_of_distinct(v[np.isfinite(v)])
    ok = step is not None and step > 0
    over = step / sigma if ok and sigma > 0 else None
    steps = 6.0 * sigma / step if ok and sigma > 0 else None
    share = step / (usl - lsl) if ok and lsl is not None and usl is not None else None
    rounded = bool(ok and distinct < x.size)
    coarse = bool((steps is not None and steps < MIN_STEPS_IN_SPREAD)
                  or (share is not None and share > MAX_TOLERANCE_SHARE))
    return Resolution(step if ok else None, dec if ok else None, distinct, over, steps, share, rounded, coarse)
