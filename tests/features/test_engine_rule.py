"""The features package is an engine: the import contract catches Qt or a database in it."""

from __future__ import annotations

import shutil

from tests.foundation.test_layers import ROOT, _lint


def test_qt_planted_in_the_features_package_breaks_the_engines_contract(tmp_path):
    shutil.copytree(ROOT / "src" / "clipscribe", tmp_path / "src" / "clipscribe",
                    ignore=shutil.ignore_patterns("__pycache__"))
    shutil.copy(ROOT / "pyproject.toml", tmp_path / "pyproject.toml")
    target = tmp_path / "src" / "clipscribe" / "features" / "descriptors.py"
    target.write_text(target.read_text(encoding="utf-8") + "\nimport PySide6.QtCore  # planted\n",
                      encoding="utf-8")
    done = _lint(tmp_path / "pyproject.toml", tmp_path / "src", "engines")
    assert done.returncode == 1 and "Contracts: 0 kept, 1 broken." in done.stdout, done.stdout
