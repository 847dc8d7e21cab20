"""CLI exit codes and one-line errors: 0 done, 1 the work failed, 2 the command line is wrong,
130 interrupted. Commands run in this process through ``main(argv)``; one test runs the
installed ``clipscribe`` command, where the process boundary is the point."""

from __future__ import annotations

import json
import os
import subprocess
import sys
from importlib.metadata import entry_points
from pathlib import Path

import pytest

from clipscribe import Project
from clipscribe.cli import main


@pytest.fixture
def run(capsys):
    """``run(*args) -> (status, stdout, stderr)`` of ``clipscribe ARGS`` in this process."""
    def run_(*args):
        try:
            rc = main([str(a) for a in args])
        except SystemExit as exc:  # argparse: --help, --version and its own usage errors
            rc = exc.code
        out, err = capsys.readouterr()
        return rc, out, err
    return run_


@pytest.mark.parametrize("cmd", ["new", "labels", "caption-rules", "add-person", "add-media", "import",
                                 "dump", "stats", "sample", "schema", "open", "agreement", "export",
                                 "report", "move-to-server", "assign", "next", "set-password",
                                 "set-role", "blind"])
def test_every_command_has_help(run, cmd):
    rc, out, _ = run(cmd, "--help")
    assert rc == 0 and out.startswith(f"usage: clipscribe {cmd} ")


def test_errors_are_one_line_and_nonzero(run, tmp_path):
    rc, _, err = run("stats", tmp_path / "missing")
    assert rc == 1
    assert err.strip().count("\n") == 0 and err.startswith("clipscribe: error: ")
    assert "Traceback" not in err
    assert run("frobnicate")[0] == 2


def test_new_labels_import_dump_stats(run, tmp_path, sample_master):
    d = tmp_path / "p"
    assert run("new", d, "--name", "demo")[0] == 0
    assert run("labels", d, "pick up", "push")[0] == 0
    assert run("add-person", d, "ann-a")[0] == 0
    bad = tmp_path / "bad.jsonl"
    bad.write_text('{"type": "label", "clip": "1", "annotator": "ann-a", "label": "push"}\n')
    rc, _, err = run("import", d, bad)
    assert rc == 1 and "no such clip" in err and "Traceback" not in err
    rc, out, _ = run("stats", sample_master, "--json")
    assert rc == 0 and json.loads(out)["clips"] == 12
    out = tmp_path / "all.jsonl"
    assert run("dump", sample_master, out)[0] == 0 and out.stat().st_size > 0
    rc, out, _ = run("add-media", d)
    assert rc == 0 and "added 0 clip(s)" in out


def test_schema_command_writes_files(run, tmp_path):
    rc, out, _ = run("schema", tmp_path / "schema")
    assert rc == 0
    assert (tmp_path / "schema" / "record-caption.schema.json").exists()
    assert str(tmp_path / "schema" / "record-caption.schema.json") in out.splitlines()


# --- usage errors exit 2; failures of the work exit 1; an interrupt exits 130 ----------------

def test_a_folder_with_copy_from_is_a_usage_error_before_anything_is_opened(run, tmp_path):
    # the project does not even exist: the command line is wrong first, so 2, not 1
    rc, out, err = run("add-media", tmp_path / "missing", "x", "--copy-from", tmp_path)
    assert (rc, out) == (2, "")
    assert err == "clipscribe: error: give either FOLDER or --copy-from, not both\n"
    assert not (tmp_path / "missing").exists()


@pytest.mark.parametrize("args", [
    ["add-media", "DIR", "--group-csv", "g.csv", "--group-pattern", "(?P<group>.+)"],  # conflicting
    ["export", "DIR"],                                  # missing OUT
    ["export", "DIR", "out", "--ratios", "train"],      # a bad value
    ["set-role", "DIR", "ann-a", "boss"],               # not a choice
    [],                                                 # in a terminal: no command at all
])
def test_argparse_usage_errors_exit_2(run, tmp_path, monkeypatch, args):
    monkeypatch.setattr(sys.stdout, "isatty", lambda: True)
    rc, out, err = run(*[str(tmp_path / "p") if a == "DIR" else a for a in args])
    assert rc == 2 and out == ""
    assert "usage: clipscribe" in err and "error:" in err
    assert not (tmp_path / "p").exists()


def test_a_runtime_failure_keeps_exit_1(run, tmp_path):
    with Project.create(tmp_path / "p") as p:
        p.define_labels(["push"])
    rc, _, err = run("add-media", tmp_path / "p", tmp_path / "elsewhere")  # not in the media root
    assert rc == 1 and err.startswith("clipscribe: error: ") and err.count("\n") == 1


def test_ctrl_c_during_a_command_is_one_line_and_exit_130(run, tmp_path, monkeypatch):
    Project.create(tmp_path / "p").close()

    def interrupted(self):
        raise KeyboardInterrupt
    monkeypatch.setattr(Project, "stats", interrupted)
    monkeypatch.setenv("CLIPSCRIBE_DEBUG", "1")  # an interrupt is expected: still no traceback
    rc, out, err = run("stats", tmp_path / "p")
    assert (rc, out, err) == (130, "", "clipscribe: interrupted\n")


