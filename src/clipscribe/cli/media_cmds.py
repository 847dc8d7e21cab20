"""``clipscribe add-media``: add the videos below a folder of the media root (optionally
copied in from outside first), grouped by folder, pattern or CSV; ``clipscribe clip-facts``:
show or change the group, consent, licence and source of clips already added."""

from __future__ import annotations

import argparse
from pathlib import Path

from .common import Bar, UsageError, open_project
from .compute_cmds import checked_workers, cluster_options


def cmd_add_media(args: argparse.Namespace) -> int:
    if args.copy_from and args.folder:
        raise UsageError("give either FOLDER or --copy-from, not both")
    checked_workers(args)
    with open_project(args) as p:
        folder = Path(args.folder) if args.folder else p.media_root
        if args.copy_from:
            folder = p.copy_media_in(args.copy_from, progress=Bar("copying videos (bytes)"))
            print(f"copied into {folder}")
        from ..types import BY_FOLDER
        pattern = args.group_pattern
        if pattern is None and args.group_csv is None and args.group_by == "folder":
            pattern = BY_FOLDER
        rep = p.add_media(folder, group_pattern=pattern, group_csv=args.group_csv,
                          progress=Bar("adding media"), workers=args.workers,
                          scheduler=args.scheduler, path_map=args.map or None)
        how = ("from the CSV" if args.group_csv else "by pattern" if args.group_pattern
               else "by folder" if pattern else "none: every clip is its own group")
        print(f"added {len(rep.added)} clip(s); {len(rep.already_present)} already present; "
              f"{len(rep.skipped)} skipped; groups now {len(p.groups())} ({how})")
        for path, reason in rep.skipped:
            print(f"  skipped {path}: {reason}")
        for line in rep.warnings():
            print(f"  warning: {line}")
    return 0


CONSENT = {"yes": True, "no": False, "unknown": None}


def cmd_clip_facts(args: argparse.Namespace) -> int:
    changes = {k: (v or None) for k, v in (("group", args.group), ("licence", args.licence),
                                           ("source", args.source)) if v is not None}
    if args.consent is not None:
        changes["consent"] = CONSENT[args.consent]
    with open_project(args) as p:
        for ref in args.clips:
            changed = False
            if changes:
                changed = p.set_clip_facts(ref, **changes)
            c = p.clip(ref)
            consent = {True: "yes", False: "no", None: "unknown"}[c.consent]
            print(f"clip {c.id} {c.path}: group {c.group or '(own)'}, consent {consent}, "
                  f"licence {c.licence or '(unknown)'}, source {c.source or '(unknown)'}"
                  + ((" — changed" if changed else " — already so") if changes else ""))
    return 0


def register(add) -> None:
    sp = add("add-media", cmd_add_media, "add every video below a folder inside the media root", user=True)
    sp.add_argument("folder", nargs="?", help="folder to scan (default: the whole media root)")
    sp.add_argument("--copy-from", metavar="SRC",
                    help="first copy the videos below SRC (outside the project) into a new folder "
                         "of the media root named after it, then add them")
    grp = sp.add_mutually_exclusive_group()
    grp.add_argument("--group-pattern", metavar="REGEX",
                     help="regular expression with a named group (?P<group>...) matched on the relative path")
    grp.add_argument("--group-csv", metavar="CSV", help="CSV with columns path,group")
    grp.add_argument("--group-by", choices=("folder", "none"), default="folder",
                     help="without a pattern or CSV: group clips by their folder (default, as the "
                          "setup dialog does), or none (every clip its own group)")
    cluster_options(sp, workers_help="read the files (header, SHA-256, frame index) on N worker "
                                     "processes, e.g. all cores for thousands of files (default: "
                                     "in this process, one after another)")
    sp = add("clip-facts", cmd_clip_facts, "show or change the group, consent, licence and source "
             "of clips already added (lead only; each change is an edit in the history)", user=True)
    sp.add_argument("clips", nargs="+", metavar="CLIP", help="clip number or media path")
    sp.add_argument("--group", help="group key (clips of a group share a split); '' for none")
    sp.add_argument("--consent", choices=tuple(CONSENT), help="consent of the people filmed")
    sp.add_argument("--licence", help="licence of the footage; '' for unknown")
    sp.add_argument("--source", help="where the footage came from; '' for unknown")
