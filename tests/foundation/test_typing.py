"""The package ships ``py.typed``: a type checker must be able to follow it. Outside ui/,
mypy finds no attribute that does not exist (``attr-defined``: the kind of error a class
assembled from mixins produced by the hundred) and no name it cannot resolve."""

from __future__ import annotations

import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
KINDS = ("[attr-defined]", "[name-defined]", "[import-not-found]")


@pytest.mark.timeout(600)
def test_mypy_finds_no_missing_attribute_or_name_outside_ui(tmp_path):
    pytest.importorskip("mypy")
    run = subprocess.run(
        [sys.executable, "-m", "mypy", "src/clipscribe", "--cache-dir", str(tmp_path / "cache"),
         "--no-error-summary"], cwd=ROOT, capture_output=True, text=True)
    assert "error: " in run.stdout or run.returncode == 0, run.stderr  # mypy ran over the tree
    bad = [line for line in run.stdout.splitlines() if line.endswith(KINDS)]
    assert bad == [], "\n".join(bad[:20])
    assert not any(line.startswith("src/clipscribe/ui/") for line in run.stdout.splitlines())
