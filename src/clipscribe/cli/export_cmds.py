"""``clipscribe export DIR OUT``: plan, check for leakage, and write a dataset export."""

from __future__ import annotations

import argparse

from ..errors import RecordError
from .common import Bar, cycle_collector_paused, open_project
from .compute_cmds import checked_workers, cluster_options


def _ratios(text: str) -> dict[str, float]:
    out = {}
    for part in text.split(","):
        name, _, value = part.partition("=")
        try:
            out[name.strip()] = float(value)
        except ValueError:
            raise argparse.ArgumentTypeError(f"{part!r}: expected name=fraction, e.g. train=0.7") from None
    return out


def print_leakage(report) -> None:
    findings = list(report.blocking) + list(report.warnings)
    if not findings:
        print("leakage check: no findings")
        return
    print(f"leakage check: {len(report.blocking)} blocking, {len(report.warnings)} warning(s)")
    for f in findings:
        print(f"  [{f.severity}] {f.kind}: {f.message}")


def _split_counts(plan) -> str:
    counts: dict[str, int] = {}
    for split in plan.assignment.values():
        counts[split] = counts.get(split, 0) + 1
    return ", ".join(f"{k} {v}" for k, v in sorted(counts.items()))


def _print_left_out(left_out, where: str = "", media=None) -> None:
    if left_out:
        print(f"left out {len(left_out)} clip(s){where}:")
        for d in left_out:
            name = (media or {}).get(d.clip_id)
            print(f"  {name} (clip {d.clip_id}): {d.reason}" if name else
                  f"  clip {d.clip_id}: {d.reason}")


def print_warnings(plan, where: str = "") -> None:
    """Quality warnings (splits off their ratios, clips short of captions), one line each."""
    for w in plan.warnings:
        print(f"warning{where}: {w.kind}: {w.message}")


def _print_cleaned(p) -> None:
    for path in getattr(p, "last_export_cleaned", ()):
        print(f"removed {path.name}, left unfinished by an earlier export that was stopped")


def _write(fn):
    """Run a write; blocked or failed exports become one-line errors (nothing was written)."""
    from .. import export
    try:
        return fn()
    except export.ExportBlocked as exc:
        raise RecordError(f"{exc} (nothing was written; use --override REASON to accept them)") from None
    except export.ExportError as exc:
        raise RecordError(str(exc)) from None


def _fingerprints(p, args: argparse.Namespace) -> None:
    """Say how many clips have no fingerprint before the check, and compute them through the
    compute path when asked (``--compute-missing``); the check itself never computes them."""
    missing = p.missing_fingerprints()
    if not missing:
        return
    if not args.compute_missing:
        print(f"fingerprints: {missing} clip(s) have none, so the near-duplicate check will not "
              "cover them (reported as not checked, counted in the manifest); add "
              "--compute-missing to compute them first, or run "
              f"'clipscribe compute {args.project} --what fingerprint'")
        return
    rep = p.compute(["fingerprint"], workers=args.workers, scheduler=args.scheduler,
                    path_map=args.map, progress=Bar("fingerprints"))
    print(f"fingerprints: computed {rep.computed} of {missing} missing"
          + (f", {len(rep.failed)} failed (not checked for near duplicates)" if rep.failed
             else ""))
    for path, reason in rep.failed:
        print(f"  failed {path}: {reason}")


def cmd_export(args: argparse.Namespace) -> int:
    checked_workers(args)
    with open_project(args) as p:
        _fingerprints(p, args)
        if args.folds:
            return _export_folds(p, args)
        with cycle_collector_paused():  # the plan: ~1M small objects at 100k clips, no cycles
            plan = p.plan_export(args.ratios, seed=args.seed, min_agreement=args.min_agreement,
                                 frozen=args.frozen, hamming_radius=args.radius,
                                 captions=args.captions, segments=args.segments,
                                 labels=args.labels, min_posterior=args.min_posterior)
        print("splits: " + _split_counts(plan))
        print_warnings(plan)
        _print_left_out(plan.left_out, media=plan.left_out_media)
        print_leakage(plan.leakage)
        if args.dry_run:
            return 0
        m = _write(lambda: p.write_export(args.out, plan, media_mode=args.media, webvtt=args.webvtt,
                                          override_reason=args.override, overwrite=args.overwrite,
                                          progress=Bar("writing")))
        _print_cleaned(p)
        print(f"wrote {len(m.files)} file(s) to {args.out}")
    return 0


