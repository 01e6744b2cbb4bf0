"""Sign-off with a real SSH key (issue 10, item 5).

Practice followed: the OpenSSH ``ssh-keygen`` manual, ``-Y sign`` / ``-Y verify`` /
``-Y find-principals`` / ``-Y check-novalidate`` with a namespace and an allowed-signers file
[printed: ssh-keygen(1), sections on signing and ALLOWED SIGNERS].  A throwaway ed25519 key pair is
made with ``ssh-keygen`` in the test's temporary folder.
"""
from __future__ import annotations

import json
import shutil
import subprocess

import pytest

from workbench.cli import main
from workbench.core.case.casefile import Case, verify
from workbench.core.case.events import Event
from workbench.core.case.format import event_hash, render

pytestmark = pytest.mark.skipif(shutil.which("ssh-keygen") is None, reason="ssh-keygen (OpenSSH) is not installed")


def run(capsys, *argv) -> tuple[int, str, str]:
    try:
        code = main(list(argv))
    except SystemExit as exc:
        code = exc.code
    out, err = capsys.readouterr()
    return code, out, err


def keypair(folder, name: str):
    key = folder / name
    subprocess.run(["ssh-keygen", "-q", "-t", "ed25519", "-N", "", "-C", name, "-f", str(key)], check=True)
    return key


def allowed(folder, principal: str, key) -> str:
    path = folder / f"allowed-{principal}"
    path.write_text(f'{principal} namespaces="workbench-case" {key.with_suffix(".pub").read_text().strip()}\n')
    return str(path)


@pytest.fixture
def signed(tmp_path, monkeypatch, capsys):
    monkeypatch.chdir(tmp_path)
    (tmp_path / "line.csv").write_text("reading\n" + "".join(f"{10 + i % 4 * 0.1:.1f}\n" for i in range(20)))
    assert run(capsys, "case", "new", "line.csv", "-o", "line.case.json")[0] == 0
    assert run(capsys, "case", "note", "line.case.json", "looked at it")[0] == 0
    key = keypair(tmp_path, "ana")
    code, out, err = run(capsys, "case", "sign", "line.case.json", "--key", str(key))
    assert code == 0, err
    assert "head hash to quote" in out
    return tmp_path, key


def test_a_sign_off_verifies_against_the_signers_file_and_names_the_signer(signed, capsys):
    folder, key = signed
    with Case.open("line.case.json", readonly=True) as case:
        off = case.events[2]
    assert off.kind == "sign-off" and off.payload["head"] == case.events[1].hash
    assert off.payload["signature"].startswith("-----BEGIN SSH SIGNATURE-----")
    code, out, _ = run(capsys, "verify", "line.case.json", "--signers", allowed(folder, "ana@lab", key))
    assert code == 0 and "event 3: signed off by ana@lab" in out
    other = keypair(folder, "eve")
    code, out, _ = run(capsys, "verify", "line.case.json", "--signers", allowed(folder, "eve@lab", other))
    assert code == 1 and "not in the signers file" in out


def reforge(path, edit) -> None:
    """Edit the stored events and recompute every hash and link, as someone without the key could."""
    doc = json.loads(path.read_text(encoding="utf-8"))
    edit(doc["trail"])
    prev, events = None, []
    for i, ev in enumerate(doc["trail"], 1):
        ev["prev"] = prev
        ev["hash"] = prev = event_hash(ev)
        events.append(Event.from_dict(ev, i))
    path.write_bytes(render(doc["data"], tuple(events)))


def test_an_edit_before_a_sign_off_is_detected_even_with_the_chain_reforged(signed, capsys):
    folder, key = signed
    path = folder / "line.case.json"
    good = path.read_bytes()

    def rewrite_note(trail):
        trail[1]["payload"]["text"] = "nothing to see"
    reforge(path, rewrite_note)  # the sign-off still names the old head: the replay refuses it
    result = verify("line.case.json", recompute=False)
    assert not result.intact and "sign-off names head" in " ".join(result.problems)

    path.write_bytes(good)

    def rewrite_note_and_head(trail):
        rewrite_note(trail)
        trail[2]["payload"]["head"] = event_hash({**trail[1], "prev": trail[0]["hash"]})
    reforge(path, rewrite_note_and_head)  # the head is made to fit: the signature no longer does
    code, out, _ = run(capsys, "verify", "line.case.json", "--no-recompute", "--signers",
                       allowed(folder, "ana@lab", key))
    assert code == 1 and "event 3: the sign-off does not verify" in out
    code, out, _ = run(capsys, "verify", "line.case.json", "--no-recompute")
    assert code == 1 and "does not fit the head" in out


def test_without_ssh_keygen_sign_is_one_line_and_writes_nothing(signed, capsys, monkeypatch, tmp_path):
    folder, key = signed
    before = (folder / "line.case.json").read_bytes()
    empty = tmp_path / "empty-bin"
    empty.mkdir()
    monkeypatch.setenv("PATH", str(empty))
    code, out, err = run(capsys, "case", "sign", "line.case.json", "--key", str(key))
    assert code == 2 and out == "" and len(err.strip().splitlines()) == 1 and "ssh-keygen" in err
    assert (folder / "line.case.json").read_bytes() == before
