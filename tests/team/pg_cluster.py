"""A throwaway PostgreSQL server for tests and benchmarks.

PostgreSQL refuses to run as root, so when we are root the data folder is handed to the
``postgres`` system user and initdb/pg_ctl run through ``runuser -u postgres --``. The server
listens on 127.0.0.1 on a free port; the test superuser logs in by trust, every other login by
SCRAM password (as on a real team server).
"""

from __future__ import annotations

import glob
import os
import pwd
import shutil
import socket
import subprocess
import tempfile
import uuid
from pathlib import Path

SUPERUSER = "cs_test_super"
ADMIN = "cs_test_admin"
ADMIN_PASSWORD = "admin-pass-" + uuid.uuid4().hex[:8]


def find_bin() -> Path | None:
    """The newest installed PostgreSQL bin folder (Debian layout), or None."""
    found = sorted(glob.glob("/usr/lib/postgresql/*/bin/initdb"),
                   key=lambda p: int(Path(p).parent.parent.name) if Path(p).parent.parent.name.isdigit() else 0)
    return Path(found[-1]).parent if found else None


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


class Cluster:
    def __init__(self, *, fast: bool = True) -> None:
        self.bin = find_bin()
        if self.bin is None:
            raise RuntimeError("no PostgreSQL binaries under /usr/lib/postgresql/*/bin")
        self.fast = fast
        self.root = Path(tempfile.mkdtemp(prefix="clipscribe-pg-"))
        self.data = self.root / "data"
        self.port = _free_port()
        self.as_root = os.geteuid() == 0
        self.pgpass = self.root / "pgpass"

    def _run(self, *args: str) -> None:
        cmd = [str(a) for a in args]
        if self.as_root:
            cmd = ["runuser", "-u", "postgres", "--", *cmd]
        subprocess.run(cmd, check=True, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, cwd="/")

    def start(self) -> "Cluster":
        if self.as_root:
            pw = pwd.getpwnam("postgres")
            os.chown(self.root, pw.pw_uid, pw.pw_gid)
        self._run(self.bin / "initdb", "-D", self.data, "-U", SUPERUSER, "--auth=trust",
                  "--encoding=UTF8", "--locale=C.UTF-8")
        hba = ("local all all trust\n"
               f"host all {SUPERUSER} 127.0.0.1/32 trust\n"
               "host all all 127.0.0.1/32 scram-sha-256\n")
        (self.data / "pg_hba.conf").write_text(hba)
        opts = f"-p {self.port} -k {self.root} -c listen_addresses=127.0.0.1 -c max_connections=60"
        if self.fast:  # tests only: durability is not what they check
            opts += " -c fsync=off -c synchronous_commit=off -c full_page_writes=off"
        self._run(self.bin / "pg_ctl", "-D", self.data, "-o", opts, "-l", self.root / "log",
                  "-w", "start")
        self.sql(f"CREATE ROLE {ADMIN} LOGIN CREATEROLE PASSWORD '{ADMIN_PASSWORD}'")
        self.pgpass.write_text(f"127.0.0.1:{self.port}:*:{ADMIN}:{ADMIN_PASSWORD}\n")
        self.pgpass.chmod(0o600)
        return self

    def sql(self, statement: str, dbname: str = "postgres"):
        import psycopg
        with psycopg.connect(host="127.0.0.1", port=self.port, user=SUPERUSER, dbname=dbname,
                             autocommit=True) as conn:
            cur = conn.execute(statement)
            return cur.fetchall() if cur.description else None

    def new_database(self) -> str:
        """An empty database owned by the admin login; returns its URL (no password in it)."""
        name = "p_" + uuid.uuid4().hex[:10]
        self.sql(f"CREATE DATABASE {name} OWNER {ADMIN}")
        return f"postgresql://{ADMIN}@127.0.0.1:{self.port}/{name}"

    def add_pgpass(self, login: str, password: str) -> None:
        with open(self.pgpass, "a") as f:
            f.write(f"127.0.0.1:{self.port}:*:{login}:{password}\n")

    def stop(self) -> None:
        try:
            self._run(self.bin / "pg_ctl", "-D", self.data, "-m", "immediate", "-w", "stop")
        finally:
            shutil.rmtree(self.root, ignore_errors=True)
