"""``clipscribe agreement DIR``: the whole agreement report as a table, or JSON."""

from __future__ import annotations

import argparse

from .common import open_project


def cmd_agreement(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        rep = p.agreement_report(seed=args.seed, n_boot=args.boot, cache=not args.no_cache)
    if args.json:
        from ..review_report.jsontext import json_text
        print(json_text(rep.to_dict(items=not args.summary)))
    else:
        print(rep.to_text(top=args.top))
    return 0


def register(add) -> None:
    sp = add("agreement", cmd_agreement, "print the agreement report (labels, segments, captions)", user=True)
    sp.add_argument("--json", action="store_true", help="print JSON instead of a table")
    sp.add_argument("--summary", action="store_true",
                    help="with --json: leave out what has a row per clip or caption (per clip "
                         "scores, flagged captions, inferred labels; the report's CSV tables hold them)")
    sp.add_argument("--top", type=int, default=10, help="how many most-disputed clips to list")
    sp.add_argument("--seed", type=int, default=0, help="bootstrap seed")
    sp.add_argument("--boot", type=int, default=1000, help="bootstrap resamples for the 95%% intervals")
    sp.add_argument("--no-cache", action="store_true",
                    help="compute every part now instead of reusing the project's kept caption part")
