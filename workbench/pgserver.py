"""A throwaway PostgreSQL server for the tests and the performance command.

:class:`TempServer` runs ``initdb`` into a new temporary folder and ``pg_ctl start`` with the
server listening only on a Unix socket in that folder (no TCP port).  The server refuses to
run as root, so when this process is root the programs run as the unprivileged user ``nobody``
(through ``runuser``), which owns the folder.  Password authentication (SCRAM) is on for every
connection, so a role's password is really needed.  :meth:`TempServer.stop` stops the server and
removes the folder.
"""
from __future__ import annotations

import os
import pwd
import shutil
import subprocess
import tempfile
from pathlib import Path

SUPERUSER = "postgres"


def bindir() -> Path | None:
    """The folder of the server programs (``pg_config --bindir``), or None when they are not installed."""
    try:
        out = subprocess.run(["pg_config", "--bindir"], capture_output=True, text=True, check=True).stdout.strip()
    except (OSError, subprocess.CalledProcessError):
        return None
    path = Path(out)
    return path if (path / "initdb").is_file() and (path / "pg_ctl").is_file() else None


def missing_reason() -> str | None:
    """Why a server cannot be started here, or None when it can."""
    if bindir() is None:
        return "PostgreSQL server programs not found (pg_config --bindir has no initdb / pg_ctl)"
    if os.geteuid() == 0 and shutil.which("runuser") is None:
        return "running as root without runuser: the PostgreSQL server refuses to run as root"
    return None


class TempServer:
    """A PostgreSQL cluster in a temporary folder, reachable on a Unix socket there."""

    def __init__(self, superuser_password: str = "workbench-superuser") -> None:
        self.bin = bindir()
        if self.bin is None:
            raise RuntimeError(missing_reason())
        self.password = superuser_password
        self.folder = Path(tempfile.mkdtemp(prefix="workbench-pg-"))
        self.user = "nobody" if os.geteuid() == 0 else None
        if self.user:
            pw = pwd.getpwnam(self.user)
            os.chown(self.folder, pw.pw_uid, pw.pw_gid)
        self.started = False

    def _run(self, *args: str) -> None:
        cmd = ([ "runuser", "-u", self.user, "--"] if self.user else []) + list(args)
        r = subprocess.run(cmd, capture_output=True, text=True, cwd=self.folder)
        if r.returncode != 0:
            raise RuntimeError(f"{Path(args[0]).name} failed: {(r.stderr or r.stdout).strip()[-500:]}")

    def start(self) -> "TempServer":
        pwfile = self.folder / "superuser.pw"
        pwfile.write_text(self.password + "\n")
        if self.user:
            pw = pwd.getpwnam(self.user)
            os.chown(pwfile, pw.pw_uid, pw.pw_gid)
        self._run(str(self.bin / "initdb"), "-D", str(self.folder / "data"), "-U", SUPERUSER, "--auth=scram-sha-256",
                  f"--pwfile={pwfile}", "-E", "UTF8", "--locale=C.UTF-8", "--no-sync")
        pwfile.unlink()
        self._run(str(self.bin / "pg_ctl"), "-D", str(self.folder / "data"), "-l", str(self.folder / "server.log"),
                  "-w", "-o", f"-k {self.folder} -c listen_addresses='' -c fsync=off -c synchronous_commit=off",
                  "start")
        self.started = True
        return self

    def url(self, user: str = SUPERUSER, password: str | None = None, database: str = "postgres",
            driver: str = "postgresql") -> str:
        """A URL for a role (with its password when given) on the socket in the server's folder."""
        auth = user if password is None else f"{user}:{password}"
        return f"{driver}://{auth}@/{database}?host={self.folder}"

    def connect(self, database: str = "postgres"):
        """A psycopg connection as the superuser (autocommit)."""
        import psycopg
        return psycopg.connect(host=str(self.folder), user=SUPERUSER, password=self.password, dbname=database,
                               autocommit=True)

    def stop(self) -> None:
        try:
            if self.started:
                self._run(str(self.bin / "pg_ctl"), "-D", str(self.folder / "data"), "-m", "fast", "-w", "stop")
        finally:
            self.started = False
            shutil.rmtree(self.folder, ignore_errors=True)

    def __enter__(self) -> "TempServer":
        return self.start()

    def __exit__(self, *exc) -> None:
        self.stop()
