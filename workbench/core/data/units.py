"""The characteristic's name and unit: from the setup, else from an obvious data-file header.

A header such as ``fill_mL``, ``torque (N·m)``, ``diameter [mm]`` or ``weight g`` names the
characteristic and its unit; only units from a short list of common measurement units count as
obvious, so a header like ``lane_B`` or ``cap_id`` is never read as one.
"""
from __future__ import annotations

import re

UNITS = ("mL", "ml", "L", "l", "µL", "uL", "mm", "cm", "m", "µm", "um", "nm", "km", "in", "ft", "g", "kg", "mg",
         "µg", "lb", "oz", "N", "kN", "Nm", "N·m", "N.m", "Ncm", "s", "ms", "min", "h", "Hz", "kHz", "°C", "degC", "°F",
         "K", "Pa", "kPa", "MPa", "bar", "mbar", "psi", "V", "mV", "kV", "A", "mA", "W", "kW", "Ω", "ohm", "kohm",
         "pH", "%", "ppm", "rpm", "dB", "lux", "cP", "mPa·s")
"""Units read from a header (case-sensitive, as written; ``ml`` is shown as mL)."""
_CANON = {"ml": "mL", "l": "L", "uL": "µL", "um": "µm", "degC": "°C", "Nm": "N·m", "N.m": "N·m", "ohm": "Ω"}
_PATTERNS = (re.compile(r"^(?P<name>.+?)\s*[\(\[](?P<unit>[^\)\]]+)[\)\]]$"),   # torque (N·m), diameter [mm]
             re.compile(r"^(?P<name>.+?)[_\s](?P<unit>[^_\s]+)$"))             # fill_mL, weight g


def from_header(header: str | None) -> tuple[str | None, str | None]:
    """(name, unit) read from a column header when its unit is obvious, else (None, None)."""
    if not header:
        return None, None
    text = str(header).strip()
    for pat in _PATTERNS:
        m = pat.match(text)
        if m and m.group("unit").strip() in UNITS:
            unit = m.group("unit").strip()
            name = m.group("name").strip().replace("_", " ")
            return (name or None), _CANON.get(unit, unit)
    return None, None


def characteristic(settings, layout) -> tuple[str | None, str | None]:
    """The characteristic's (name, unit): the setup's when given, else what the value column's header says."""
    name, unit = getattr(settings, "name", None), getattr(settings, "unit", None)
    if name and unit:
        return name, unit
    h_name, h_unit = from_header(getattr(layout, "value", None))
    return name or h_name, unit or h_unit
