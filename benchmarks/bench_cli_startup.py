"""Command-line start-up: wall time of ``clipscribe --help`` and ``clipscribe stats DIR`` beside
a bare ``python -c pass`` measured in the same run (the machine is shared, so the ratios are
the numbers to read), plus the CPU time of each (less sensitive to other load).

Prints one JSON object. Run: PYTHONPATH=src .venv/bin/python benchmarks/bench_cli_startup.py
Options: --runs N (median of N runs, default 9), --sample DIR (a project to count; default: the
sample project built once in a temporary folder).
Goals (issue 19): ``--help`` < 0.3 s, ``stats`` < 0.5 s.
"""

from __future__ import annotations

import argparse
import json
import os
import resource
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

SRC = Path(__file__).resolve().parents[1] / "src"


def _env() -> dict[str, str]:
    env = dict(os.environ)
    env["PYTHONPATH"] = str(SRC) + os.pathsep + env.get("PYTHONPATH", "")
    return env


def timed(cmd: list[str], runs: int) -> dict:
    """Median wall and CPU seconds of ``runs`` runs of ``cmd`` (one warm-up run first)."""
    walls, cpus = [], []
    for i in range(runs + 1):
        before = resource.getrusage(resource.RUSAGE_CHILDREN)
        t = time.perf_counter()
        out = subprocess.run(cmd, env=_env(), capture_output=True, text=True)
        wall = time.perf_counter() - t
        after = resource.getrusage(resource.RUSAGE_CHILDREN)
        if out.returncode != 0:
            raise SystemExit(f"{' '.join(cmd)} failed: {out.stderr.strip()}")
        if i:  # the first run warms the file cache
            walls.append(wall)
            cpus.append((after.ru_utime - before.ru_utime) + (after.ru_stime - before.ru_stime))
    return {"wall_s": round(statistics.median(walls), 4), "cpu_s": round(statistics.median(cpus), 4)}


def main() -> None:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--runs", type=int, default=9)
    ap.add_argument("--sample", help="project folder for `stats` (default: build the sample)")
    args = ap.parse_args()
    py = sys.executable
    with tempfile.TemporaryDirectory(prefix="bench-cli-") as tmp:
        sample = args.sample
        if sample is None:
            sample = str(Path(tmp) / "sample")
            subprocess.run([py, "-m", "clipscribe.cli", "sample", sample], env=_env(), check=True,
                           capture_output=True)
        bare = timed([py, "-c", "pass"], args.runs)
        helped = timed([py, "-m", "clipscribe.cli", "--help"], args.runs)
        stats = timed([py, "-m", "clipscribe.cli", "stats", sample], args.runs)
    print(json.dumps({
        "runs": args.runs,
        "python_c_pass": bare,
        "help": {**helped, "ratio_to_bare_wall": round(helped["wall_s"] / bare["wall_s"], 1)},
        "stats": {**stats, "ratio_to_bare_wall": round(stats["wall_s"] / bare["wall_s"], 1)},
        "goals_s": {"help": 0.3, "stats": 0.5},
    }, indent=2))


if __name__ == "__main__":
    main()
