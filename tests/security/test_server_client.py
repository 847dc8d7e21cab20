"""The client side of a team project: a project folder pointing at a hostile server gets no
password, passwords never land in the settings file, on the terminal or in shell history, and
the login dialog says which server is asking."""

from __future__ import annotations

import json
import socket
import struct
import threading
from pathlib import Path

import psycopg
import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.errors import ProjectError
from clipscribe.schema.settings import SETTINGS_FILE
from clipscribe.store import db

from .conftest import ADMIN_PASSWORD

SSL_REQUEST, GSS_REQUEST = 80877103, 80877104


class CleartextServer:
    """A fake server on 127.0.0.1 that asks every client for its password in clear
    (PostgreSQL frontend/backend protocol: AuthenticationCleartextPassword, 'R' with code 3)
    and keeps whatever the client sends back."""

    def __init__(self) -> None:
        self.sock = socket.socket()
        self.sock.bind(("127.0.0.1", 0))
        self.sock.listen(4)
        self.port = self.sock.getsockname()[1]
        self.received = b""
        self.thread = threading.Thread(target=self._serve, daemon=True)
        self.thread.start()

    def _serve(self) -> None:
        while True:
            try:
                conn, _ = self.sock.accept()
            except OSError:
                return
            with conn:
                conn.settimeout(5)
                try:
                    self._one(conn)
                except OSError:
                    pass

    def _one(self, conn: socket.socket) -> None:
        while True:
            head = conn.recv(8)
            if len(head) < 8:
                return
            length, code = struct.unpack("!ii", head)
            rest = conn.recv(length - 8) if length > 8 else b""
            if code in (SSL_REQUEST, GSS_REQUEST):
                conn.sendall(b"N")  # no encryption on offer
                continue
            conn.sendall(b"R" + struct.pack("!ii", 8, 3))  # send me your password, in clear
            while chunk := conn.recv(4096):
                self.received += chunk
            return

    def close(self) -> None:
        self.sock.close()


@pytest.fixture
def rogue():
    server = CleartextServer()
    yield server
    server.close()


def test_libpq_supports_require_auth():
    # libpq 16 added require_auth (PostgreSQL 16 release notes); the bundled one must have it,
    # or the next test would pass for the wrong reason
    assert db.libpq_version() >= 160000
    assert db.server_connect_args()["require_auth"] == "scram-sha-256"


def test_a_folder_pointing_at_a_hostile_server_gets_no_password(tmp_path, rogue):
    secret = "hunter2-do-not-send"
    # the attack works against a client without the requirement (so this test can fail) ...
    with pytest.raises(psycopg.OperationalError):
        psycopg.connect(host="127.0.0.1", port=rogue.port, user="ann", dbname="x",
                        password=secret, sslmode="disable", connect_timeout=5)
    assert secret.encode() in rogue.received
    rogue.received = b""
    # ... and clipscribe refuses before the password leaves, even when the folder's URL asks
    # for a weaker method
    folder = tmp_path / "moved"
    folder.mkdir()
    (folder / SETTINGS_FILE).write_text(json.dumps({
        "name": "moved", "database_url":
        f"postgresql://ann@127.0.0.1:{rogue.port}/x?require_auth=password&sslmode=disable"}))
    with pytest.raises(ProjectError) as err:
        Project.open(folder, user="ann", password=secret)
    assert "\n" not in str(err.value) and secret not in str(err.value)
    assert "no password was sent" in str(err.value)
    assert secret.encode() not in rogue.received
    # the workbench does not ask again for a password it would not send anyway
    from clipscribe.ui.dialogs.login import open_project
    with pytest.raises(ProjectError, match="no password was sent"):
        open_project(folder, user="ann", password=secret,
                     ask=lambda *a: pytest.fail("asked for a password for a non-SCRAM server"))
    assert secret.encode() not in rogue.received


