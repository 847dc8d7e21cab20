"""Computation modules import no Qt and no database layer (DESIGN.md, 'Layers')."""

from __future__ import annotations

import json
import subprocess
import sys

import pytest


@pytest.mark.parametrize("module", ["clipscribe.media", "clipscribe.agreement", "clipscribe.export",
                                    "clipscribe.schema"])
def test_engine_imports_no_qt_and_no_database(module):
    code = (f"import sys, json; import {module}; "
            "print(json.dumps(sorted(m for m in sys.modules if m.split('.')[0] in "
            "('PySide6', 'sqlalchemy', 'alembic', 'psycopg') or m.startswith('clipscribe.store') "
            "or m.startswith('clipscribe.ui') or m == 'clipscribe.project')))")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, check=True)
    assert json.loads(out.stdout) == []
