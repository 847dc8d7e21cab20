"""The ``clipscribe`` command. Every subcommand goes through :class:`clipscribe.Project`.

Errors print one line (``clipscribe: error: ...``) and exit 1; usage errors exit 2.
"""

from __future__ import annotations

import argparse
import json
import os
import sys
import time
from pathlib import Path

from ._version import __version__
from .errors import ProjectError, RecordError


class Bar:
    """A one-line progress bar on stderr. Hand-written because it is fifteen lines and a
    dependency for it would outweigh it; silent when stderr is not a terminal."""

    def __init__(self, what: str) -> None:
        self.what, self.tty, self.t0, self.last = what, sys.stderr.isatty(), time.monotonic(), 0.0

    def __call__(self, done: int, total: int) -> None:
        now = time.monotonic()
        if not self.tty or (now - self.last < 0.1 and done < total):
            return
        self.last = now
        frac = done / total if total else 1.0
        fill = int(30 * frac)
        sys.stderr.write(f"\r{self.what} [{'#' * fill}{'.' * (30 - fill)}] {done}/{total} "
                         f"{now - self.t0:5.1f}s")
        if done >= total:
            sys.stderr.write("\n")
        sys.stderr.flush()


def _open(args: argparse.Namespace):
    from .project import Project
    return Project.open(args.project, user=getattr(args, "user", None),
                        password=os.environ.get("CLIPSCRIBE_PASSWORD"))


def cmd_new(args: argparse.Namespace) -> int:
    from .project import Project
    from .store.urls import secret_warning
    if warning := secret_warning(args.database_url, "--database-url"):
        print(f"clipscribe: {warning}", file=sys.stderr)
    with Project.create(args.project, database_url=args.database_url, name=args.name) as p:
        print(f"created project {p.settings.name!r} in {args.project} (you are lead {p.user!r})")
        print(f"put media under {p.media_root}")
    return 0


def cmd_labels(args: argparse.Namespace) -> int:
    with _open(args) as p:
        if args.names:
            from .schema.settings import label_specs
            p.define_labels(label_specs(args.names, p.labels()), ordinal=args.ordinal or None)
        for l in p.labels():
            print(f"{l.key or ' '}  {l.colour}  {l.name}")
    return 0


def cmd_caption_rules(args: argparse.Namespace) -> int:
    with _open(args) as p:
        if (args.per_clip, args.min_words, args.max_words) != (None, None, None):
            p.set_caption_rules(captions_per_clip=args.per_clip, min_words=args.min_words,
                                max_words=args.max_words)
        g = p.settings.caption_guideline
        print(f"{g.captions_per_clip} captions per clip, {g.min_words}–{g.max_words} words each")
    return 0


def cmd_person(args: argparse.Namespace) -> int:
    with _open(args) as p:
        from .team_cli import new_password
        pid = p.add_annotator(args.name, role=args.role,
                              password=new_password(args.name) if p.is_server else None)
        print(f"added {args.role} {args.name!r} (id {pid})")
    return 0


def cmd_add_media(args: argparse.Namespace) -> int:
    with _open(args) as p:
        folder = Path(args.folder) if args.folder else p.media_root
        if args.copy_from:
            if args.folder:
                raise ProjectError("give either FOLDER or --copy-from, not both")
            folder = p.copy_media_in(args.copy_from, progress=Bar("copying videos (bytes)"))
            print(f"copied into {folder}")
        from .types import BY_FOLDER
        pattern = args.group_pattern
        if pattern is None and args.group_csv is None and args.group_by == "folder":
            pattern = BY_FOLDER
        rep = p.add_media(folder, group_pattern=pattern, group_csv=args.group_csv,
                          progress=Bar("adding media"))
        how = ("from the CSV" if args.group_csv else "by pattern" if args.group_pattern
               else "by folder" if pattern else "none: every clip is its own group")
        print(f"added {len(rep.added)} clip(s); {len(rep.already_present)} already present; "
              f"{len(rep.skipped)} skipped; groups now {len(p.groups())} ({how})")
        for path, reason in rep.skipped:
            print(f"  skipped {path}: {reason}")
        for line in rep.warnings():
            print(f"  warning: {line}")
    return 0


