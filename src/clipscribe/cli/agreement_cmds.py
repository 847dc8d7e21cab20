"""``clipscribe agreement DIR``: the whole agreement report as a table, or JSON."""

from __future__ import annotations

import argparse

from .common import cycle_collector_paused, open_project


def cmd_agreement(args: argparse.Namespace) -> int:
    with cycle_collector_paused(), open_project(args) as p:
        rep = p.agreement_report(seed=args.seed, n_boot=args.boot, cache=not args.no_cache)
    if args.json:
        from ..review_report.jsontext import json_text
        print(json_text(report_json(rep, all_rows=args.all_rows, summary=args.summary,
                                    top=args.top)))
    else:
        print(rep.to_text(top=args.top))
    return 0


def report_json(rep, *, all_rows: bool, summary: bool, top: int) -> dict:
    """What ``--json`` prints. By default every number of the report and the ``top`` most
    disputed clips, but not the rows per clip and per caption: at 100k clips those are ~100 MB
    of JSON (a terminal or a pipe chokes on it, and most scripts want the numbers); the report's
    CSV tables, ``--all-rows`` and ``Project.agreement_report()`` give them all."""
    if all_rows:
        return rep.to_dict()
    out = rep.to_dict(items=False)
    if not summary:
        out["most_disputed"] = [c.to_dict() for c in rep.review_queue(top)]
    return out


def register(add) -> None:
    sp = add("agreement", cmd_agreement, "print the agreement report (labels, segments, captions)", user=True)
    sp.add_argument("--json", action="store_true",
                    help="print JSON instead of a table: every number and the --top most "
                         "disputed clips (the rows per clip and per caption: --all-rows)")
    sp.add_argument("--all-rows", action="store_true",
                    help="with --json: also every row per clip and per caption (per clip "
                         "scores, flagged captions, inferred labels; ~1 KB per clip)")
    sp.add_argument("--summary", action="store_true",
                    help="with --json: the numbers alone, without the most disputed clips")
    sp.add_argument("--top", type=int, default=10, help="how many most-disputed clips to list")
    sp.add_argument("--seed", type=int, default=0, help="bootstrap seed")
    sp.add_argument("--boot", type=int, default=1000, help="bootstrap resamples for the 95%% intervals")
    sp.add_argument("--no-cache", action="store_true",
                    help="compute every part now instead of reusing the project's kept caption part")