def _export_folds(p, args: argparse.Namespace) -> int:
    with cycle_collector_paused():
        plans = p.plan_folds(args.folds, seed=args.seed, val_fraction=args.val_fraction,
                             min_agreement=args.min_agreement, hamming_radius=args.radius,
                             captions=args.captions, segments=args.segments,
                             labels=args.labels, min_posterior=args.min_posterior)
    for i, plan in enumerate(plans, start=1):
        print(f"split {i}: " + _split_counts(plan))
        print_warnings(plan, f" (split {i})")
        print_leakage(plan.leakage)
    _print_left_out(plans[0].left_out if plans else (), " in every split",
                    plans[0].left_out_media if plans else None)
    if args.dry_run:
        return 0
    ms = _write(lambda: p.write_folds(args.out, plans, media_mode=args.media, webvtt=args.webvtt,
                                      override_reason=args.override, progress=Bar("writing")))
    _print_cleaned(p)
    print(f"wrote {len(ms)} splits ({sum(len(m.files) for m in ms)} files) to {args.out}")
    return 0


def register(add) -> None:
    sp = add("export", cmd_export, "write train/val/test splits, checked for leakage first", user=True)
    sp.add_argument("out", help="output folder (must be empty or new)")
    sp.add_argument("--ratios", type=_ratios, default={"train": 0.7, "val": 0.15, "test": 0.15},
                    help="split fractions, e.g. train=0.7,val=0.15,test=0.15 (default)")
    sp.add_argument("--seed", type=int, default=0)
    sp.add_argument("--min-agreement", type=float, default=0.6,
                    help="share of annotators a majority label needs when there is no gold (default 0.6)")
    sp.add_argument("--labels", choices=("majority", "inferred"), default="majority",
                    help="label without gold: majority (the majority label, see --min-agreement; "
                         "default) or inferred (the label inferred from every annotator's "
                         "estimated confusion, Dawid-Skene, see --min-posterior); recorded in "
                         "the manifest")
    sp.add_argument("--min-posterior", type=float, default=0.9,
                    help="with --labels inferred: probability the inferred label needs "
                         "(default 0.9)")
    sp.add_argument("--captions", choices=("gold", "gold+agreeing"), default="gold",
                    help="reference captions: gold (the lead's ticked captions when settled, else "
                         "every annotator caption; default) or gold+agreeing (those plus the "
                         "captions of annotators whose label equals the exported label)")
    sp.add_argument("--segments", choices=("gold+best", "gold"), default="gold+best",
                    help="segments: gold+best (the lead's gold segments, else those of the agreeing "
                         "annotator who agrees best with the others, else none; default) or gold "
                         "(gold segments only); recorded in the manifest")
    sp.add_argument("--frozen", metavar="MANIFEST",
                    help="keep the splits of this earlier export (default: the project's last export)")
    sp.add_argument("--radius", type=int, default=8, help="Hamming radius for near-duplicate media (default 8)")
    sp.add_argument("--webvtt", action="store_true", help="also write one WebVTT file per clip")
    sp.add_argument("--media", choices=("copy", "hardlink"), help="copy or hard-link the media into the export")
    sp.add_argument("--override", metavar="REASON", help="write despite blocking findings; recorded in the manifest")
    sp.add_argument("--overwrite", action="store_true", help="replace a non-empty output folder")
    sp.add_argument("--folds", type=int, metavar="K",
                    help="instead of one split: K rotating group-exclusive folds, written as split-1..split-K")
    sp.add_argument("--val-fraction", type=float, default=0.0,
                    help="with --folds: share of each training side held out as val (default 0)")
    sp.add_argument("--dry-run", action="store_true", help="plan and check only; write nothing")
    sp.add_argument("--compute-missing", action="store_true",
                    help="first compute the fingerprints clips lack (as 'clipscribe compute "
                         "--what fingerprint'); without it such clips are reported as not "
                         "checked for near duplicates")
    cluster_options(sp, workers_help="with --compute-missing: worker processes (default: "
                                     "cores - 1; 0: compute in this process, without Dask)")
