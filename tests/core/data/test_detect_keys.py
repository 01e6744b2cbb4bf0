"""Column detection: a key is never a stream; a stream far from the others stops detection and asks."""
from __future__ import annotations

import numpy as np
import pytest

from workbench.core.data.reader import load
from workbench.core.model import WorkbenchError


def _write(path, header, rows):
    path.write_text(header + "\n" + "\n".join(",".join(str(x) for x in r) for r in rows) + "\n", encoding="utf-8")


@pytest.mark.parametrize("name", ["sg", "k", "row_id"])
def test_a_column_counting_up_is_the_key_never_a_stream(tmp_path, name):
    # the file: sg = 1…N beside five readings; any name: strictly increasing whole numbers [definition]
    rng = np.random.default_rng(3)
    rows = [[i + 1, *np.round(rng.normal(10, 0.1, 5), 2)] for i in range(30)]
    _write(tmp_path / "d.csv", f"{name},S1,S2,S3,S4,S5", rows)
    ds = load(tmp_path / "d.csv")
    assert ds.streams == ("S1", "S2", "S3", "S4", "S5") and ds.layout.subgroup == name
    assert ds.labels[0] == "1" and ds.m == 30


def test_a_stream_far_from_the_others_stops_detection_and_names_it(tmp_path):
    rng = np.random.default_rng(4)
    rows = [[f"2026-01-01 00:{i:02d}", *np.round(rng.normal(10, 0.1, 3), 2), round(rng.normal(250, 3), 1)]
            for i in range(30)]
    _write(tmp_path / "d.csv", "time,S1,S2,S3,W", rows)
    with pytest.raises(WorkbenchError, match=r"column 'W' .* pooled SDs .* give --streams"):
        load(tmp_path / "d.csv")
    from workbench.core.model import LayoutRequest
    ds = load(tmp_path / "d.csv", LayoutRequest(streams=("S1", "S2", "S3")))   # given: no question
    assert ds.streams == ("S1", "S2", "S3")
