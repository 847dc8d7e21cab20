"""The ``clipscribe`` command. Every subcommand goes through :class:`clipscribe.Project`.

Errors print one line (``clipscribe: error: ...``) and exit 1; usage errors exit 2; Ctrl+C
exits 130 (see :mod:`clipscribe.cli.common`). Each command family lives in its own module and
imports what is heavy (the database, video, Qt) inside its functions, so ``--help`` and the
first window of ``clipscribe open`` come up without it.
"""

from __future__ import annotations

import os
import sys

from .common import expected, fail, skip_final_collection
from .parser import build_parser

__all__ = ["build_parser", "main"]


def main(argv: list[str] | None = None) -> int:
    """Run one command. With no ``argv`` this is the program itself (the installed script,
    ``python -m clipscribe.cli``): it reads ``sys.argv`` and ends the process without the
    collector's last walk (:func:`~clipscribe.cli.common.skip_final_collection`)."""
    if argv is None:
        argv = sys.argv[1:]
        skip_final_collection()
    argv = list(argv)
    if not argv and not sys.stdout.isatty():
        # started with no command and no terminal (a double-click on the app in a file
        # manager): open the window, as the menu entry does; in a terminal, show the usage
        argv = ["open"]
    args = build_parser().parse_args(argv)
    try:
        return args.fn(args) or 0
    except (Exception, KeyboardInterrupt) as exc:  # the last line of defence: one line, never a traceback
        status = fail(exc, getattr(args, "project", None))
        if os.environ.get("CLIPSCRIBE_DEBUG") and not expected(exc):
            raise
        return status