def cmd_import(args: argparse.Namespace) -> int:
    with _open(args) as p:
        counts = p.import_records(args.file, progress=Bar("importing (check, then write)"))
        dups = counts.pop("duplicate", 0)
        print("imported " + ", ".join(f"{n} {k}" for k, n in counts.items() if n) if any(counts.values())
              else "nothing new to import")
        if dups:
            print(f"{dups} duplicate record(s) in the file were taken once")
    return 0


def cmd_dump(args: argparse.Namespace) -> int:
    with _open(args) as p:
        n = p.export_labels_csv(args.file) if args.file.lower().endswith(".csv") else p.export_records(args.file)
        print(f"wrote {n} record(s) to {args.file}")
    return 0


def cmd_stats(args: argparse.Namespace) -> int:
    with _open(args) as p:
        st = p.stats()
    if args.json:
        print(json.dumps(st, indent=2))
        return 0
    width = max(len(k) for k in st)
    for k, v in st.items():
        if isinstance(v, dict):
            v = ", ".join(f"{a}={b}" for a, b in v.items()) or "-"
        print(f"{k:<{width}}  {v}")
    return 0


def cmd_sample(args: argparse.Namespace) -> int:
    from .sample import build_sample
    out = build_sample(args.project, seed=args.seed)
    print(f"built the sample project in {out['folder']}: {out['clips']} clips, annotators "
          f"{', '.join(out['annotators'])}, lead {out['lead']!r} ({out['seconds']} s)")
    return 0


def cmd_schema(args: argparse.Namespace) -> int:
    from .schema import all_schemas
    out = Path(args.folder)
    out.mkdir(parents=True, exist_ok=True)
    for name, schema in all_schemas().items():
        (out / f"{name}.schema.json").write_text(json.dumps(schema, indent=2) + "\n", encoding="utf-8")
        print(out / f"{name}.schema.json")
    return 0


def cmd_open(args: argparse.Namespace) -> int:
    from .schema.settings import SETTINGS_FILE
    from .ui.boot import check_bindings, check_qt_runtime, last_project
    folder, note = args.project, ""
    if folder is None:
        folder = last_project()
        if folder is not None and not (Path(folder) / SETTINGS_FILE).is_file():
            folder, note = None, f"The project opened last, {folder}, is no longer there."
        if folder is None and args.screenshot:
            raise ProjectError(note or "no project given and none opened before")
    problem = check_qt_runtime(screenshot=bool(args.screenshot)) or check_bindings()
    if problem:
        raise ProjectError(problem)
    if folder is not None and not args.screenshot:
        from .ui.launch import show_opening
        show_opening(folder)  # on screen at once; the project and the workbench load behind it
    from .ui.app import run
    # with no folder, the window starts by asking for one (open, new, or the sample)
    return run(folder, user=args.user, view=args.view, screenshot=args.screenshot, note=note)


