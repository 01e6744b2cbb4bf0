"""The characteristic's name and unit: from the setup, else from an obvious value-column header."""
from __future__ import annotations

import pytest

from workbench.core.data.units import characteristic, from_header
from workbench.core.model import Layout, Settings


@pytest.mark.parametrize("header, want", [
    ("fill_mL", ("fill", "mL")),
    ("fill_ml", ("fill", "mL")),                 # shown in its usual spelling
    ("torque (N·m)", ("torque", "N·m")),
    ("bore diameter [mm]", ("bore diameter", "mm")),
    ("cap_torque_Nm", ("cap torque", "N·m")),
    ("weight g", ("weight", "g")),
])
def test_obvious_headers_name_the_unit(header, want):
    assert from_header(header) == want


@pytest.mark.parametrize("header", ["value", "fill", "lane_B", "cap_id", "reading_2", "", None, "x (note)"])
def test_other_headers_name_nothing(header):
    assert from_header(header) == (None, None)


def test_the_setup_wins_over_the_header():
    layout = Layout(kind="long", subgroup="t", stream="head", value="fill_mL")
    assert characteristic(Settings(), layout) == ("fill", "mL")
    assert characteristic(Settings(name="fill volume", unit="cL"), layout) == ("fill volume", "cL")
    assert characteristic(Settings(unit="cL"), layout) == ("fill", "cL")
    assert characteristic(Settings(), Layout(kind="wide", subgroup="t")) == (None, None)


def test_settings_without_name_or_unit_keep_their_dict():
    """Older case files hold settings without these keys; writing them back must not add any."""
    d = Settings().as_dict()
    assert "name" not in d and "unit" not in d
    s = Settings(name="fill volume", unit="mL")
    assert Settings.from_dict(s.as_dict()) == s
