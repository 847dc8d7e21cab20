"""Open a 100k-clip project in the workbench: time until the window is usable, and the cost of
paging the clip queue, side by side with the obvious alternative (load every clip up front).

Run: QT_QPA_PLATFORM=offscreen PYTHONPATH=src python benchmarks/ui_queue_open.py [N]
Prints one JSON object.
"""

from __future__ import annotations

import json
import os
import shutil
import sys
import tempfile
import time
from pathlib import Path

os.environ.setdefault("QT_QPA_PLATFORM", "offscreen")

from PySide6.QtCore import QSettings  # noqa: E402

from clipscribe import Project  # noqa: E402
from clipscribe.sample.build import build_sample  # noqa: E402
from clipscribe.store.models import Clip  # noqa: E402


def make_project(folder: Path, n: int) -> None:
    """The sample project plus ``n`` bulk-inserted clip rows (media files not needed to list)."""
    build_sample(folder)
    with Project.open(folder) as p:
        rows = [dict(path=f"bulk/clip-{i:06d}.mp4", sha256=f"{i:064x}", fps=15.0, frame_count=60,
                     duration=4.0, width=320, height=240, group_key=f"g{i % 500:03d}",
                     source=None, licence=None, consent=True, state="new", fingerprint=None)
                for i in range(n)]
        with p.engine.begin() as conn:
            conn.execute(Clip.__table__.insert(), rows)


def main() -> None:
    n = int(sys.argv[1]) if len(sys.argv) > 1 else 100_000
    tmp = Path(tempfile.mkdtemp(prefix="clipscribe-bench-"))
    os.environ["XDG_CACHE_HOME"] = str(tmp / "cache")
    try:
        folder = tmp / "project"
        t = time.perf_counter()
        make_project(folder, n)
        build_s = time.perf_counter() - t

        from clipscribe.ui.app import application
        from clipscribe.ui.workbench.main_window import MainWindow
        from clipscribe.ui.workbench.queue_model import ClipQueueModel
        app = application()
        settings = QSettings(str(tmp / "w.ini"), QSettings.Format.IniFormat)

        p = Project.open(folder, user="annotator-1")
        t = time.perf_counter()
        w = MainWindow(p, settings=settings)
        w.show()
        app.processEvents()
        open_s = time.perf_counter() - t

        # scrolling: each page the view asks for as the user scrolls down
        model = w.queue_model
        pages = []
        for _ in range(50):
            t = time.perf_counter()
            model.fetchMore()
            app.processEvents()
            pages.append(time.perf_counter() - t)
        t = time.perf_counter()
        w.open_clip(p.clip_count())  # jump to the last clip: the queue selects its row
        app.processEvents()
        jump_s = time.perf_counter() - t
        w.close()

        # the obvious alternative: read every clip before showing anything
        t = time.perf_counter()
        everything = p.queue_rows(p.user)
        eager_s = time.perf_counter() - t
        t = time.perf_counter()
        ClipQueueModel(p)
        lazy_model_s = time.perf_counter() - t
        p.close()
        pages.sort()
        print(json.dumps({
            "clips": len(everything), "build_project_s": round(build_s, 2),
            "window_usable_s": round(open_s, 3), "budget_s": 2.0,
            "lazy_queue_model_s": round(lazy_model_s, 4),
            "eager_load_all_rows_s": round(eager_s, 3),
            "eager_over_lazy_ratio": round(eager_s / lazy_model_s, 1),
            "fetch_page_median_ms": round(1000 * pages[len(pages) // 2], 2),
            "fetch_page_max_ms": round(1000 * pages[-1], 2),
            "jump_to_last_clip_s": round(jump_s, 3),
        }, indent=2))
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


if __name__ == "__main__":
    main()