def build_parser() -> argparse.ArgumentParser:
    ap = argparse.ArgumentParser(prog="clipscribe", description=(
        "Build video datasets: activity labels, segments and reference captions, annotator "
        "agreement, review into gold, and leakage-checked splits."))
    ap.add_argument("--version", action="version", version=f"clipscribe {__version__}")
    sub = ap.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def add(name: str, fn, help: str, *, project: bool = True, user: bool = False) -> argparse.ArgumentParser:
        sp = sub.add_parser(name, help=help, description=help)
        if project:
            sp.add_argument("project", metavar="DIR", help="project folder")
        if user:
            sp.add_argument("--user", help="act as this person (default: the local user or the lead)")
        sp.set_defaults(fn=fn)
        return sp

    sp = add("new", cmd_new, "create an empty project folder")
    sp.add_argument("--name", help="project name (default: the folder's name)")
    sp.add_argument("--database-url", help="postgresql://host/db for a team server (default: SQLite in the folder)")
    sp = add("labels", cmd_labels, "show the label set, or set it in order", user=True)
    sp.add_argument("names", nargs="*", help="labels in order, each 'NAME' or 'NAME [KEY] #RRGGBB' "
                    "(key and colour optional; kept labels keep theirs); omit to list")
    sp.add_argument("--ordinal", action="store_true", help="the labels are ordered (weighted kappa applies)")
    sp = add("caption-rules", cmd_caption_rules, "show or set captions per clip and their word limits",
             user=True)
    sp.add_argument("--per-clip", type=int, metavar="N", help="reference captions per clip")
    sp.add_argument("--min-words", type=int, metavar="N", help="fewest words in a caption")
    sp.add_argument("--max-words", type=int, metavar="N", help="most words in a caption")
    sp = add("add-person", cmd_person, "add an annotator or a lead", user=True)
    sp.add_argument("name")
    sp.add_argument("--role", choices=("annotator", "lead"), default="annotator")
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
    sp = add("import", cmd_import, "import records (JSON Lines; or CSV of clip,annotator,label) all or nothing",
             user=True)
    sp.add_argument("file")
    sp = add("dump", cmd_dump, "write all records to JSON Lines (or labels to .csv)", user=True)
    sp.add_argument("file")
    sp = add("stats", cmd_stats, "print project statistics", user=True)
    sp.add_argument("--json", action="store_true", help="print JSON")
    sp = add("sample", cmd_sample, "build the invented sample project in DIR")
    sp.add_argument("--seed", type=int, default=7)
    sp = add("schema", cmd_schema, "write the JSON Schema of every record type", project=False)
    sp.add_argument("folder", nargs="?", default="docs/schema")
    sp = add("open", cmd_open, "open the workbench window on a project", project=False, user=True)
    sp.add_argument("project", metavar="DIR", nargs="?",
                    help="project folder (default: the project opened last; with none, a start window asks)")
    sp.add_argument("--view", choices=("work", "review", "board"), default="work",
                    help="which view to open on: work, the review desk, or the agreement board")
    sp.add_argument("--screenshot", metavar="FILE.png", help="render the window to FILE.png and exit")
    _extend(add)
    return ap


def _extend(add) -> None:
    """Commands contributed by later parts (agreement, export, team mode)."""
    for name in ("agreement_cli", "export_cli", "team_cli", "review_cli"):
        try:
            mod = __import__(f"clipscribe.{name}", fromlist=["register"])
        except ModuleNotFoundError as exc:
            if exc.name != f"clipscribe.{name}":
                raise
            continue
        mod.register(add)


def _known_problem(exc: Exception, project: str | None) -> str | None:
    """One plain line for faults of the machine rather than of clipscribe: a database that is
    read-only, full, damaged or busy; a full disk or a refused file elsewhere."""
    from sqlalchemy.exc import DBAPIError
    from .store.sqlite_check import explain
    if isinstance(exc, DBAPIError):
        return explain(exc, project)
    if isinstance(exc, OSError) and exc.strerror:
        if exc.filename is not None:
            return f"{exc.filename}: {exc.strerror}"
        return f"{exc.strerror} (working on {project})" if project else exc.strerror
    return None


def main(argv: list[str] | None = None) -> int:
    argv = sys.argv[1:] if argv is None else list(argv)
    if not argv and not sys.stdout.isatty():
        # started with no command and no terminal (a double-click on the app in a file
        # manager): open the window, as the menu entry does; in a terminal, show the usage
        argv = ["open"]
    args = build_parser().parse_args(argv)
    try:
        return args.fn(args) or 0
    except (RecordError, ProjectError) as exc:
        print(f"clipscribe: error: {exc}", file=sys.stderr)
        return 1
    except KeyboardInterrupt:
        print("clipscribe: interrupted", file=sys.stderr)
        return 130
    except Exception as exc:  # the last line of defence: one line, never a traceback
        from .media import MediaError
        known = _known_problem(exc, getattr(args, "project", None))
        if known:
            print(f"clipscribe: error: {known}", file=sys.stderr)
            if os.environ.get("CLIPSCRIBE_DEBUG"):
                raise
            return 1
        kind = "error" if isinstance(exc, (MediaError, OSError)) else f"unexpected {type(exc).__name__}"
        print(f"clipscribe: {kind}: {exc}", file=sys.stderr)
        if os.environ.get("CLIPSCRIBE_DEBUG"):
            raise
        return 1


if __name__ == "__main__":
    sys.exit(main())
