"""How the project-level commands grow with the project: `stats`, `agreement --json`, `report`,
`export --dry-run` (fingerprints present), the review view's first screenshot, the review view
usable (a first page of the disputed queue and a clip's frame on screen) and the board complete
(every panel holds its numbers), on synthetic projects of 1k, 10k (and with --big 100k) clips x
3 annotators x 3 captions, each beside the 1k figure so growth is visible (a ratio of 10 for 10x
the clips is linear). The GUI rows time a fresh process from its start to the moment named.

``import_floor`` is a fresh process that only imports SQLAlchemy's ORM and pydantic, the
libraries a project opens with: the floor under every command row, measured in the same run
(``stats`` is this plus its queries). ``agreement_cold`` is the first run on an empty result cache (it computes the caption part and
keeps it in the project's .clipscribe-cache/results); ``agreement`` (``--json``: every number
and the ten most disputed clips), ``agreement_summary`` (``--json --summary``) and
``agreement_rows`` (``--json --all-rows``: also every row per clip and per caption, ~100 MB at
100k clips) are the runs after it, which reuse that part, as ``report`` does. Likewise
``export_dry_run_first`` plans with no caption clusters kept (the first plan after the captions
changed; the clusters of look-alike clips are kept, as the fingerprints did not change),
``export_dry_run_cold`` with neither kept (a project's first plan, or after clips came or went)
and ``export_dry_run`` plans again, reusing both; ``report_first`` runs with no work
columns of the edit history kept (read whole) and ``report`` again (only new edits read). Each row gives
wall seconds and the process's CPU seconds (user + system). Each command runs in a fresh process; its peak memory is that process's VmHWM (read from
/proc/self/status at exit, so a parent's peak is never carried over). Projects are built once
by benchmarks/make_big_project.py into benchmarks/out/ and reused.

Goals (issue "A 100k-clip project that answers in seconds"): at 100k clips agreement < 3 s,
report < 5 s, stats < 0.5 s, review view usable < 2 s, board complete < 5 s, export --dry-run
< 10 s.

usage: python benchmarks/bench_project_scale.py [--sizes 1000,10000] [--big] [--skip-view]
       [--only ROW,ROW]
Prints JSON.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "benchmarks" / "out"

# runs the CLI in this process as the installed command does (main() reads sys.argv), then
# reports its peak memory on stderr's last line
RUN = ("import sys\nfrom clipscribe.cli import main\ncode = main()\n"
       "peak = [l for l in open('/proc/self/status') if l.startswith('VmHWM')][0].split()[1]\n"
       "print('VMHWM_KB', peak, file=sys.stderr)\nsys.exit(code)\n")

# imports what opening a project needs from elsewhere (SQLAlchemy's ORM, pydantic), nothing more
FLOOR = ("import sys, sqlalchemy.orm, pydantic\n"
         "peak = [l for l in open('/proc/self/status') if l.startswith('VmHWM')][0].split()[1]\n"
         "print('VMHWM_KB', peak, file=sys.stderr)\n")

# opens the window on a view, waits for one moment (a signal of the view), then reports its
# peak memory and leaves at once (os._exit: no waiting for background work still running)
GUI = ("import os, sys, tempfile\nfrom PySide6.QtCore import QSettings, QTimer\n"
       "from clipscribe import Project\nfrom clipscribe.ui.app import application, open_window\n"
       "folder, view, moment = sys.argv[1:4]\napp = application()\n"
       "p = Project.open(folder).__enter__()\n"
       "ini = QSettings(tempfile.mktemp(suffix='.ini'), QSettings.Format.IniFormat)\n"
       "w = open_window(p, view=view, settings=ini)\nw.resize(1366, 768)\nw.show()\n"
       "page = w.review_page.page\n"
       "sig = {'usable': getattr(page.desk, 'usable', page.desk.ready), 'ready': page.desk.ready,"
       " 'loaded': page.board.loaded}[moment]\n"
       "def done():\n"
       "    peak = [l for l in open('/proc/self/status') if l.startswith('VmHWM')][0].split()[1]\n"
       "    print('VMHWM_KB', peak, file=sys.stderr, flush=True)\n    os._exit(0)\n"
       "sig.connect(lambda *a: QTimer.singleShot(0, done))\n"
       "QTimer.singleShot(600000, lambda: os._exit(3))\napp.exec()\n")


def project(n: int) -> Path:
    folder = OUT / f"scale-{n}"
    if not (folder / "project.sqlite").exists():
        subprocess.run([sys.executable, str(ROOT / "benchmarks" / "make_big_project.py"),
                        str(folder), "--clips", str(n), "--fingerprints"], check=True,
                       stdout=subprocess.DEVNULL)
    return folder


def timed(args: list[str], env: dict[str, str] | None = None, code: str = RUN) -> dict:
    t, cpu = time.perf_counter(), _children_cpu()
    done = subprocess.run([sys.executable, "-c", code, *args], capture_output=True, text=True,
                          env=env or dict(os.environ, PYTHONPATH=str(ROOT / "src")))
    seconds, cpu = time.perf_counter() - t, _children_cpu() - cpu
    peak = next((int(line.split()[1]) for line in done.stderr.splitlines()[::-1]
                 if line.startswith("VMHWM_KB")), None)
    out = {"seconds": round(seconds, 2), "cpu_seconds": round(cpu, 2), "peak_mb": round(peak / 1024, 1) if peak else None,
           "exit": done.returncode}
    if done.returncode:
        out["error"] = done.stderr.strip().splitlines()[-2:] if done.stderr.strip() else []
    return out


def _children_cpu() -> float:
    r = resource.getrusage(resource.RUSAGE_CHILDREN)
    return r.ru_utime + r.ru_stime


def measure(folder: Path, skip_view: bool, only: set[str] | None = None) -> dict:
    def cold() -> dict:
        # the first agreement run starts from an empty result cache (it computes the caption
        # part and keeps it); the next ones reuse it (warm), as does the report after them
        shutil.rmtree(folder / ".clipscribe-cache" / "results", ignore_errors=True)
        return timed(["agreement", str(folder), "--json"])

    def report(first: bool) -> dict:
        # first: no work columns of the edit history kept (a project whose board and report
        # were never opened: the whole history is read); then again, reading only new edits
        if first:
            for kept in (folder / ".clipscribe-cache" / "results").glob("workevents*"):
                kept.unlink()
        return timed(["report", str(folder), str(Path(tmp) / "report")])

    def dry_run(drop: tuple[str, ...]) -> dict:
        # cold: no clusters kept at all (the first plan of a project, or after clips came or
        # went); first: no caption clusters kept (the first plan after the captions changed;
        # the fingerprints did not, so their clusters are kept); then the plan again, reusing
        # both, as every later dry run of the same captions does
        for kind in drop:
            for kept in (folder / ".clipscribe-cache" / "results").glob(f"{kind}-*"):
                kept.unlink()
        return timed(["export", str(folder), str(Path(tmp) / "export"), "--dry-run"])

    with tempfile.TemporaryDirectory() as tmp:
        env = dict(os.environ, PYTHONPATH=str(ROOT / "src"), QT_QPA_PLATFORM="offscreen",
                   XDG_CONFIG_HOME=str(Path(tmp) / "config"))
        runs = {
            # the floor under every row: a fresh process that only imports the database and
            # settings libraries the project opens with (stats is this plus its queries)
            "import_floor": lambda: timed([], code=FLOOR),
            "stats": lambda: timed(["stats", str(folder), "--json"]),
            "agreement_cold": cold,
            "agreement": lambda: timed(["agreement", str(folder), "--json"]),
            "agreement_summary": lambda: timed(["agreement", str(folder), "--json", "--summary"]),
            "agreement_rows": lambda: timed(["agreement", str(folder), "--json", "--all-rows"]),
            "report_first": lambda: report(first=True),
            "report": lambda: report(first=False),
            "export_dry_run_cold": lambda: dry_run(("caption-clusters", "media-clusters")),
            "export_dry_run_first": lambda: dry_run(("caption-clusters",)),
            "export_dry_run": lambda: dry_run(()),
        }
        if not skip_view:
            runs.update({
                "review_view_screenshot": lambda: timed(
                    ["open", str(folder), "--view", "review", "--screenshot",
                     str(Path(tmp) / "r.png")], env),
                "review_view_usable": lambda: timed([str(folder), "review", "usable"], env, GUI),
                "board_complete": lambda: timed([str(folder), "board", "loaded"], env, GUI),
            })
        return {name: run() for name, run in runs.items() if only is None or name in only}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000")
    ap.add_argument("--big", action="store_true", help="also 100,000 clips (builds ~1 GB once)")
    ap.add_argument("--skip-view", action="store_true", help="leave out the review view")
    ap.add_argument("--only", help="these rows alone, e.g. export_dry_run,board_complete")
    ap.add_argument("--precompiled", action="store_true",
                    help="clipscribe's modules compiled to bytecode first, as an installed "
                         "package has them (with PYTHONDONTWRITEBYTECODE set, every fresh "
                         "process otherwise compiles every module it imports)")
    a = ap.parse_args()
    if a.precompiled:
        precompile()
    sizes = [int(s) for s in a.sizes.split(",")] + ([100_000] if a.big else [])
    only = set(a.only.split(",")) if a.only else None
    results = {n: measure(project(n), a.skip_view, only) for n in sizes}
    base = results[min(sizes)]
    growth = {n: {k: round(v["seconds"] / base[k]["seconds"], 1) for k, v in r.items()}
              for n, r in results.items() if n != min(sizes)}
    print(json.dumps({"results": results, f"growth_vs_{min(sizes)}": growth,
                      "load_average": os.getloadavg(), "precompiled": a.precompiled}, indent=2))


def precompile() -> None:
    """Compile src/ to bytecode (its __pycache__ folders, which git ignores) for the timed
    processes to read, as an installed package's are."""
    subprocess.run([sys.executable, "-m", "compileall", "-q", str(ROOT / "src")], check=True,
                   stdout=subprocess.DEVNULL)


if __name__ == "__main__":
    main()
