"""A login holding a strong lock (as an annotator can on the tables of their own work) does
not hang everyone else: the program gives up after its lock timeout and says, in one line,
that the server is busy and who holds the lock; nothing is half-saved."""

from __future__ import annotations

import pytest

from clipscribe import Project
from clipscribe.cli import main
from clipscribe.errors import ServerBusyError

from .conftest import add_clips, connect_as

pytestmark = pytest.mark.postgres


@pytest.fixture
def locked(server_project, uid, monkeypatch):
    """ann holds ACCESS EXCLUSIVE on captions in an open transaction; the program's lock
    timeout is set short (the wait is not what the tests check, the outcome is)."""
    monkeypatch.setenv("CLIPSCRIBE_LOCK_TIMEOUT", "0.2")
    p = server_project
    c1, = add_clips(p, 1)
    ann, bob = f"ann_{uid}", f"bob_{uid}"
    p.add_annotator(ann, password="pw-ann")
    p.add_annotator(bob, password="pw-bob")
    conn = connect_as(p, ann, "pw-ann")
    conn.autocommit = False
    conn.execute("LOCK TABLE public.captions IN ACCESS EXCLUSIVE MODE")
    yield p, ann, bob, c1, conn
    conn.close()


def test_a_writer_blocked_by_a_lock_gets_one_clear_line(locked):
    p, ann, bob, c1, conn = locked
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        with pytest.raises(ServerBusyError) as err:
            b.add_caption(c1, bob, "a hand puts a cup down")
        msg = str(err.value)
        assert "\n" not in msg and "server is busy" in msg
        assert f"locked by {ann} on captions" in msg
        assert "SELECT" not in msg and "INSERT" not in msg
        conn.rollback()  # the lock goes; the same edit now saves, once
        b.add_caption(c1, bob, "a hand puts a cup down")
        assert [t for _c, a, t in b.captions() if a == bob] == ["a hand puts a cup down"]


def test_a_reader_blocked_by_a_lock_gets_one_clear_line(locked, capsys):
    p, ann, _bob, _c1, conn = locked
    with Project.open(p.folder) as lead:  # the admin, opened with the short lock timeout
        with pytest.raises(ServerBusyError, match=f"locked by {ann} on captions"):
            lead.captions()
    # the command line: exit status 1 and the one line
    assert main(["dump", str(p.folder), str(p.folder / "out.jsonl")]) == 1
    err = capsys.readouterr().err.strip()
    assert err.startswith("clipscribe: error: the server is busy") and "\n" not in err


def test_the_workbench_says_not_saved_and_why(locked, qtbot):
    from clipscribe.ui.editor import ClipEditor
    p, ann, bob, c1, _conn = locked
    with Project.open(p.folder, user=bob, password="pw-bob") as b:
        editor = ClipEditor(b)
        with qtbot.waitSignal(editor.notSaved) as said:
            out = editor.apply("Add caption", lambda: b.add_caption(c1, bob, "a hand waves"))
        assert out is None and editor.undo_stack.count() == 0
        assert said.args[0].startswith("the server is busy") and ann in said.args[0]
