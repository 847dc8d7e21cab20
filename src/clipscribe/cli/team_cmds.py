"""Team-mode commands: move a project onto a server, give people logins, change their roles,
plan assignments, pull the next clip, switch blind mode."""

from __future__ import annotations

import argparse
import getpass
import json
import os
import sys

from ..errors import RecordError
from .common import open_project


def cmd_move(args: argparse.Namespace) -> int:
    from ..project import Project
    from ..project.team_move import write_report
    url = args.url
    pw = os.environ.get("CLIPSCRIBE_PASSWORD")
    from ..project.opening import secret_warning, with_password
    if pw:
        url = with_password(url, pw)
    if warning := secret_warning(url, "the URL"):
        print(f"clipscribe: {warning}", file=sys.stderr)
    report = Project.move_to_server(args.project, url, lead=args.lead)
    print(write_report(report))
    print(f"all {len(report.tables)} tables match; {args.project} now opens on the server")
    return 0


def cmd_assign(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        if args.lease_hours is not None:
            p.set_lease(args.lease_hours)
        plan = p.assign(per_clip=args.per_clip, overlap=args.overlap,
                        overlap_count=args.overlap_count, seed=args.seed,
                        check_rate=args.check_rate)
        print(json.dumps({**plan.recipe(), "check_rate": p.check_rate()}, indent=2) if args.json
              else f"{plan.clips} clip(s): {plan.overlapped} get {plan.overlap_count} people, "
              f"the rest {plan.per_clip} (seed {plan.seed}); lease {p.lease_seconds() / 3600:g} h; "
              f"check clips {100 * p.check_rate():g}% of each person's clips")
    return 0


def cmd_check_clips(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        for clip in args.mark or ():
            print(f"clip {clip}: check clip, known answer {p.mark_check_clip(clip, args.answer)!r}")
        for clip in args.unmark or ():
            print(f"clip {clip}: " + ("no longer a check clip" if p.unmark_check_clip(clip)
                                      else "was not a check clip"))
        if not (args.mark or args.unmark):
            known = p.check_clips()
            if args.json:
                print(json.dumps({str(c): a for c, a in known.items()}, indent=2))
            else:
                for c, a in known.items():
                    print(f"{c}\t{a}")
                print(f"{len(known)} check clip(s); check rate {100 * p.check_rate():g}%")
    return 0


def cmd_next(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        clip = p.next_clip()
        if clip is None:
            print("nothing left to annotate")
            return 0
        print(f"{clip}\t{p.clip(clip).path}")
    return 0


def new_password(name: str, *, required: bool = False) -> str | None:
    """A new password for ``name``: asked twice without echo on a terminal; from
    CLIPSCRIBE_NEW_PASSWORD only when not on one (scripts). None when neither gives one
    (the person gets no login yet) unless ``required``."""
    if sys.stdin.isatty():
        first = getpass.getpass(f"new password for {name!r}: ")
        if first and getpass.getpass("again: ") != first:
            raise RecordError(f"{name!r}: the two passwords differ; nothing was changed")
        if first or not required:
            return first or None
    else:
        pw = os.environ.get("CLIPSCRIBE_NEW_PASSWORD")
        if pw or not required:
            return pw or None
    raise RecordError("no password given: type one when asked, or (in a script, without a "
                      "terminal) set CLIPSCRIBE_NEW_PASSWORD")


def cmd_password(args: argparse.Namespace) -> int:
    pw = new_password(args.name, required=True)
    with open_project(args) as p:
        login = p.set_password(args.name, pw)
        print(f"{args.name!r} logs in as {login!r}")
    return 0


def cmd_role(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        before = p.role(args.name)
        p.set_role(args.name, args.role)
        article = "a" if args.role == "lead" else "an"
        print(f"{args.name!r} is {'still' if before == args.role else 'now'} {article} {args.role}")
    return 0


def cmd_blind(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        if args.mode is not None:
            p.set_blind(args.mode == "on")
        print(f"blind mode {'on' if p.blind_mode() else 'off'}")
    return 0


def register(add) -> None:
    sp = add("move-to-server", cmd_move, "copy a solo project onto an empty PostgreSQL database "
             "(ids kept, every table checked) and point the folder at it")
    sp.add_argument("url", metavar="URL", help="postgresql://ADMIN@HOST:PORT/DATABASE (password "
                    "from ~/.pgpass or CLIPSCRIBE_PASSWORD)")
    sp.add_argument("--lead", help="the lead whose login is the admin's (default: the first lead)")
    sp = add("assign", cmd_assign, "set how many people annotate each clip, with some overlap",
             user=True)
    sp.add_argument("--per-clip", type=int, default=1, help="people per clip (default 1)")
    sp.add_argument("--overlap", type=float, default=0.0,
                    help="fraction of clips annotated by --overlap-count people (e.g. 0.2)")
    sp.add_argument("--overlap-count", type=int, default=3, help="people on an overlapped clip")
    sp.add_argument("--seed", type=int, default=0, help="seed choosing the overlapped clips")
    sp.add_argument("--lease-hours", type=float, help="hours a pulled clip stays reserved untouched")
    sp.add_argument("--check-rate", type=float, metavar="SHARE",
                    help="share of each annotator's clips that are check clips, mixed into "
                         "their queue (e.g. 0.1; default: keep the current one, at first 0)")
    sp.add_argument("--json", action="store_true", help="print the plan's recipe as JSON")
    sp = add("check-clips", cmd_check_clips, "list, mark or unmark check clips (clips whose "
             "answer is known in advance; annotators are not told which; leads only)", user=True)
    sp.add_argument("--mark", metavar="CLIP", action="append",
                    help="make this clip a check clip (repeatable)")
    sp.add_argument("--answer", metavar="LABEL",
                    help="with --mark: the known answer (default: the clip's gold label)")
    sp.add_argument("--unmark", metavar="CLIP", action="append",
                    help="make this check clip an ordinary clip again (repeatable)")
    sp.add_argument("--json", action="store_true", help="list as JSON {clip: answer}")
    add("next", cmd_next, "reserve and print the next clip for --user", user=True)
    sp = add("set-password", cmd_password, "give a person a login or a new password "
             "(asked without echo; in scripts from CLIPSCRIBE_NEW_PASSWORD)", user=True)
    sp.add_argument("name")
    sp = add("set-role", cmd_role, "make a person an annotator or a lead (leads only; on a "
             "server their login moves group too, which needs CREATEROLE, as the admin has)",
             user=True)
    sp.add_argument("name", metavar="NAME", help="the person, as added with add-person")
    sp.add_argument("role", choices=("annotator", "lead"), help="their new role")
    sp = add("blind", cmd_blind, "show or set blind mode (annotators cannot read each other's work)",
             user=True)
    sp.add_argument("mode", nargs="?", choices=("on", "off"))

