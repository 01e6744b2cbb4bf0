"""The HTML review: one self-contained page, every text escaped, opened in a real headless Chromium."""
from __future__ import annotations

import json
import re
import shutil
import subprocess
from pathlib import Path

import pytest

from workbench.cli import main

DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "filler_line3.csv"
NASTY = '<script>alert("x")</script> & <img src=http://127.0.0.1:9/x.png>'


def _run(capsys, *argv) -> str:
    assert main([str(a) for a in argv]) == 0
    return capsys.readouterr().out


@pytest.fixture(scope="module")
def review(tmp_path_factory):
    import _pytest.capture  # noqa: F401
    folder = tmp_path_factory.mktemp("review")
    case = folder / "line3.case.json"
    for argv in (["case", "new", DEMO, "-o", case],
                 ["case", "exclude", case, "2026-03-03 15:30", "--reason", NASTY, "--cause", "measurement",
                  "--signal", "xbar/beyond-limits/2026-03-03 15:30"],
                 ["case", "mark", case, "r/beyond-limits/2026-03-02 12:30", "explained", "--note", "H4 nozzle " + NASTY],
                 ["case", "note", case, "2026-03-02 12:30", NASTY]):
        assert main([str(a) for a in argv]) == 0
    out = folder / "review.html"
    assert main(["report", str(case), "--format", "html", "-o", str(out)]) == 0
    assert main(["report", str(case), "--format", "json", "-o", str(folder / "review.json")]) == 0
    return out, json.loads((folder / "review.json").read_text())


def test_holds_every_signal_key_event_hash_and_the_head_hash(review):
    out, rep = review
    page = out.read_text(encoding="utf-8")
    keys = [s["key"] for s in rep["signals"]] + [s["key"] for s in rep["case"]["signals"]]
    assert len(keys) > 10
    for key in keys:
        assert key.replace("&", "&amp;") in page, key
    for ev in rep["case"]["trail"]:
        assert ev["hash"] in page
    head = rep["case"]["integrity"]["head_hash"]
    assert re.search(r'id="head-hash">' + head + "<", page)
    assert page.count("<svg") == len(rep["charts"]) == 2  # X̄ and R drawn as SVG
    # The exclusion's limits before → after: [definition] the X̄ centre is the mean of the subgroup means,
    # with and without the excluded subgroup, computed here from the demo file.
    import pandas as pd
    df = pd.read_csv(DEMO)
    means = df[[f"H{i}" for i in range(1, 7)]].mean(axis=1)
    before, after = means.mean(), means[df["time"] != "2026-03-03 15:30"].mean()
    shown = re.search(r"xbar: centre ([0-9.]+) → ([0-9.]+)", page)
    assert shown, "no before → after centre for the X̄ chart"
    assert abs(float(shown[1]) - before) < 0.006 and abs(float(shown[2]) - after) < 0.006


def test_every_user_text_is_escaped_and_nothing_is_loaded(review):
    out, _rep = review
    page = out.read_text(encoding="utf-8")
    assert NASTY not in page and "<script" not in page.lower() and "<img" not in page.lower()
    assert html_escaped(NASTY) in page
    # Self-contained: no reference to anything outside the page (SVG-internal url(#id) is allowed).
    rest = page.replace(html_escaped(NASTY), "")
    refs = re.findall(r"\b(?:src|href|srcset|action|xlink:href)\s*=\s*(\"[^\"]*\"|'[^']*'|[^\s>]+)", rest)
    assert refs and all(r.strip("\"'").startswith("#") for r in refs), refs
    assert page.count("xlink:href=\"#") > 0  # the SVG's own glyphs are referenced inside the page
    assert not re.search(r"url\((?!#)", page) and "@import" not in page
    assert "@media print" in page


def html_escaped(text: str) -> str:
    import html
    return html.escape(text, quote=True)


def test_data_file_needs_a_case(capsys):
    with pytest.raises(SystemExit) as exc:
        main(["report", str(DEMO), "--format", "html"])
    assert exc.value.code == 2 and "review of a case file" in capsys.readouterr().err


def _chromium() -> str | None:
    return shutil.which("chromium") or shutil.which("chromium-browser")


@pytest.mark.skipif(_chromium() is None, reason="Chromium is not installed (.ci/run installs Debian's package)")
def test_renders_in_headless_chromium_without_a_request(review, tmp_path):
    from PIL import Image
    out, _rep = review
    shot, netlog = tmp_path / "shot.png", tmp_path / "net.json"
    cmd = [_chromium(), "--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
           "--disable-background-networking", "--disable-component-update", "--disable-sync",
           f"--user-data-dir={tmp_path / 'profile'}", f"--log-net-log={netlog}", "--window-size=1200,1600",
           f"--screenshot={shot}", out.as_uri()]
    subprocess.run(cmd, capture_output=True, timeout=120, check=False)
    assert shot.is_file(), "Chromium wrote no screenshot"
    img = Image.open(shot).convert("RGB")
    assert img.size == (1200, 1600)
    import numpy as np
    px = np.asarray(img.resize((120, 160))).reshape(-1, 3).astype(int)
    dark = int((px.sum(axis=1) < 600).sum())
    assert len({tuple(p) for p in px.tolist()}) > 20 and dark > 100, "the screenshot is blank"
    # The browser's own background traffic has no initiator ("not an origin"); anything the page asks for
    # carries the page's origin ("null" for a file). The page must ask for nothing.
    log = json.loads(netlog.read_text())
    types = {v: k for k, v in log["constants"]["logEventTypes"].items()}
    asked = [e["params"]["url"] for e in log["events"]
             if types.get(e["type"]) == "URL_REQUEST_START_JOB" and (e.get("params") or {}).get("url")
             and e["params"].get("initiator") != "not an origin"]
    assert asked == []


def test_case_without_its_data_still_gives_a_page(tmp_path, capsys):
    import shutil as sh
    data = tmp_path / "line3.csv"
    sh.copy(DEMO, data)
    case = tmp_path / "c.case.json"
    assert main(["case", "new", str(data), "-o", str(case)]) == 0
    assert main(["case", "note", str(case), NASTY]) == 0
    data.unlink()
    out = tmp_path / "r.html"
    assert main(["report", str(case), "--format", "html", "-o", str(out)]) == 1  # incomplete review: exit 1
    page = out.read_text(encoding="utf-8")
    assert page.startswith("<!DOCTYPE html>") and "DATA UNAVAILABLE" in page and NASTY not in page
    assert html_escaped(NASTY) in page or "&lt;script&gt;" in page
