"""CLI exit codes and one-line errors."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest


def run(*args, cwd=None):
    return subprocess.run([sys.executable, "-m", "clipscribe.cli", *map(str, args)],
                          capture_output=True, text=True, cwd=cwd, timeout=120)


@pytest.mark.parametrize("cmd", ["new", "labels", "add-person", "add-media", "import", "dump", "stats",
                                 "sample", "schema", "open"])
def test_every_command_has_help(cmd):
    r = run(cmd, "--help")
    assert r.returncode == 0 and "usage:" in r.stdout


def test_errors_are_one_line_and_nonzero(tmp_path):
    r = run("stats", tmp_path / "missing")
    assert r.returncode == 1
    assert r.stderr.strip().count("\n") == 0 and "Traceback" not in r.stderr
    assert run("frobnicate").returncode == 2


def test_new_labels_import_dump_stats(tmp_path, sample_dir):
    d = tmp_path / "p"
    assert run("new", d, "--name", "demo").returncode == 0
    assert run("labels", d, "pick up", "push").returncode == 0
    assert run("add-person", d, "ann-a").returncode == 0
    bad = tmp_path / "bad.jsonl"
    bad.write_text('{"type": "label", "clip": "1", "annotator": "ann-a", "label": "push"}\n')
    r = run("import", d, bad)
    assert r.returncode == 1 and "no such clip" in r.stderr and "Traceback" not in r.stderr
    r = run("stats", sample_dir, "--json")
    assert r.returncode == 0 and json.loads(r.stdout)["clips"] == 12
    out = tmp_path / "all.jsonl"
    assert run("dump", sample_dir, out).returncode == 0 and out.stat().st_size > 0
    r = run("add-media", d)
    assert r.returncode == 0 and "added 0 clip(s)" in r.stdout


def test_schema_command_writes_files(tmp_path):
    r = run("schema", tmp_path / "schema")
    assert r.returncode == 0
    assert (tmp_path / "schema" / "record-caption.schema.json").exists()
