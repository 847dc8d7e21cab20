"""Project set-up and records: new, labels, caption-rules, add-person, import, dump, stats,
sample, schema."""

from __future__ import annotations

import argparse
import json
import sys
from pathlib import Path

from .common import Bar, open_project
from .team_cmds import new_password


def cmd_new(args: argparse.Namespace) -> int:
    from ..project import Project
    from ..project.opening import secret_warning
    if warning := secret_warning(args.database_url, "--database-url"):
        print(f"clipscribe: {warning}", file=sys.stderr)
    # a project a person makes checks the caption guideline at submit (warn, with override)
    with Project.create(args.project, database_url=args.database_url, name=args.name,
                        caption_guideline={"at_submit": "warn"}) as p:
        print(f"created project {p.settings.name!r} in {args.project} (you are lead {p.user!r})")
        print(f"put media under {p.media_root}")
    return 0


def cmd_labels(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        if args.names:
            from ..schema.settings import label_specs
            p.define_labels(label_specs(args.names, p.labels()), ordinal=args.ordinal or None)
        for l in p.labels():
            print(f"{l.key or ' '}  {l.colour}  {l.name}")
    return 0


AT_SUBMIT_WORDS = {"off": "not checked",
                   "warn": "captions that miss the guideline need an override with a reason",
                   "block": "captions that miss the guideline cannot be submitted"}


def cmd_caption_rules(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        if (args.per_clip, args.min_words, args.max_words, args.at_submit) != (None,) * 4:
            p.set_caption_rules(captions_per_clip=args.per_clip, min_words=args.min_words,
                                max_words=args.max_words, at_submit=args.at_submit)
        g = p.settings.caption_guideline
        print(f"{g.captions_per_clip} captions per clip, {g.min_words}–{g.max_words} words each")
        print(f"at submit: {AT_SUBMIT_WORDS[g.at_submit]}")
    return 0


def cmd_person(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        pid = p.add_annotator(args.name, role=args.role,
                              password=new_password(args.name) if p.is_server else None)
        print(f"added {args.role} {args.name!r} (id {pid})")
    return 0


def cmd_import(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        counts = p.import_records(args.file, progress=Bar("importing (check, then write)"))
        dups = counts.pop("duplicate", 0)
        print("imported " + ", ".join(f"{n} {k}" for k, n in counts.items() if n) if any(counts.values())
              else "nothing new to import")
        if dups:
            print(f"{dups} duplicate record(s) in the file were taken once")
    return 0


def cmd_dump(args: argparse.Namespace) -> int:
    with open_project(args) as p:
        n = p.export_labels_csv(args.file) if args.file.lower().endswith(".csv") else p.export_records(args.file)
        print(f"wrote {n} record(s) to {args.file}")
    return 0


def cmd_stats(args: argparse.Namespace) -> int:
    with open_project(args) as p:
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
    from ..sample import build_sample
    out = build_sample(args.project, seed=args.seed)
    print(f"built the sample project in {out['folder']}: {out['clips']} clips, annotators "
          f"{', '.join(out['annotators'])}, lead {out['lead']!r} ({out['seconds']} s)")
    return 0


def cmd_schema(args: argparse.Namespace) -> int:
    from ..schema import all_schemas
    out = Path(args.folder)
    out.mkdir(parents=True, exist_ok=True)
    for name, schema in all_schemas().items():
        (out / f"{name}.schema.json").write_text(json.dumps(schema, indent=2) + "\n", encoding="utf-8")
        print(out / f"{name}.schema.json")
    return 0


def register_setup(add) -> None:
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
    sp.add_argument("--at-submit", choices=tuple(AT_SUBMIT_WORDS),
                    help="submitting captions that miss the guideline: off, warn (the annotator may "
                         "override with a reason, recorded) or block")
    sp = add("add-person", cmd_person, "add an annotator or a lead", user=True)
    sp.add_argument("name")
    sp.add_argument("--role", choices=("annotator", "lead"), default="annotator")


def register_records(add) -> None:
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
