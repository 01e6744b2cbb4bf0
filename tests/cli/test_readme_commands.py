"""Every command the README shows runs as written.

The ``sh`` code blocks of README.md are run line by line, in README order, in one temporary folder holding a
copy of ``demo_data/`` (so a case created by an earlier example is there for the later ones). Each line must
exit 0, or the code its comment states as ``(exit N)``. Commands that open the full-screen workbench (``open``,
``watch`` without ``--headless``/``--once``, ``workbench`` alone) run in a pseudo-terminal of 120×36: the test
waits for the bench's key bar and presses ``q``. ``watch --headless`` runs until it has started and is then
stopped with SIGTERM, as the README says. The PostgreSQL lines run against the throwaway server of the
``pg_server`` fixture, its socket URL in place of ``dbhost`` (the only substitution made).

Not run, with the reason: the set-up lines (``python3 -m venv … && pip install …``): the suite runs inside that
installation; ``workbench perf``: performance is measured by the perf command itself, never by the tests.
"""
from __future__ import annotations

import fcntl
import os
import pty
import re
import select
import shlex
import shutil
import signal
import struct
import subprocess
import sys
import termios
import time
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
README = ROOT / "README.md"
BLOCK = re.compile(r"^```([\w-]*)\n(.*?)^```", re.S | re.M)
EXIT = re.compile(r"\(exit (\d)\)")
PG_URL = "postgresql://engineer@dbhost/plant"


def blocks() -> list[tuple[str, list[str]]]:
    """(language, lines) of every code block of the README."""
    return [(m.group(1), m.group(2).splitlines()) for m in BLOCK.finditer(README.read_text(encoding="utf-8"))]


def sh_lines(pg: bool) -> list[str]:
    """The command lines of the ``sh`` blocks; ``pg``: only those naming the PostgreSQL server, else the rest."""
    out = []
    for lang, lines in blocks():
        if lang != "sh":
            continue
        for line in lines:
            if line.strip() and not line.lstrip().startswith("#") and (PG_URL in line) == pg:
                out.append(line)
    return out


def expected_exit(line: str) -> int:
    """0, or the code the line's comment states as ``(exit N)``."""
    words = shlex.split(line, comments=False, posix=True)
    comment = " ".join(words[words.index("#"):]) if "#" in words else ""
    if not comment and " # " in line:
        comment = line.split(" # ", 1)[1]
    m = EXIT.search(comment)
    return int(m.group(1)) if m else 0


def argv(line: str) -> list[str]:
    return shlex.split(line, comments=True)


def interactive(words: list[str]) -> bool:
    """The command opens the full-screen workbench."""
    if words[:1] != ["workbench"]:
        return False
    if len(words) == 1 or words[1] == "open":
        return True
    return words[1] == "watch" and not {"--headless", "--once"} & set(words)


def _env(tmp: Path) -> dict[str, str]:
    env = dict(os.environ)
    env["PATH"] = str(Path(sys.executable).parent) + os.pathsep + env.get("PATH", "")
    env.update(HOME=str(tmp / "home"), WORKBENCH_AUTHOR="ana@lab", TERM="xterm-256color", COLUMNS="120",
               LINES="36", TEXTUAL_ANIMATIONS="none")
    env.pop("NO_COLOR", None)
    return env


def run_in_terminal(line: str, cwd: Path, env: dict[str, str], marker: bytes = b"Breakdown") -> tuple[int, str]:
    """Run ``line`` in a 120×36 pseudo-terminal, wait for ``marker`` on the screen, press q; (exit code, output)."""
    master, slave = pty.openpty()
    fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 36, 120, 0, 0))
    proc = subprocess.Popen(["bash", "-c", line], cwd=cwd, env=env, stdin=slave, stdout=slave, stderr=slave,
                            start_new_session=True)
    os.close(slave)
    seen, pressed, deadline = b"", False, time.monotonic() + 180
    try:
        while time.monotonic() < deadline:
            ready, _, _ = select.select([master], [], [], 0.5)
            if ready:
                try:
                    chunk = os.read(master, 65536)
                except OSError:
                    chunk = b""
                seen += chunk
            if not pressed and marker in seen:
                os.write(master, b"q")
                pressed = True
            if proc.poll() is not None:
                break
        else:
            os.killpg(proc.pid, signal.SIGKILL)
            pytest.fail(f"{line!r} did not {'quit' if pressed else 'show the bench'} in time; "
                        f"last output: {seen[-400:]!r}")
    finally:
        os.close(master)
    text = seen.decode("utf-8", "replace")
    assert pressed, f"{line!r} ended (exit {proc.returncode}) before the bench showed: {text[-400:]!r}"
    return proc.wait(timeout=30), text


