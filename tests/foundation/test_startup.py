"""What ``clipscribe stats`` loads: opening a project and counting its rows needs the database
layer and the settings, never the agreement, export or video code, numpy, Qt or the migration
tool (when the schema is already current). Import sets only; timings live in benchmarks/."""

from __future__ import annotations

import subprocess
import sys

from clipscribe.store import db

HEAVY = ("numpy", "cv2", "PySide6", "alembic", "clipscribe.agreement", "clipscribe.export",
         "clipscribe.media", "clipscribe.ui", "clipscribe.review_report", "clipscribe.schema.records")


def test_stats_loads_nothing_it_does_not_need(sample_master):
    code = ("import sys; from clipscribe.cli import main; "
            f"rc = main(['stats', {str(sample_master)!r}]); "
            f"print(rc, sorted({{m.split('.')[0] if not m.startswith('clipscribe') else m "
            f"for m in sys.modules if m.startswith({HEAVY!r})}}), file=sys.stderr)")
    out = subprocess.run([sys.executable, "-c", code], capture_output=True, text=True, timeout=120)
    assert out.returncode == 0, out.stderr
    assert "clips" in out.stdout  # the counts were printed
    assert out.stderr.strip().splitlines()[-1] == "0 []"


def test_the_head_read_from_the_revision_files_is_alembics():
    from alembic.script import ScriptDirectory
    assert db._head_from_files() == ScriptDirectory(str(db.MIGRATIONS)).get_current_head()
