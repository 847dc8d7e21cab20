"""Launch to first window: seconds from starting ``clipscribe open DIR`` to a clipscribe
window being on the X display, median of a few runs; with --before SRC also for another source
tree (e.g. an older checkout's src/), as a ratio.

Run under a virtual display:  xvfb-run -s "-screen 0 1366x768x24" python benchmarks/ui_launch.py
Prints JSON. The window is found by polling ``xwininfo -root -tree`` every 10 ms.
"""

from __future__ import annotations

import argparse
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

POLL_S = 0.01
TIMEOUT_S = 60.0


def one_launch(folder: Path, src: Path | None, what: str) -> float:
    """Seconds until a top-level window whose name starts with ``what`` is mapped."""
    env = dict(os.environ, XDG_CONFIG_HOME=tempfile.mkdtemp(prefix="launch-cfg-"),
               QT_QPA_PLATFORM="xcb")
    if src is not None:
        env["PYTHONPATH"] = str(src)
    t0 = time.perf_counter()
    proc = subprocess.Popen([sys.executable, "-c", "import sys; from clipscribe.cli import main; "
                             "sys.exit(main(sys.argv[1:]))", "open", str(folder)],
                            env=env, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
    try:
        while time.perf_counter() - t0 < TIMEOUT_S:
            tree = subprocess.run(["xwininfo", "-root", "-tree"], capture_output=True,
                                  text=True).stdout
            if any(f'"{what}' in line and " 1x1+" not in line for line in tree.splitlines()):
                return time.perf_counter() - t0
            if proc.poll() is not None:
                raise RuntimeError(f"clipscribe exited ({proc.returncode}) before a window showed")
            time.sleep(POLL_S)
        raise TimeoutError("no window within the time limit")
    finally:
        proc.terminate()
        try:
            proc.wait(10)
        except subprocess.TimeoutExpired:
            proc.kill()


def measure(folder: Path, src: Path | None, runs: int, what: str) -> dict:
    times = [one_launch(folder, src, what) for _ in range(runs)]
    return {"median_s": round(statistics.median(times), 3),
            "runs_s": [round(t, 3) for t in times]}


def main() -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--project", help="project folder (default: the sample, built in a temp folder)")
    ap.add_argument("--runs", type=int, default=5)
    ap.add_argument("--before", metavar="SRC", help="another source tree to compare with")
    args = ap.parse_args()
    if not os.environ.get("DISPLAY"):
        print("needs an X display: run under xvfb-run", file=sys.stderr)
        return 2
    folder = Path(args.project) if args.project else None
    if folder is None:
        folder = Path(tempfile.mkdtemp(prefix="launch-")) / "project"
        from clipscribe.sample import build_sample
        build_sample(folder)
    name = json.loads((folder / "clipscribe-project.json").read_text(encoding="utf-8"))["name"]
    kinds = {"first_window": "clipscribe", "workbench": f"clipscribe — {name} — "}
    out = {"what": "seconds from `clipscribe open DIR` to a window on the display: any "
                   "clipscribe window (first_window), and the workbench itself",
           "project": str(folder), "runs": args.runs,
           "after": {k: measure(folder, None, args.runs, t) for k, t in kinds.items()}}
    if args.before:
        out["before"] = {k: measure(folder, Path(args.before), args.runs, t) for k, t in kinds.items()}
        out["first_window_before_over_after"] = round(
            out["before"]["first_window"]["median_s"] / out["after"]["first_window"]["median_s"], 2)
    print(json.dumps(out, indent=2))
    return 0


if __name__ == "__main__":
    sys.exit(main())
