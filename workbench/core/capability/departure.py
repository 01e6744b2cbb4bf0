"""How far a fitted non-normal model's tails lie from the normal model's, as a share of the tolerance.

With many readings a test of normality rejects departures far too small to matter.  What matters
for capability is where the model puts the process's natural limits: the 0.135 % and 99.865 %
points.  This module measures how far the best non-normal model moves them from the normal
model's, against the room the specification gives.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy import special, stats

from workbench.core.capability.nonnormal import TAIL, FitInfo, frozen

MATTERS = 0.025
"""A tail point moved by at least 2.5 % of the tolerance changes the method (see ``Departure``)."""


@dataclass(frozen=True)
class Departure:
    """The non-normal model's 0.135 % / 99.865 % points against the normal model's."""

    model: str
    """The non-normal model compared (the best one by AIC)."""
    low: float
    """Its 0.135 % point minus the normal model's (original units)."""
    high: float
    """Its 99.865 % point minus the normal model's (original units)."""
    basis: str
    """"tolerance" (USL − LSL) or "one-sided" (twice the distance from the mean to the one limit)."""
    room: float | None
    """What the shift is measured against: USL − LSL, or for a one-sided specification twice the
    distance from the normal model's mean to the limit (None when that is not positive)."""
    share: float | None
    """The larger shift on a side that has a limit, as a share of ``room``."""
    threshold: float
    """The share from which the departure matters (MATTERS)."""
    matters: bool | None
    """share ≥ threshold (None when no share could be formed)."""


def quantiles(name: str, params: tuple[tuple[str, float], ...], shift: float, probs) -> np.ndarray:
    """Quantiles of a fitted candidate on the original scale (normal, the four families, Box-Cox)."""
    q = np.asarray(probs, dtype=float)
    p = dict(params)
    if name == "normal":
        return p["mean"] + p["sd"] * stats.norm.ppf(q)
    if name == "box-cox":
        return special.inv_boxcox(p["mean"] + p["sd"] * stats.norm.ppf(q), p["lambda"]) - shift
    return frozen(name, params).ppf(q) - shift


def departure(fit: FitInfo, lsl: float | None, usl: float | None) -> Departure | None:
    """Departure of the best non-normal candidate of ``fit`` from its normal candidate (None without both)."""
    normal = next((c for c in fit.candidates if c.name == "normal"), None)
    other = next((c for c in fit.candidates if c.name != "normal"), None)
    if normal is None or other is None:
        return None
    probs = (TAIL, 1.0 - TAIL)
    qn = quantiles("normal", normal.params, 0.0, probs)
    qm = quantiles(other.name, other.params, fit.shift, probs)
    low, high = float(qm[0] - qn[0]), float(qm[1] - qn[1])
    mean = dict(normal.params)["mean"]
    basis = "tolerance" if lsl is not None and usl is not None else "one-sided"
    if lsl is not None and usl is not None:
        room, sides = usl - lsl, (low, high)
    elif lsl is not None:
        room, sides = 2.0 * (mean - lsl), (low,)
    else:
        room, sides = 2.0 * (usl - mean), (high,)
    if not (np.isfinite(room) and room > 0 and all(np.isfinite(sides))):
        return Departure(other.name, low, high, basis, None, None, MATTERS, None)
    share = max(abs(v) for v in sides) / room
    return Departure(other.name, low, high, basis, float(room), float(share), MATTERS, bool(share >= MATTERS))


TAIL_READINGS = 10
"""The readings' own 0.135 % / 99.865 % points count as known once about this many readings lie
beyond each (n of at least 10 / 0.00135, about 7,400)."""


def _room(lsl: float | None, usl: float | None, mean: float) -> float | None:
    if lsl is not None and usl is not None:
        return usl - lsl
    room = 2.0 * (mean - lsl) if lsl is not None else 2.0 * (usl - mean)
    return room if room > 0 else None


def tail_gap(name: str, params, shift: float, x: np.ndarray, lsl: float | None, usl: float | None) -> float | None:
    """How far a model's 0.135 % / 99.865 % points lie from the readings' own, as a share of the tolerance.

    Only with enough readings to place those points directly (see TAIL_READINGS); None otherwise.
    The sides without a limit are ignored.
    """
    n = x.size
    if n * TAIL < TAIL_READINGS:
        return None
    emp = np.quantile(x, [TAIL, 1.0 - TAIL])
    q = quantiles(name, params, shift, [TAIL, 1.0 - TAIL])
    room = _room(lsl, usl, float(np.mean(x)))
    if room is None or not np.all(np.isfinite(q)):
        return None
    gaps = [abs(q[0] - emp[0])] if lsl is not None else []
    gaps += [abs(q[1] - emp[1])] if usl is not None else []
    return float(max(gaps) / room)
