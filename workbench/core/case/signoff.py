"""Sign-off with the signer's SSH key, through the system's ``ssh-keygen -Y sign`` / ``-Y verify``.

What is signed is one line, ``workbench-case head <hash>\\n``: the hash of the event before the
sign-off, which through the chain commits to every earlier event and to the data reference.  The
signature is made in the namespace :data:`SIGN_NAMESPACE`, so a signature made with the same key
for another purpose (a commit, a file) never passes for a sign-off.  Who signed is decided only
at verification, from an allowed-signers file the reviewer trusts (``ssh-keygen -Y
find-principals``), never from what the case file says about itself (OpenSSH ``ssh-keygen``
manual, section "ALLOWED SIGNERS").
"""
from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from pathlib import Path

from workbench.core.case.events import SIGN_NAMESPACE, Event
from workbench.core.model import WorkbenchError

_DEFAULT_KEYS = ("id_ed25519", "id_ecdsa", "id_rsa")


def message(head: str) -> bytes:
    """The bytes a sign-off signs."""
    return f"workbench-case head {head}\n".encode("ascii")


def _ssh_keygen() -> str:
    exe = shutil.which("ssh-keygen")
    if exe is None:
        raise WorkbenchError("ssh-keygen was not found: install OpenSSH (its ssh-keygen signs and checks sign-offs)")
    return exe


def default_key() -> Path:
    """$WORKBENCH_SIGNING_KEY, else the first of ~/.ssh/id_ed25519, id_ecdsa, id_rsa that exists."""
    env = os.environ.get("WORKBENCH_SIGNING_KEY")
    if env:
        return Path(env)
    home = Path.home() / ".ssh"
    for name in _DEFAULT_KEYS:
        if (home / name).is_file():
            return home / name
    raise WorkbenchError(f"no signing key: give --key FILE (none of {', '.join(_DEFAULT_KEYS)} in {home})")


def sign(head: str, key: Path) -> tuple[str, str]:
    """(armored signature, key fingerprint) over the head hash, made by ``ssh-keygen -Y sign``."""
    exe = _ssh_keygen()
    if not Path(key).is_file():
        raise WorkbenchError(f"{key}: no such key file")
    with tempfile.TemporaryDirectory(prefix="workbench-sign-") as tmp:
        msg = Path(tmp) / "head"
        msg.write_bytes(message(head))
        r = subprocess.run([exe, "-Y", "sign", "-f", str(key), "-n", SIGN_NAMESPACE, str(msg)],
                           stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
        sig = msg.with_name("head.sig")
        if r.returncode != 0 or not sig.is_file():
            why = (r.stderr.strip().splitlines() or ["no signature made"])[-1]
            raise WorkbenchError(f"{key}: ssh-keygen could not sign: {why}")
        signature = sig.read_text(encoding="ascii")
    fp = subprocess.run([exe, "-l", "-f", str(key)], stdout=subprocess.PIPE, stderr=subprocess.DEVNULL, text=True)
    parts = fp.stdout.split()
    return signature, (parts[1] if fp.returncode == 0 and len(parts) > 1 else "")


def _run(args: list[str], data: bytes) -> subprocess.CompletedProcess:
    return subprocess.run(args, input=data, stdout=subprocess.PIPE, stderr=subprocess.PIPE)


def check_signoffs(events: tuple[Event, ...], signers: str | Path | None) -> tuple[list[str], list[str]]:
    """(problems, remarks) for every sign-off in the trail.

    With ``signers`` (an allowed-signers file) each signature must verify for a principal the file
    lists for that key; without it only that each signature is well formed and fits its head
    (``-Y check-novalidate``), which anyone holding any key could produce.
    """
    problems: list[str] = []
    remarks: list[str] = []
    offs = [ev for ev in events if ev.kind == "sign-off"]
    try:
        exe = _ssh_keygen()
    except WorkbenchError as exc:
        return ([f"{len(offs)} sign-off(s) could not be checked: {exc}"] if signers else []), \
            ([] if signers else [f"{len(offs)} sign-off(s) not checked: {exc}"])
    if signers is not None and not Path(signers).is_file():
        raise WorkbenchError(f"{signers}: no such allowed-signers file")
    with tempfile.TemporaryDirectory(prefix="workbench-verify-") as tmp:
        for ev in offs:
            sig = Path(tmp) / f"{ev.seq}.sig"
            sig.write_text(ev.payload["signature"], encoding="ascii", errors="replace")
            msg = message(ev.payload["head"])
            if signers is None:
                r = _run([exe, "-Y", "check-novalidate", "-n", SIGN_NAMESPACE, "-s", str(sig)], msg)
                if r.returncode != 0:
                    problems.append(f"event {ev.seq}: the sign-off signature does not fit the head it names")
                else:
                    remarks.append(f"event {ev.seq}: sign-off signature fits its head; who made it is not checked "
                                   "(give --signers FILE)")
                continue
            found = subprocess.run([exe, "-Y", "find-principals", "-s", str(sig), "-f", str(signers)],
                                   stdout=subprocess.PIPE, stderr=subprocess.PIPE, text=True)
            principals = [p for p in found.stdout.splitlines() if p.strip()] if found.returncode == 0 else []
            ok = next((p for p in principals if _run([exe, "-Y", "verify", "-f", str(signers), "-I", p, "-n",
                                                        SIGN_NAMESPACE, "-s", str(sig)], msg).returncode == 0), None)
            if ok is None:
                why = "its key is not in the signers file" if not principals else "the signature does not verify"
                problems.append(f"event {ev.seq}: the sign-off does not verify against {signers}: {why}")
            else:
                remarks.append(f"event {ev.seq}: signed off by {ok} (checked against {signers})")
    return problems, remarks
