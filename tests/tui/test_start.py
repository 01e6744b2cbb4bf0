"""Starting: what `workbench` and `workbench open ...` ask the app to open."""
from __future__ import annotations

import pytest

from workbench.cli import build_parser
from workbench.core.model import WorkbenchError
from workbench.demo import demo_path, demo_settings_for
from workbench.tui.app import request_from_args


def _request(*argv):
    return request_from_args(build_parser().parse_args(["open", *argv]))


def test_no_arguments_open_the_demo_with_its_specification():
    req = _request()
    assert req.path == demo_path() and req.reuse == "reuse" and not req.settings_given
    # demo_data/README.md: specification 497.0–503.0 mL, target 500.0
    assert req.settings == demo_settings_for(demo_path())
    assert (req.settings.spec.lsl, req.settings.spec.usl, req.settings.spec.target) == (497.0, 503.0, 500.0)


def test_a_data_file_asks_before_reusing_a_case_and_keeps_the_options(in_tmp):
    (in_tmp / "line.csv").write_text("sample,A,B\n1,1,2\n2,2,3\n", encoding="utf-8")
    req = _request("line.csv", "--chart", "xbar-s", "--author", "ann", "--case", "casefiles/mine.case.json",
                   "--layout", "wide")
    assert req.reuse == "ask" and req.settings_given and req.settings.chart == "xbar-s"
    assert req.author == "ann" and str(req.case_path) == "casefiles/mine.case.json" and req.request.kind == "wide"


@pytest.mark.parametrize("name", ["missing.csv", "."])
def test_a_path_that_is_no_file_is_a_one_line_error(in_tmp, name):
    with pytest.raises(WorkbenchError):
        _request(name)
