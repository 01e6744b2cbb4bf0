"""Attacks on the case file through the file system (issue 10, items 1 and 2), each reproduced and refused.

Practice followed: atomic replace through an exclusive temporary file in the same folder — an
unpredictable name opened with O_CREAT|O_EXCL|O_NOFOLLOW, fsync, rename, fsync of the folder —
[common practice] (the POSIX open(2) and rename(2) semantics it relies on [definition]).
"""
from __future__ import annotations

import os
import stat

import pytest

from workbench.cli import main
from workbench.core.case import disk
from workbench.core.case.casefile import Case, backup_path
from workbench.core.model import LayoutRequest, Settings, WorkbenchError

READINGS = [102.0, 94.8, 98.3, 98.4, 102.0, 98.5, 99.0, 97.7, 100.0, 98.1]


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


@pytest.fixture
def work(tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "line.csv").write_text("reading\n" + "".join(f"{v}\n" for v in READINGS), encoding="utf-8")
    path = tmp_path / "casefiles" / "line.case.json"
    with Case.create(tmp_path / "line.csv", LayoutRequest(), Settings(), author="ana", case_path=path) as case:
        case.note("first look")
    return tmp_path


@pytest.mark.parametrize("target", ["casefiles/line.case.json", "casefiles/line.case.json.bak", "line.csv",
                                    "casefiles/other.case.json", "./casefiles/../line.csv"])
def test_report_output_never_lands_on_the_case_its_bak_its_data_or_any_case_file(work, capsys, target):
    # the attack of issue 10: `report CASE --format markdown -o CASE` overwrote the case with Markdown
    before = {p: p.read_bytes() for p in work.rglob("*") if p.is_file()}
    code, out, err = run(capsys, "report", "casefiles/line.case.json", "--format", "markdown", "-o", target)
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1 and "refusing" in err
    assert {p: p.read_bytes() for p in work.rglob("*") if p.is_file()} == before  # nothing written or lost


def test_report_of_a_data_file_refuses_to_write_over_it_even_through_a_hard_link(work, capsys):
    os.link(work / "line.csv", work / "same.csv")
    before = (work / "line.csv").read_bytes()
    for target in ("line.csv", "same.csv"):
        code, _out, err = run(capsys, "report", "line.csv", "-o", target)
        assert code == 2 and "over an input" in err
    assert (work / "line.csv").read_bytes() == before
    code, _out, err = run(capsys, "report", "line.csv", "-o", "report.txt")  # a fresh name is fine
    assert code == 0, err
    assert (work / "report.txt").read_text(encoding="utf-8").startswith(run(capsys, "report", "line.csv")[1][:40])


def test_a_symlink_planted_at_the_temporary_name_is_never_followed(work, monkeypatch):
    outside = work / "outside.txt"
    outside.write_text("precious\n", encoding="utf-8")
    folder = work / "casefiles"
    # the old predictable name, and the first name the writer will draw: both planted as links outside
    os.symlink(outside, folder / f".new.case.json.{os.getpid()}.tmp")
    names = iter(["aaaaaaaaaaaaaaaa", "bbbbbbbbbbbbbbbb"])
    monkeypatch.setattr(disk.secrets, "token_hex", lambda n: next(names))
    os.symlink(outside, folder / f".new.case.json.aaaaaaaaaaaaaaaa{disk.TMP_SUFFIX}")
    disk.atomic_write(folder / "new.case.json", b"NEW")
    assert outside.read_text(encoding="utf-8") == "precious\n"  # O_EXCL|O_NOFOLLOW: the link was skipped
    assert not (folder / "new.case.json").is_symlink() and (folder / "new.case.json").read_bytes() == b"NEW"


def test_a_case_path_that_is_a_symlink_is_refused_and_its_target_untouched(work):
    outside = work / "outside.case.json"
    os.replace(work / "casefiles" / "line.case.json", outside)
    os.symlink(outside, work / "casefiles" / "line.case.json")
    before = outside.read_bytes()
    with pytest.raises(WorkbenchError, match="symbolic link"):
        Case.open(work / "casefiles" / "line.case.json", author="bo")
    with pytest.raises(WorkbenchError, match="symbolic link"):
        disk.atomic_write(work / "casefiles" / "line.case.json", b"x")
    assert outside.read_bytes() == before and (work / "casefiles" / "line.case.json").is_symlink()


def test_mode_is_kept_and_a_read_only_case_is_not_replaced(work):
    path = work / "casefiles" / "line.case.json"
    os.chmod(path, 0o600)
    with Case.open(path, author="bo") as case:
        case.note("private")
    assert stat.S_IMODE(os.stat(path).st_mode) == 0o600  # was 0644 after one write before the fix
    os.chmod(path, 0o444)
    before = path.read_bytes()
    with Case.open(path, author="bo") as case, pytest.raises(WorkbenchError, match="read-only"):
        case.note("should not land")
    assert path.read_bytes() == before


@pytest.mark.skipif(os.name != "posix" or os.geteuid() != 0, reason="only root can give a file to another owner")
def test_owner_is_kept(work):
    path = work / "casefiles" / "line.case.json"
    os.chown(path, 4321, 4321)
    with Case.open(path, author="bo") as case:
        case.note("owned elsewhere")
    st = os.stat(path)
    assert (st.st_uid, st.st_gid) == (4321, 4321)


def test_stale_temporary_files_are_cleaned_on_open_without_following_links(work):
    folder = work / "casefiles"
    outside = work / "outside.txt"
    outside.write_text("keep\n", encoding="utf-8")
    stale = [folder / f".line.case.json.0123456789abcdef{disk.TMP_SUFFIX}", folder / ".line.case.json.4242.tmp"]
    for p in stale:
        p.write_bytes(b"half written")
    os.symlink(outside, folder / f".line.case.json.fedcba9876543210{disk.TMP_SUFFIX}")
    unrelated = folder / ".notes.tmp"
    unrelated.write_bytes(b"not ours")
    with Case.open(folder / "line.case.json", author="bo"):
        pass
    assert [p for p in folder.iterdir() if p.name.endswith((disk.TMP_SUFFIX, ".4242.tmp"))] == []
    assert outside.read_text(encoding="utf-8") == "keep\n" and unrelated.exists()


def test_the_previous_version_is_kept_as_bak(work):
    path = work / "casefiles" / "line.case.json"
    before = path.read_bytes()
    with Case.open(path, author="bo") as case:
        case.note("second")
    assert backup_path(path).read_bytes() == before and path.read_bytes() != before
