"""Each stream on its own: an individuals chart on the stream's readings alone (Montgomery, I-MR)."""
from __future__ import annotations

import numpy as np
import pytest

from tests.conftest import make_dataset
from workbench.core.analysis import analyse
from workbench.core.model import Exclusion, Settings, WorkbenchError
from workbench.core.stream_charts import stream_chart, stream_charts

# Montgomery & Runger individuals example [printed], and a second stream made from it (shifted, reordered)
A = np.array([102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1, 101.3, 98.7, 101.1, 98.4, 97.0, 96.7,
              100.3, 101.4, 97.2, 101.0])
B = A[::-1] + 1.5
D2 = 1.128  # d2 for moving ranges of two [printed]


def _imr_by_hand(x: np.ndarray) -> tuple[float, float, float, float]:
    """Centre, LCL, UCL of the individuals chart and the MR chart's UCL [definition: x̄ ± 3·MR̄/d2, D4·MR̄]."""
    mr = np.abs(np.diff(x)).mean()
    sigma = mr / D2
    return x.mean(), x.mean() - 3 * sigma, x.mean() + 3 * sigma, 3.267 * mr  # D4 = 3.267 for n = 2 [printed]


def test_each_stream_gets_the_individuals_chart_of_its_own_readings():
    a = analyse(make_dataset(np.column_stack([A, B]), streams=("left", "right")), Settings(chart="xbar-r"))
    charts = stream_charts(a)
    assert [c.stream for c in charts] == ["left", "right"]
    for sc, x in zip(charts, (A, B)):
        b = sc.analysis
        centre, lcl, ucl, mr_ucl = _imr_by_hand(x)
        assert b.chart == "imr"
        assert b.location.center[0] == pytest.approx(centre, rel=1e-12)
        assert b.location.lcl[0] == pytest.approx(lcl, rel=1e-3)   # d2 to 4 figures in print
        assert b.location.ucl[0] == pytest.approx(ucl, rel=1e-3)
        assert b.spread.ucl[0] == pytest.approx(mr_ucl, rel=1e-3)
    # the subgroup chart's limits are not the streams' (X̄ of two readings): the views must differ
    assert a.location.ucl[0] != pytest.approx(charts[0].analysis.location.ucl[0], rel=1e-3)


def test_a_stream_leaves_out_whole_subgroup_exclusions_and_its_own_readings_only():
    ds = make_dataset(np.column_stack([A, B]), streams=("left", "right"))
    a = analyse(ds, Settings(chart="xbar-r"), [Exclusion("2", "left"), Exclusion("5")])
    left, right = stream_chart(a, "left").analysis, stream_chart(a, "right").analysis
    # the left stream without subgroups 2 and 5: its centre is the mean of the other 18 readings [definition]
    assert left.location.center[0] == pytest.approx(np.delete(A, [1, 4]).mean(), rel=1e-12)
    assert right.location.center[0] == pytest.approx(np.delete(B, [4]).mean(), rel=1e-12)


def test_one_stream_is_refused_in_plain_words():
    a = analyse(make_dataset(A), Settings(chart="imr"))
    with pytest.raises(WorkbenchError, match="two streams or more"):
        stream_charts(a)
