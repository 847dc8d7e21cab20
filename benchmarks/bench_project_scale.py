"""How the project-level commands grow with the project: `stats`, `agreement --json`, `report`,
`export --dry-run` (fingerprints present) and the review view's first screenshot, on synthetic
projects of 1k, 10k (and with --big 100k) clips x 3 annotators x 3 captions, each beside the
1k figure so growth is visible (a ratio of 10 for 10x the clips is linear).

``agreement_cold`` is the first run on an empty result cache (it computes the caption part and
keeps it in the project's .clipscribe-cache/results); ``agreement`` and ``agreement_summary``
(``--json --summary``: no rows per clip or caption) are the runs after it, which reuse that
part, as ``report`` does. Each command runs in a fresh process; its peak memory is that process's VmHWM (read from
/proc/self/status at exit, so a parent's peak is never carried over). Projects are built once
by benchmarks/make_big_project.py into benchmarks/out/ and reused.

Goals (issue "A 100k-clip project that answers in seconds"): at 100k clips agreement < 3 s,
report < 5 s, stats < 0.5 s, review view usable < 2 s, export --dry-run < 10 s.

usage: python benchmarks/bench_project_scale.py [--sizes 1000,10000] [--big] [--skip-view]
Prints JSON.
"""

from __future__ import annotations

import argparse
import json
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
OUT = ROOT / "benchmarks" / "out"

# runs the CLI in this process, then reports its peak memory on stderr's last line
RUN = ("import sys\nfrom clipscribe.cli import main\ncode = main(sys.argv[1:])\n"
       "peak = [l for l in open('/proc/self/status') if l.startswith('VmHWM')][0].split()[1]\n"
       "print('VMHWM_KB', peak, file=sys.stderr)\nsys.exit(code)\n")


def project(n: int) -> Path:
    folder = OUT / f"scale-{n}"
    if not (folder / "project.sqlite").exists():
        subprocess.run([sys.executable, str(ROOT / "benchmarks" / "make_big_project.py"),
                        str(folder), "--clips", str(n), "--fingerprints"], check=True,
                       stdout=subprocess.DEVNULL)
    return folder


def timed(args: list[str], env: dict[str, str] | None = None) -> dict:
    t = time.perf_counter()
    done = subprocess.run([sys.executable, "-c", RUN, *args], capture_output=True, text=True,
                          env=env or dict(os.environ, PYTHONPATH=str(ROOT / "src")))
    seconds = time.perf_counter() - t
    peak = next((int(line.split()[1]) for line in done.stderr.splitlines()[::-1]
                 if line.startswith("VMHWM_KB")), None)
    out = {"seconds": round(seconds, 2), "peak_mb": round(peak / 1024, 1) if peak else None,
           "exit": done.returncode}
    if done.returncode:
        out["error"] = done.stderr.strip().splitlines()[-2:] if done.stderr.strip() else []
    return out


def measure(folder: Path, skip_view: bool) -> dict:
    # the first agreement run starts from an empty result cache (cold: it computes the caption
    # part and keeps it); the next ones reuse it (warm), as does the report after them
    shutil.rmtree(folder / ".clipscribe-cache" / "results", ignore_errors=True)
    with tempfile.TemporaryDirectory() as tmp:
        rows = {
            "stats": timed(["stats", str(folder), "--json"]),
            "agreement_cold": timed(["agreement", str(folder), "--json"]),
            "agreement": timed(["agreement", str(folder), "--json"]),
            "agreement_summary": timed(["agreement", str(folder), "--json", "--summary"]),
            "report": timed(["report", str(folder), str(Path(tmp) / "report")]),
            "export_dry_run": timed(["export", str(folder), str(Path(tmp) / "export"), "--dry-run"]),
        }
        if not skip_view:
            env = dict(os.environ, PYTHONPATH=str(ROOT / "src"), QT_QPA_PLATFORM="offscreen",
                       XDG_CONFIG_HOME=str(Path(tmp) / "config"))
            rows["review_view_screenshot"] = timed(
                ["open", str(folder), "--view", "review", "--screenshot", str(Path(tmp) / "r.png")], env)
    return rows


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--sizes", default="1000,10000")
    ap.add_argument("--big", action="store_true", help="also 100,000 clips (builds ~1 GB once)")
    ap.add_argument("--skip-view", action="store_true", help="leave out the review view")
    a = ap.parse_args()
    sizes = [int(s) for s in a.sizes.split(",")] + ([100_000] if a.big else [])
    results = {n: measure(project(n), a.skip_view) for n in sizes}
    base = results[min(sizes)]
    growth = {n: {k: round(v["seconds"] / base[k]["seconds"], 1) for k, v in r.items()}
              for n, r in results.items() if n != min(sizes)}
    print(json.dumps({"results": results, f"growth_vs_{min(sizes)}": growth,
                      "load_average": os.getloadavg()}, indent=2))


if __name__ == "__main__":
    main()
