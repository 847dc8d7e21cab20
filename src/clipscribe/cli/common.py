"""What every command shares: opening the project named on the command line, the progress bar,
and turning a failure into one line on stderr and an exit status.

Exit statuses: 0 done; 1 the work failed (bad input, a project that cannot be used, a fault of
the machine); 2 the command line itself is wrong (argparse's own errors, and
:class:`UsageError` for what only the code can see); 130 interrupted (Ctrl+C).
"""

from __future__ import annotations

import argparse
import atexit
import contextlib
import gc
import os
import sys
import time

from ..errors import ProjectError, RecordError

DONE, FAILED, USAGE, INTERRUPTED = 0, 1, 2, 130


class UsageError(Exception):
    """The options given do not make a command (missing or conflicting ones) in a way argparse
    cannot see. Exits 2, as argparse's own usage errors do; nothing has been done yet."""


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


@contextlib.contextmanager
def cycle_collector_paused():
    """Pause Python's cyclic garbage collector while a command builds a large result that has
    no cycles. A 100k-clip report makes millions of dicts and lists, and every collection
    walks them all again: 0.6 s of the report's 5.3 s (``benchmarks/bench_project_scale.py``).
    Reference counting still frees all that is not in a cycle, and the collector runs again
    afterwards. For the short commands that print or write a result, never for the window."""
    was = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was:
            gc.enable()


_exit_hook = False


def skip_final_collection() -> None:
    """Let the process end without the cyclic collector's last walks over every object left.

    At exit the interpreter clears its modules and runs the collector over all that remains:
    0.13-0.19 s after merely importing the project code (measured here, against 0.01 s with
    this hook), more after a command that built a large result, and often more than the
    command's own work for ``stats``. ``gc.freeze()`` at exit moves what is left into the
    permanent generation, which the collector never walks. Everything is still freed by
    reference counting or by the operating system. Python never promised ``__del__`` for
    objects alive at exit (the language reference, "Data model", ``object.__del__``), and
    nothing here needs it: the project is closed by its ``with`` block, files are closed by
    theirs, and the standard streams are flushed by the interpreter itself after this.
    Registered once per process, by the command only, so a test calling :func:`main` keeps
    its collector."""
    global _exit_hook
    if not _exit_hook:
        atexit.register(gc.freeze)
        _exit_hook = True


def open_project(args: argparse.Namespace):
    """The project in ``args.project``, as ``args.user`` (when the command has ``--user``),
    with the password from CLIPSCRIBE_PASSWORD for a server project."""
    from ..project import Project
    return Project.open(args.project, user=getattr(args, "user", None),
                        password=os.environ.get("CLIPSCRIBE_PASSWORD"))


def _known_problem(exc: Exception, project: str | None) -> str | None:
    """One plain line for faults of the machine rather than of clipscribe: a database that is
    read-only, full, damaged or busy; a full disk or a refused file elsewhere."""
    from ..project.opening import explain_fault
    if (line := explain_fault(exc, project)) is not None:
        return line
    if isinstance(exc, OSError) and exc.strerror:
        if exc.filename is not None:
            return f"{exc.filename}: {exc.strerror}"
        return f"{exc.strerror} (working on {project})" if project else exc.strerror
    return None


def expected(exc: BaseException) -> bool:
    """True for failures clipscribe raises on purpose; the others re-raise under
    CLIPSCRIBE_DEBUG so their traceback can be read."""
    return isinstance(exc, (UsageError, RecordError, ProjectError, KeyboardInterrupt))


def fail(exc: BaseException, project: str | None) -> int:
    """Print the one line that says what went wrong (never a traceback) and return the exit
    status for it."""
    if isinstance(exc, KeyboardInterrupt):
        print("clipscribe: interrupted", file=sys.stderr)
        return INTERRUPTED
    if isinstance(exc, (UsageError, RecordError, ProjectError)):
        print(f"clipscribe: error: {exc}", file=sys.stderr)
        return USAGE if isinstance(exc, UsageError) else FAILED
    from ..media import MediaError
    known = _known_problem(exc, project) if isinstance(exc, Exception) else None
    if known:
        print(f"clipscribe: error: {known}", file=sys.stderr)
        return FAILED
    kind = "error" if isinstance(exc, (MediaError, OSError)) else f"unexpected {type(exc).__name__}"
    print(f"clipscribe: {kind}: {exc}", file=sys.stderr)
    return FAILED

