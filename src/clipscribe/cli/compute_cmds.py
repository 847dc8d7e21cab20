"""``clipscribe compute``: precompute frame indexes, thumbnails, motion curves, fingerprints and
clip features for every clip on worker processes (a local cluster, or a Dask scheduler)."""

from __future__ import annotations

import argparse

from .common import Bar, UsageError, open_project

KINDS = "index,thumbs,motion,fingerprint,features"


def cluster_options(sp: argparse.ArgumentParser, *, workers_help: str) -> None:
    """``--workers``, ``--scheduler`` and ``--map``: where per-file work runs."""
    sp.add_argument("--workers", type=int, metavar="N", help=workers_help)
    sp.add_argument("--scheduler", metavar="ADDRESS",
                    help="use the workers of this Dask scheduler (tcp://host:8786) instead of "
                         "starting local ones")
    sp.add_argument("--map", action="append", default=[], metavar="CLIENT=WORKER",
                    help="path prefix here = the same folder's path on the workers (shared "
                         "storage mounted elsewhere); may be given more than once")


def checked_workers(args: argparse.Namespace) -> None:
    if args.workers is not None and args.workers < 0:
        raise UsageError(f"--workers must be 0 or more, not {args.workers}")
    if args.workers is not None and args.scheduler:
        raise UsageError("give either --workers or --scheduler, not both")


def cmd_compute(args: argparse.Namespace) -> int:
    checked_workers(args)
    with open_project(args) as p:
        rep = p.compute(args.what, group=args.group, workers=args.workers,
                        scheduler=args.scheduler, path_map=args.map, cache_dir=args.cache,
                        progress=Bar("computing"))
    work = rep.clips - rep.already_done
    print(f"{rep.clips} clip(s): {rep.already_done} already done, {rep.computed} computed, "
          f"{len(rep.failed)} failed ({', '.join(rep.what)}"
          + (f"; on {rep.ran_on}" if rep.ran_on else "") + ")")
    if work:
        print(f"{rep.seconds:.1f} s, {work / rep.seconds if rep.seconds else 0:.2f} clips/s; "
              f"database writes {rep.write_seconds:.2f} s")
    for path, reason in rep.failed:
        print(f"  failed {path}: {reason}")
    return 1 if rep.failed else 0


def register(add) -> None:
    sp = add("compute", cmd_compute, "compute what is missing for every clip (frame index, "
             "thumbnails, motion curve, fingerprint, features) on worker processes; resumable",
             user=True)
    sp.add_argument("--what", default=KINDS, metavar="KINDS",
                    help=f"comma-separated kinds of work (default: {KINDS})")
    sp.add_argument("--group", help="only the clips of this group")
    sp.add_argument("--cache", metavar="FOLDER",
                    help="cache folder for the results (default: the per-user cache, "
                         "$XDG_CACHE_HOME/clipscribe); give one on shared storage for workers "
                         "on other machines")
    cluster_options(sp, workers_help="worker processes of the local cluster (default: cores - 1; "
                                     "0: compute in this process, without Dask)")