def test_an_unexpected_fault_is_one_line_and_exit_1(run, tmp_path, monkeypatch):
    Project.create(tmp_path / "p").close()

    def broken(self):
        raise ZeroDivisionError("division by zero")
    monkeypatch.setattr(Project, "stats", broken)
    monkeypatch.delenv("CLIPSCRIBE_DEBUG", raising=False)
    rc, _, err = run("stats", tmp_path / "p")
    assert (rc, err) == (1, "clipscribe: unexpected ZeroDivisionError: division by zero\n")
    monkeypatch.setenv("CLIPSCRIBE_DEBUG", "1")  # for a developer: the traceback after the line
    with pytest.raises(ZeroDivisionError):
        main(["stats", str(tmp_path / "p")])


# --- the process boundary: the installed command --------------------------------------------

def test_the_command_line_loads_nothing_heavy_before_a_command_needs_it():
    # in a fresh interpreter: the parser (what --help and the start of `open` need) is built
    # without the database, video, numeric or Qt modules; the commands import those themselves
    code = ("import sys; from clipscribe.cli import build_parser; build_parser(); "
            "print(sorted(m for m in sys.modules if m.split('.')[0] in "
            "('sqlalchemy', 'cv2', 'numpy', 'PySide6', 'pydantic') or m in "
            "('clipscribe.project', 'clipscribe.store', 'clipscribe.media', 'clipscribe.ui')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=60)
    assert out.returncode == 0, out.stderr
    assert out.stdout.strip() == "[]"


def test_the_installed_command_is_the_cli_main(sample_master):
    (script,) = entry_points(group="console_scripts", name="clipscribe")
    assert script.value == "clipscribe.cli:main"
    exe = Path(sys.executable).with_name("clipscribe")
    if not exe.is_file():
        pytest.skip("the clipscribe command is not installed beside this interpreter")
    env = {k: v for k, v in os.environ.items() if k != "CLIPSCRIBE_DEBUG"}
    r = subprocess.run([str(exe), "stats", str(sample_master), "--json"], capture_output=True,
                       text=True, timeout=120, env=env)
    assert r.returncode == 0, r.stderr
    assert json.loads(r.stdout)["clips"] == 12
    r = subprocess.run([str(exe), "frobnicate"], capture_output=True, text=True, timeout=120, env=env)
    assert r.returncode == 2 and "invalid choice: 'frobnicate'" in r.stderr


def test_the_cycle_collector_pause_always_puts_the_collector_back():
    import gc

    from clipscribe.cli.common import cycle_collector_paused
    before = gc.isenabled()  # a Qt test before this one leaves it off (ui/gc_guard.py)
    try:
        gc.enable()
        with pytest.raises(RuntimeError):
            with cycle_collector_paused():
                assert not gc.isenabled()
                raise RuntimeError("a command failed")
        assert gc.isenabled()
        gc.disable()
        with cycle_collector_paused():
            pass
        assert not gc.isenabled()          # left as it was found
    finally:
        (gc.enable if before else gc.disable)()


def _stats_then_exit_hooks(folder, call: str) -> tuple[dict, bool]:
    """Run ``stats`` in a fresh interpreter by ``call``; its JSON, and whether what was left
    at exit was frozen. The checker is registered before the command, so it runs after the
    command's own exit hook (atexit runs last-in first-out)."""
    code = ("import atexit, gc, sys\n"
            "atexit.register(lambda: print('FROZEN', gc.get_freeze_count() > 0))\n"
            "from clipscribe.cli import main\n"
            f"sys.exit({call})\n")
    r = subprocess.run([sys.executable, "-c", code, "stats", str(folder), "--json"],
                       capture_output=True, text=True, timeout=120)
    assert r.returncode == 0, r.stderr
    out, frozen = r.stdout.rsplit("FROZEN", 1)
    return json.loads(out), frozen.strip() == "True"


def test_the_command_ends_without_the_collectors_last_walk_and_leaves_the_project_closed(
        sample_master, tmp_path):
    import shutil
    folder = tmp_path / "p"
    shutil.copytree(sample_master, folder)
    # run as the program (main() reads sys.argv): what is left at exit is frozen, so the
    # interpreter's final collections skip it
    out, frozen = _stats_then_exit_hooks(folder, "main()")
    assert out["clips"] == 12 and frozen
    # the database was closed by the command, not left to the collector: no write-ahead log
    # or lock file of an open SQLite connection remains
    assert sorted(p.name for p in folder.glob("project.sqlite*")) == ["project.sqlite"]
    # a library call (argv given, as tests and scripts do) keeps the process's collector
    out, frozen = _stats_then_exit_hooks(folder, "main(sys.argv[1:])")
    assert out["clips"] == 12 and not frozen
