"""Faults of the project database and the disk: a missing, empty or damaged database file, a
read-only database, a full disk. Each is refused with one line naming the file, and nothing is
half-changed: a command's effect and its exit status agree."""

from __future__ import annotations

import errno
import os
import sqlite3
import subprocess

import pytest

from clipscribe import Project, ProjectError
from clipscribe.cli import main
from clipscribe.schema.settings import SETTINGS_FILE

from ._fixtures import can_drop_privileges, one_error_line, run_cli, small_project

DB = "project.sqlite"


@pytest.fixture
def proj(tmp_path, make_video):
    p = small_project(tmp_path / "proj", make_video, clips=3)
    for c in p.clips():
        for k in range(60):  # enough rows for the captions to fill several pages
            p.add_caption(c.id, "ann-a", f"the arm lifts block {k} and sets it down on shelf {c.id}")
    p.close()
    return tmp_path / "proj"


def _cli(capsys, *args):
    rc = main(list(args))
    err = capsys.readouterr().err
    return rc, err


def test_missing_database_is_an_error_and_no_new_one_is_made(proj, capsys):
    (proj / DB).unlink()
    with pytest.raises(ProjectError, match="project.sqlite: the project database is missing"):
        Project.open(proj)
    rc, err = _cli(capsys, "add-person", str(proj), "ann-c")
    assert rc == 1 and "missing" in one_error_line(err)
    assert not (proj / DB).exists()


def test_empty_database_is_an_error_and_takes_no_writes(proj, capsys):
    (proj / DB).write_bytes(b"")
    for side in ("-wal", "-shm"):
        (proj / (DB + side)).unlink(missing_ok=True)
    with pytest.raises(ProjectError, match=r"project.sqlite: the project database is empty \(0 bytes\)"):
        Project.open(proj)
    rc, err = _cli(capsys, "add-person", str(proj), "ann-c")
    assert rc == 1 and "empty" in one_error_line(err)
    assert (proj / DB).stat().st_size == 0


def test_a_file_that_is_not_sqlite_is_refused_with_advice(proj):
    (proj / DB).write_bytes(b"this is a shopping list, not a database\n" * 50)
    with pytest.raises(ProjectError) as err:
        Project.open(proj)
    assert "damaged" in str(err.value) and ".recover" in str(err.value)


def _page_count_and_size(path):
    con = sqlite3.connect(path)
    try:
        return con.execute("PRAGMA page_count").fetchone()[0], con.execute("PRAGMA page_size").fetchone()[0]
    finally:
        con.close()


