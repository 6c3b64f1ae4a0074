"""A throwaway PostgreSQL cluster for the tests and the robustness run: initdb into a temporary folder,
start it on a Unix socket in that folder (no TCP port), stop it and remove the folder at the end.

The server refuses to run as root, so when the tests run as root (CI does) the cluster's files belong to,
and the server runs as, an unprivileged account (``postgres`` where the Debian package made one, else
``nobody``).  Logins use passwords (scram-sha-256) given through a libpq password file: the way a crew's
laptops would, and never on a command line.

Used as ``with Cluster() as c: c.url("fieldpad_admin")``; :func:`find_binaries` says why there is none.
"""

from __future__ import annotations

import contextlib
import glob
import os
import pwd
import secrets
import shutil
import subprocess
import tempfile
import time
from pathlib import Path

SUPERUSER = "fieldpad_admin"


def find_binaries() -> tuple[Path | None, str]:
    """The folder holding initdb and pg_ctl, or (None, why not)."""
    candidates = []
    if shutil.which("pg_config"):
        with contextlib.suppress(OSError, subprocess.CalledProcessError):
            out = subprocess.run(["pg_config", "--bindir"], capture_output=True, text=True, check=True)
            candidates.append(Path(out.stdout.strip()))
    candidates += [Path(p) for p in sorted(glob.glob("/usr/lib/postgresql/*/bin"), reverse=True)]
    for tool in ("initdb", "pg_ctl"):
        found = shutil.which(tool)
        if found:
            candidates.append(Path(os.path.realpath(found)).parent)
    for c in candidates:
        if (c / "initdb").exists() and (c / "pg_ctl").exists() and (c / "postgres").exists():
            return c, ""
    return None, "no PostgreSQL server binaries (initdb, pg_ctl, postgres) on this machine"


def _account() -> tuple[int, int] | None:
    """(uid, gid) to run the server as, when we are root; None when we are not."""
    if os.geteuid() != 0:
        return None
    for name in ("postgres", "nobody"):
        with contextlib.suppress(KeyError):
            pw = pwd.getpwnam(name)
            return pw.pw_uid, pw.pw_gid
    raise RuntimeError("running as root and no unprivileged account (postgres, nobody) to run PostgreSQL as")


class Cluster:
    """One temporary cluster.  ``url(role)`` gives a libpq URI for a role; passwords are in ``passfile``."""

    def __init__(self, bindir: Path | None = None):
        self.bindir = bindir or find_binaries()[0]
        if self.bindir is None:
            raise RuntimeError(find_binaries()[1])
        self.root = Path(tempfile.mkdtemp(prefix="fieldpad-pg-"))
        self.data = self.root / "data"
        self.sock = self.root / "sock"
        self.passfile = self.root / "pgpass"
        self.passwords: dict[str, str] = {}
        self.port = 5432  # only names the socket file (.s.PGSQL.5432) inside our own folder
        self._acct = _account()

    # -- running the server's own tools as the unprivileged account -------------------------------
    def _run(self, *args, check=True, **kw):
        def drop():
            if self._acct:
                os.setgid(self._acct[1])
                os.setuid(self._acct[0])

        return subprocess.run(
            [str(a) for a in args],
            preexec_fn=drop if self._acct else None,
            capture_output=True,
            text=True,
            check=check,
            **kw,
        )

    def start(self) -> Cluster:
        self.sock.mkdir()
        pw = secrets.token_urlsafe(18)
        self.passwords[SUPERUSER] = pw
        pwfile = self.root / "initpw"
        pwfile.write_text(pw + "\n")
        if self._acct:
            for p in (self.root, self.sock, pwfile):
                os.chown(p, *self._acct)
        self._run(
            self.bindir / "initdb",
            "-D",
            self.data,
            "-U",
            SUPERUSER,
            f"--pwfile={pwfile}",
            "-A",
            "scram-sha-256",
            "-E",
            "UTF8",
            "--locale=C.UTF-8",
            "--no-sync",
        )
        pwfile.unlink()
        opts = (
            f"-c listen_addresses='' -c unix_socket_directories='{self.sock}' -c port={self.port} "
            "-c fsync=on -c max_connections=200 -c shared_buffers=32MB"
        )
        self._run(
            self.bindir / "pg_ctl",
            "-D",
            self.data,
            "-o",
            opts,
            "-l",
            self.root / "server.log",
            "-w",
            "-t",
            "60",
            "start",
        )
        self._write_passfile()
        return self

    def restart(self) -> None:
        """Stop (fast: cuts off every session, as a server restart would) and start again."""
        self.stop_server()
        opts = (
            f"-c listen_addresses='' -c unix_socket_directories='{self.sock}' -c port={self.port} "
            "-c max_connections=200 -c shared_buffers=32MB"
        )
        self._run(
            self.bindir / "pg_ctl",
            "-D",
            self.data,
            "-o",
            opts,
            "-l",
            self.root / "server.log",
            "-w",
            "-t",
            "60",
            "start",
        )

    def stop_server(self) -> None:
        self._run(self.bindir / "pg_ctl", "-D", self.data, "-m", "fast", "-w", "-t", "60", "stop", check=False)

    def add_password(self, role: str, password: str) -> None:
        self.passwords[role] = password
        self._write_passfile()

    def _write_passfile(self) -> None:
        # host:port:database:user:password; the socket folder is the host.
        lines = [f"{self.sock}:{self.port}:*:{r}:{p}" for r, p in self.passwords.items()]
        self.passfile.write_text("\n".join(lines) + "\n")
        os.chmod(self.passfile, 0o600)

    def url(self, role: str = SUPERUSER, database: str = "postgres") -> str:
        """A libpq URI that reaches the server over its socket as ``role`` (password from PGPASSFILE)."""
        from urllib.parse import quote

        return f"postgresql:///{database}?host={quote(str(self.sock), safe='')}&port={self.port}&user={role}"

    def env(self) -> dict:
        """Environment for a process that should find the passwords (libpq reads PGPASSFILE)."""
        return {**os.environ, "PGPASSFILE": str(self.passfile)}

    def close(self) -> None:
        self.stop_server()
        for _ in range(50):
            try:
                shutil.rmtree(self.root)
                return
            except OSError:
                time.sleep(0.1)

    def __enter__(self) -> Cluster:
        return self.start()

    def __exit__(self, *exc) -> None:
        self.close()
