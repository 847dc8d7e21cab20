"""``clipscribe report DIR OUT_FOLDER``: the agreement report as report.html plus CSV tables."""

from __future__ import annotations

import argparse
import sys

from .common import cycle_collector_paused, open_project


def cmd_report(args: argparse.Namespace) -> int:
    from ..review_report import write_report
    with cycle_collector_paused(), open_project(args) as p:
        cues = None
        if args.cues:  # computes (or reads cached) clip features and cross-validates: slower
            from ..review_report.cues import cues_data
            print("report: which cues carry the labels (grouped cross-validation)", file=sys.stderr)
            cues = cues_data(p, seed=args.seed, n_boot=args.boot)
        files = write_report(p, args.out, seed=args.seed, n_boot=args.boot, cues=cues,
                             progress=lambda msg: print(f"report: {msg}", file=sys.stderr))
    print(f"wrote {files.html} and {len(files.csv)} CSV table(s) in {files.seconds:.2f} s")
    return 0


def register(add) -> None:
    sp = add("report", cmd_report, "write the agreement report (report.html + CSV tables) into "
             "a folder; leads only", user=True)
    sp.add_argument("out", metavar="OUT_FOLDER", help="folder to write into (created if missing)")
    sp.add_argument("--seed", type=int, default=0, help="bootstrap seed")
    sp.add_argument("--boot", type=int, default=1000, help="bootstrap resamples for the 95%% intervals")
    sp.add_argument("--cues", action="store_true",
                    help="add \"Which cues carry the labels\": single-frame, appearance, motion "
                         "and fused label suggestions compared by grouped cross-validation")
