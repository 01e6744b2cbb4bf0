"""No report shows "None", "nan" or "inf" (text, Markdown, JSON, the review page), on the demo and awkward files:
individuals with one specification limit, a stable file with no specification, counts with one limit, an EWMA
and a CUSUM chart, with the optional sections (--summary, --by-stream). JSON may say null, never NaN/Infinity."""
from __future__ import annotations

import json
import re
import shutil

import pytest

from workbench.cli import main
from workbench.demo import DEMO_DIR

BAD = re.compile(r"\bNone\b|\b[Nn]a[Nn]\b|(?<![\w.])-?inf\b|\bInfinity\b")

CASES = {
    "demo with its specification": ["filler_line3.csv", "--lsl", "497", "--usl", "503", "--target", "500"],
    "individuals, upper limit only": ["tank_ph.csv", "--usl", "7.5"],
    "no specification": ["stable_caps.csv"],
    "counts (p chart)": ["closure_rejects.csv"],
    "EWMA, lower limit only": ["filler_line3.csv", "--chart", "ewma", "--lsl", "497"],
    "CUSUM on individuals": ["tank_ph.csv", "--chart", "cusum"],
}


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def _no_constants(name):
    raise AssertionError(f"JSON holds {name}")


@pytest.mark.parametrize("case", list(CASES))
def test_no_report_shows_none_nan_or_inf(tmp_path, monkeypatch, capsys, case):
    monkeypatch.chdir(tmp_path)
    name, *opts = CASES[case]
    shutil.copy(DEMO_DIR / name, tmp_path / name)
    for fmt in ("text", "markdown", "json"):
        extra = ["--by-stream"] if name not in ("tank_ph.csv", "closure_rejects.csv") else []  # measured streams only
        code, out, err = run(capsys, "report", name, "--format", fmt, "--summary", *extra, *opts)
        assert code == 0, err
        bad = [line for line in out.splitlines() if BAD.search(line)]
        assert not bad, (case, fmt, bad[:3])
        if fmt == "json":
            json.loads(out, parse_constant=_no_constants)
    # the case's own reports: review text and the HTML page
    assert run(capsys, "case", "new", name, *opts)[0] == 0
    path = f"casefiles/{name.removesuffix('.csv')}.case.json"
    for fmt in ("text", "markdown"):
        code, out, err = run(capsys, "report", path, "--format", fmt)
        assert code == 0, err
        assert not [line for line in out.splitlines() if BAD.search(line)], (case, fmt)
    assert run(capsys, "report", path, "--format", "html", "-o", "review.html")[0] == 0
    page = re.sub(r"<[^>]+>", " ", (tmp_path / "review.html").read_text(encoding="utf-8"))
    page = re.sub(r"<style.*?</style>", " ", page, flags=re.S)
    assert not [line for line in page.splitlines() if BAD.search(line)], case