def _damage_middle(path, table=None):
    """Overwrite one b-tree page in the middle of the file with garbage (a bad sector); with
    ``table``, the middle one of the pages that hold that table's rows."""
    pages, size = _page_count_and_size(path)
    assert pages >= 6
    page = pages // 2 + 1  # pages are numbered from 1
    if table is not None:
        con = sqlite3.connect(path)
        try:  # the table's b-tree, walked from its root by the dbstat table
            held = [r[0] for r in con.execute("SELECT pageno FROM dbstat WHERE name = ? "
                                              "ORDER BY pageno", (table,))]
        finally:
            con.close()
        assert len(held) >= 3, held
        page = held[len(held) // 2]
    with open(path, "r+b") as f:
        f.seek((page - 1) * size)
        f.write(b"\x0d\xff\xff\xff" + os.urandom(size - 4))


def test_damage_in_the_middle_is_found_and_no_write_goes_in(proj, capsys):
    _damage_middle(proj / DB)
    with pytest.raises(ProjectError) as err:
        with Project.open(proj, user="lead") as p:
            p.add_annotator("ann-c")  # the first write waits for the page check's verdict
    assert "damaged" in str(err.value) and ".recover" in str(err.value)
    rc, err = _cli(capsys, "add-person", str(proj), "ann-c")
    assert rc == 1 and "damaged" in one_error_line(err)
    con = sqlite3.connect(proj / DB)
    assert "ann-c" not in [r[0] for r in con.execute("SELECT name FROM annotators")]
    con.close()


def test_reading_a_damaged_file_says_so_in_one_line(proj, capsys):
    _damage_middle(proj / DB, table="captions")
    rc, err = _cli(capsys, "dump", str(proj), str(proj.parent / "all.jsonl"))  # reads every caption
    assert rc == 1 and "damaged" in one_error_line(err) and ".recover" in err
    assert not (proj.parent / "all.jsonl").exists() and not (proj.parent / "all.jsonl.tmp").exists()


needs_unprivileged = pytest.mark.skipif(not can_drop_privileges(),
                                        reason="cannot run a command without root's file override")


@needs_unprivileged
def test_export_on_a_read_only_database_writes_nothing_and_fails(proj):
    os.chmod(proj / DB, 0o444)
    out = proj.parent / "export-out"
    r = run_cli("export", str(proj), str(out), "--override", "test", "--min-agreement", "0",
                "--user", "lead", as_unprivileged=True)
    assert r.returncode == 1
    line = one_error_line(r.stderr)
    assert "read-only" in line and "nothing" in line
    assert not out.exists(), "the export was written although the command failed"
    leftovers = [p.name for p in proj.parent.iterdir() if p.name.startswith(".export-out")]
    assert not leftovers


@needs_unprivileged
def test_read_only_database_still_answers_read_commands(proj):
    os.chmod(proj / DB, 0o444)
    r = run_cli("stats", str(proj), as_unprivileged=True)
    assert r.returncode == 0, r.stderr
    assert "captions" in r.stdout
    r = run_cli("add-person", str(proj), "ann-c", as_unprivileged=True)
    assert r.returncode == 1 and "read-only" in one_error_line(r.stderr)


def _blind_state(folder):
    with Project.open(folder, user="lead") as p:
        return p.blind_mode(), p.settings.blind


def test_blind_off_on_a_full_disk_changes_neither_settings_nor_database(proj, monkeypatch, capsys):
    """ENOSPC at the file layer: the settings file cannot be written."""
    before = (proj / SETTINGS_FILE).read_bytes()
    import clipscribe.project.facade as project_mod

    def full(_fd):
        raise OSError(errno.ENOSPC, os.strerror(errno.ENOSPC))
    monkeypatch.setattr(project_mod.os, "fsync", full)
    rc, err = _cli(capsys, "blind", str(proj), "off", "--user", "lead")
    monkeypatch.undo()
    assert rc == 1 and "No space left on device" in one_error_line(err)
    assert _blind_state(proj) == (True, True)
    assert (proj / SETTINGS_FILE).read_bytes() == before
    assert not (proj / (SETTINGS_FILE + ".tmp")).exists()


def test_blind_off_whose_database_write_fails_leaves_the_settings_file(proj, monkeypatch):
    before = (proj / SETTINGS_FILE).read_bytes()
    with Project.open(proj, user="lead") as p:
        def refuse(_fn):
            raise ProjectError("database refused")
        monkeypatch.setattr(p._uow, "write", refuse)  # the unit of work runs every write
        with pytest.raises(ProjectError):
            p.set_blind(False)
    assert (proj / SETTINGS_FILE).read_bytes() == before
    assert _blind_state(proj) == (True, True)


@pytest.fixture
def tiny_disk(tmp_path):
    """A 1 MB tmpfs (root only; skipped where mounting is not allowed)."""
    mnt = tmp_path / "tiny"
    mnt.mkdir()
    r = subprocess.run(["mount", "-t", "tmpfs", "-o", "size=1m", "tmpfs", str(mnt)],
                       capture_output=True)
    if r.returncode != 0:
        pytest.skip("cannot mount a small tmpfs here")
    yield mnt
    subprocess.run(["umount", "-l", str(mnt)], capture_output=True)


def _fill(disk):
    with open(disk / "filler", "wb", buffering=0) as f:
        try:
            while True:
                f.write(b"\0" * 512)
        except OSError as exc:
            assert exc.errno == errno.ENOSPC


def test_blind_off_on_a_really_full_disk(tmp_path, make_video, tiny_disk, capsys):
    p = Project.create(tiny_disk / "proj", user="lead")
    p.close()
    folder = tiny_disk / "proj"
    before = (folder / SETTINGS_FILE).read_bytes()
    _fill(tiny_disk)
    rc, err = _cli(capsys, "blind", str(folder), "off", "--user", "lead")
    (tiny_disk / "filler").unlink()
    assert rc == 1
    line = one_error_line(err)
    assert "full" in line or "No space" in line
    assert (folder / SETTINGS_FILE).read_bytes() == before
    assert _blind_state(folder) == (True, True)


def test_dump_on_a_full_disk_leaves_no_temporary_file(proj, tiny_disk, capsys):
    _fill(tiny_disk)
    rc, err = _cli(capsys, "dump", str(proj), str(tiny_disk / "all.jsonl"))
    assert rc == 1 and "No space left on device" in one_error_line(err)
    assert sorted(p.name for p in tiny_disk.iterdir()) == ["filler"]


@needs_unprivileged
def test_a_read_only_project_folder_still_answers_read_commands(proj):
    os.chmod(proj, 0o555)
    try:
        r = run_cli("stats", str(proj), as_unprivileged=True)
        assert r.returncode == 0, r.stderr
        assert "captions" in r.stdout and "180" in r.stdout
        r = run_cli("dump", str(proj), str(proj.parent / "all.jsonl"), as_unprivileged=True)
        assert r.returncode == 0, r.stderr
        r = run_cli("add-person", str(proj), "ann-c", as_unprivileged=True)
        assert r.returncode == 1 and "read-only" in one_error_line(r.stderr)
    finally:
        os.chmod(proj, 0o755)
    with Project.open(proj) as p:
        assert "ann-c" not in [a.name for a in p.annotators()]


def test_the_window_reports_a_damaged_database_instead_of_saving(proj, qapp):
    from clipscribe.ui.editor import ClipEditor
    _damage_middle(proj / DB)
    p = Project.open(proj, user="ann-a")
    try:
        editor = ClipEditor(p)
        editor.clip = 1
        said = []
        editor.notSaved.connect(said.append)
        assert editor.set_label("stack") is None
        assert said and "damaged" in said[0] and ".recover" in said[0]
    finally:
        p.close()


def test_export_to_a_full_disk_is_one_line_and_leaves_nothing(proj, tiny_disk, capsys):
    out = tiny_disk / "out"
    _fill(tiny_disk)
    rc, err = _cli(capsys, "export", str(proj), str(out), "--override", "test", "--min-agreement",
                   "0", "--media", "copy", "--user", "lead")
    assert rc == 1
    assert "No space left on device" in one_error_line(err)
    assert [p.name for p in tiny_disk.iterdir()] == ["filler"]


def test_report_to_a_full_disk_is_one_line_and_leaves_no_temporary_file(proj, tiny_disk, capsys):
    _fill(tiny_disk)
    rc, err = _cli(capsys, "report", str(proj), str(tiny_disk / "report"), "--boot", "20",
                   "--user", "lead")
    err = "\n".join(l for l in err.splitlines() if not l.startswith("report: "))  # progress
    line = one_error_line(err)
    assert rc == 1 and "No space left on device" in line and str(tiny_disk / "report") in line
    leftovers = [p.name for p in tiny_disk.rglob("*") if p.name != "filler" and p.is_file()]
    assert leftovers == []
