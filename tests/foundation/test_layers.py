"""The import rules of docs/architecture.md ("Layers"), checked by import-linter from the
contracts in pyproject.toml: engines import no Qt and no database, the windows and the command
line reach a project only through the facade, the layers point one way, no import cycles."""

from __future__ import annotations

import os
import shutil
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[2]
LINT = Path(sys.executable).with_name("lint-imports")


def _lint(config: Path, package_dir: Path, *contracts: str) -> subprocess.CompletedProcess[str]:
    env = dict(os.environ, PYTHONPATH=str(package_dir))
    only = [arg for c in contracts for arg in ("--contract", c)]
    return subprocess.run([str(LINT), "--no-cache", "--no-logo", *only, str(config)],
                          cwd=config.parent, capture_output=True, text=True, env=env)


def test_the_package_keeps_every_import_contract():
    done = _lint(ROOT / "pyproject.toml", ROOT / "src")
    assert done.returncode == 0, done.stdout + done.stderr
    assert "5 kept, 0 broken" in done.stdout  # every contract ran


@pytest.mark.parametrize(("module", "line", "contract"), [
    ("agreement/__init__.py", "import PySide6.QtCore", "engines"),
    ("export/__init__.py", "from ..store import models", "engines"),
    ("ui/theme.py", "from ..store import models", "doors-no-database"),
    ("cli/common.py", "import sqlalchemy", "doors-no-database"),
    ("store/models.py", "from ..ui import theme", "below-the-windows"),
    ("types.py", "from .project import facade", "layers"),
    ("schema/__init__.py", "from ..export import writers", "no-cycles"),
])
def test_a_planted_breach_is_caught(tmp_path, module, line, contract):
    """The contracts can fail: one forbidden import added to a copy of the package breaks the
    contract meant to catch it (and the clean copy keeps it)."""
    shutil.copytree(ROOT / "src" / "clipscribe", tmp_path / "src" / "clipscribe",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    target = tmp_path / "src" / "clipscribe" / module
    target.write_text(target.read_text(encoding="utf-8") + f"\n{line}  # planted\n", encoding="utf-8")
    done = _lint(tmp_path / "pyproject.toml", tmp_path / "src", contract)
    assert done.returncode == 1 and "Contracts: 0 kept, 1 broken." in done.stdout, done.stdout
    target.write_text(target.read_text(encoding="utf-8").replace(line, "pass"), encoding="utf-8")
    assert _lint(tmp_path / "pyproject.toml", tmp_path / "src", contract).returncode == 0
