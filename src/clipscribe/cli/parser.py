"""The argument parser: each command family adds its commands through one ``add`` helper, in
the order ``clipscribe --help`` lists them."""

from __future__ import annotations

import argparse
from collections.abc import Callable

from .._version import __version__
from . import (agreement_cmds, compute_cmds, export_cmds, media_cmds, project_cmds, review_cmds, suggest_cmds,
               team_cmds, window_cmds)

Command = Callable[[argparse.Namespace], int]


def build_parser() -> argparse.ArgumentParser:
    ap = argparse.ArgumentParser(prog="clipscribe", description=(
        "Build video datasets: activity labels, segments and reference captions, annotator "
        "agreement, review into gold, and leakage-checked splits."))
    ap.add_argument("--version", action="version", version=f"clipscribe {__version__}")
    sub = ap.add_subparsers(dest="command", required=True, metavar="COMMAND")

    def add(name: str, fn: Command, help: str, *, project: bool = True,
            user: bool = False) -> argparse.ArgumentParser:
        sp = sub.add_parser(name, help=help, description=help)
        if project:
            sp.add_argument("project", metavar="DIR", help="project folder")
        if user:
            sp.add_argument("--user", help="act as this person (default: the local user or the lead)")
        sp.set_defaults(fn=fn)
        return sp

    project_cmds.register_setup(add)
    media_cmds.register(add)
    compute_cmds.register(add)
    project_cmds.register_records(add)
    window_cmds.register(add)
    agreement_cmds.register(add)
    export_cmds.register(add)
    team_cmds.register(add)
    review_cmds.register(add)
    suggest_cmds.register(add)
    return ap