def run_until_started(line: str, cwd: Path, env: dict[str, str], started: str) -> tuple[int, str]:
    """Run a command that keeps going until stopped; stop it with SIGTERM once ``started`` is on stderr."""
    proc = subprocess.Popen(argv(line), cwd=cwd, env=env, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            text=True)
    first = ""
    for _ in range(5):  # notices about the case (e.g. rows added since it was made) may come first
        first += proc.stderr.readline()
        if started in first:
            break
    assert started in first, f"{line!r} did not start: {first!r}"
    proc.send_signal(signal.SIGTERM)
    out, err = proc.communicate(timeout=60)
    return proc.returncode, first + err


def run(line: str, cwd: Path, env: dict[str, str]) -> tuple[int, str]:
    words = argv(line)
    if interactive(words):
        return run_in_terminal(line, cwd, env)
    if words[:2] == ["workbench", "watch"] and "--headless" in words:
        return run_until_started(line, cwd, env, "watching")
    done = subprocess.run(["bash", "-c", line], cwd=cwd, env=env, capture_output=True, text=True, timeout=300)
    return done.returncode, done.stdout[-2000:] + done.stderr[-2000:]


def _folder(tmp_path: Path) -> Path:
    work = tmp_path / "project"
    work.mkdir()
    shutil.copytree(ROOT / "demo_data", work / "demo_data")
    (tmp_path / "home").mkdir()
    return work


def test_every_workbench_line_of_the_readme_is_in_a_block_that_runs():
    """A command shown in a plain block would escape this test: every code line that starts with ``workbench``
    is in an ``sh`` block (output examples go in ``text`` blocks, the case format in ``json``)."""
    loose = [line for lang, lines in blocks() if lang != "sh" for line in lines if line.startswith("workbench ")]
    assert loose == []
    assert len(sh_lines(pg=False)) >= 40


def test_readme_commands_run_as_written(tmp_path):
    if shutil.which("sqlite3") is None or shutil.which("ssh-keygen") is None:
        pytest.skip("the README's examples use the sqlite3 and ssh-keygen command-line tools, not installed here")
    work, failures = _folder(tmp_path), []
    env = _env(tmp_path)
    for line in sh_lines(pg=False):
        code, out = run(line, work, env)
        if code != expected_exit(line):
            failures.append(f"{line}\n  exit {code}, README says {expected_exit(line)}: {out.strip()[-600:]}")
    assert not failures, "\n".join(failures)
    # What the examples claim to have made is there.
    assert (work / "casefiles" / "filler_line3.case.json").is_file()
    assert (work / "review.html").is_file() and (work / "review.md").read_text(encoding="utf-8").strip()


def test_readme_database_examples_on_a_real_postgresql_server(tmp_path, pg_server):
    """The README's PostgreSQL lines, against the throwaway server with the demo's long readings as ``fills``."""
    import csv
    with pg_server.connect("plant") as conn:
        conn.execute("SET ROLE engineer")
        conn.execute("DROP TABLE IF EXISTS fills")
        head, *rows = list(csv.reader(open(ROOT / "demo_data" / "filler_line3_long.csv", encoding="utf-8")))
        # time, head, fill_ml, then the demo's context columns (operator, lot, shift, …) as text
        conn.execute("CREATE TABLE fills (time text, head text, fill_ml double precision, "
                     + ", ".join(f'"{c}" text' for c in head[3:]) + ")")
        with conn.cursor() as cur:
            cur.executemany("INSERT INTO fills VALUES (%s" + ", %s" * (len(head) - 1) + ")", rows)
    from sources_common import PG_PASSWORD
    work = _folder(tmp_path)
    env = _env(tmp_path)
    env["WORKBENCH_DB_PASSWORD"] = PG_PASSWORD
    socket_url = pg_server.url("engineer", None, "plant")
    lines = sh_lines(pg=True)
    assert len(lines) == 3
    failures = []
    for line in lines:
        code, out = run(line.replace(PG_URL, socket_url), work, env)
        if code != expected_exit(line):
            failures.append(f"{line}\n  exit {code}: {out.strip()[-600:]}")
    assert not failures, "\n".join(failures)


def test_the_bare_command_opens_the_demo(tmp_path):
    """The usage table's first row, ``workbench``: the bundled demo on the bench, quit with q (exit 0), leaving
    the demo case that a second ``workbench`` reopens."""
    work = _folder(tmp_path)
    code, _ = run_in_terminal("workbench", work, _env(tmp_path))
    assert code == 0
    assert (work / "casefiles" / "filler_line3.case.json").is_file()
