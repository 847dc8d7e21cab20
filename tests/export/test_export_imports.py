"""The export package stays free of Qt and of the database layer (DESIGN.md layering)."""

from __future__ import annotations

import subprocess
import sys


def test_export_imports_no_qt_and_no_database():
    code = ("import sys, clipscribe.export; "
            "bad = sorted(m for m in sys.modules if m.split('.')[0] in "
            "('PySide6', 'sqlalchemy', 'alembic', 'psycopg') or m.startswith('clipscribe.store')"
            " or m.startswith('clipscribe.ui')); print(bad); sys.exit(1 if bad else 0)")
    done = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True)
    assert done.returncode == 0, done.stdout + done.stderr