def test_password_in_database_url_is_used_but_never_saved_or_printed(pg, tmp_path, capsys):
    base = pg.new_database()
    for url in (base.replace("@", f":{ADMIN_PASSWORD}@", 1),
                f"{base}?password={ADMIN_PASSWORD}&connect_timeout=10"):
        folder = tmp_path / f"p{len(url)}"
        assert main(["new", str(folder), "--database-url", url]) == 0
        out, err = capsys.readouterr()
        saved = (folder / SETTINGS_FILE).read_text()
        assert ADMIN_PASSWORD not in saved + out + err
        assert "warning: --database-url holds password" in err
        assert json.loads(saved)["database_url"].startswith("postgresql://cs_test_admin@")
        # the next database for the second form
        base = pg.new_database()


def test_move_to_server_neither_prints_nor_saves_the_password(pg, tmp_path, capsys, monkeypatch):
    monkeypatch.delenv("CLIPSCRIBE_PASSWORD", raising=False)
    folder = tmp_path / "solo"
    with Project.create(folder, user="boss") as p:
        p.define_labels(["stack"])
    url = f"{pg.new_database()}?sslpassword=abc&password={ADMIN_PASSWORD}"
    assert main(["move-to-server", str(folder), url]) == 0
    out, err = capsys.readouterr()
    saved = (folder / SETTINGS_FILE).read_text()
    assert ADMIN_PASSWORD not in saved + out + err and "sslpassword" not in saved + out
    assert "moved to postgresql://cs_test_admin@127.0.0.1" in out


def test_add_person_asks_for_the_password_without_echo_on_a_terminal(server_project, uid,
                                                                     monkeypatch):
    p = server_project
    asked = []
    monkeypatch.setenv("CLIPSCRIBE_NEW_PASSWORD", "from-the-environment")
    monkeypatch.setattr("sys.stdin.isatty", lambda: True)
    monkeypatch.setattr("getpass.getpass", lambda prompt="": asked.append(prompt) or "typed-pw")
    assert main(["add-person", str(p.folder), f"tty_{uid}"]) == 0
    assert len(asked) == 2  # once, and again to confirm
    import team.conftest as tc
    with tc.connect_as(p, f"tty_{uid}", "typed-pw") as conn:  # the typed one, not the variable
        assert conn.execute("SELECT current_user").fetchone()[0] == f"tty_{uid}"
    # two different answers: nothing is made
    answers = iter(["one", "two"])
    monkeypatch.setattr("getpass.getpass", lambda prompt="": next(answers))
    assert main(["add-person", str(p.folder), f"typo_{uid}"]) == 1
    assert f"typo_{uid}" not in [a.name for a in p.annotators()]


def test_add_person_takes_the_variable_only_without_a_terminal(server_project, uid, monkeypatch):
    p = server_project
    monkeypatch.setenv("CLIPSCRIBE_NEW_PASSWORD", "script-pw")
    monkeypatch.setattr("sys.stdin.isatty", lambda: False)
    monkeypatch.setattr("getpass.getpass", lambda prompt="": pytest.fail("asked on no terminal"))
    assert main(["add-person", str(p.folder), f"bot_{uid}"]) == 0
    import team.conftest as tc
    with tc.connect_as(p, f"bot_{uid}", "script-pw") as conn:
        assert conn.execute("SELECT 1").fetchone()[0] == 1


def test_login_dialog_names_the_server(qtbot, tmp_path):
    from clipscribe.ui.dialogs.login import LoginDialog
    dlg = LoginDialog(Path(tmp_path), "ann", "", server="db.example.test:5432/kitchen")
    qtbot.addWidget(dlg)
    texts = " ".join(w.text() for w in dlg.findChildren(type(dlg.reason)))
    assert "db.example.test:5432/kitchen" in texts


def test_the_dialog_is_given_the_server_the_folder_names(server_project, tmp_path):
    p = server_project
    url = p.engine.url
    assert Project.server_of(p.folder) == f"{url.host}:{url.port}/{url.database}"
    assert Project.server_of(tmp_path) is None  # no settings: nothing to show
