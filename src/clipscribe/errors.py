"""Every public exception of clipscribe, under one root: :class:`ClipscribeError`.

No imports beyond the standard library, so every layer (engines included) may raise these.
Where an error carries facts a caller acts on (a caption conflict's kept and current text, the
server a login was refused by), they are typed attributes, never text to parse.
"""

from __future__ import annotations


class ClipscribeError(Exception):
    """The root of every exception clipscribe raises on purpose."""


class RecordError(ClipscribeError, ValueError):
    """Bad input: a record, a path, a label, a setting. The message names what and where."""


class ProjectError(ClipscribeError, RuntimeError):
    """A project that cannot be opened or used (missing, too new, locked, unreachable)."""


class StaleWriteError(RecordError):
    """Someone else changed the row since it was read; the caller's value is kept, not written.

    Typed facts for the caller to act on (None where they do not apply):
    ``kept_text`` the caption text the caller tried to write; ``current_text`` and
    ``current_version`` the stored caption now (both None and ``deleted`` True when it was
    deleted); ``kept_value`` / ``current_value`` the same for a gold label.
    """

    def __init__(self, message: str, *, kept_text: str | None = None,
                 current_text: str | None = None, current_version: int | None = None,
                 deleted: bool = False, kept_value: object = None,
                 current_value: object = None) -> None:
        super().__init__(message)
        self.kept_text = kept_text
        self.current_text = current_text
        self.current_version = current_version
        self.deleted = deleted
        self.kept_value = kept_value
        self.current_value = current_value


class GuidelineNotMet(RecordError):
    """A clip submitted while its captions miss the caption guideline, without an override
    (or with one where the lead made the guideline a block). Nothing was written.

    ``missing`` lists what is missing, one plain-English line each; ``blocking`` is True when the
    project refuses overrides (the lead's choice), False when an override is allowed.
    """

    def __init__(self, message: str, *, missing: tuple[str, ...] = (), blocking: bool = False) -> None:
        super().__init__(message)
        self.missing = tuple(missing)
        self.blocking = blocking


class ServerBusyError(ProjectError):
    """The database server gave up waiting: a lock held by another session, or a time limit."""


class DatabaseFault(ProjectError):
    """The database refused a read or write for a reason of its own: a damaged, read-only or
    full file, a busy server. The message is one plain line naming the reason."""


class LoginRequired(ProjectError):
    """A server project wants a (right) password for ``login`` at ``server``. ``refused`` is
    True when a password was sent and turned down, False when none was given."""

    def __init__(self, message: str, *, server: str | None, login: str | None,
                 refused: bool) -> None:
        super().__init__(message)
        self.server = server
        self.login = login
        self.refused = refused


class PermissionRefused(RecordError, PermissionError):
    """The person acting may not do this (their role, or the server's row-level security)."""


class NotALeadError(PermissionRefused):
    """Only leads may do this; the person acting is not one."""


class DuplicateMediaWarning(UserWarning):
    """A clip was added whose file has the same SHA-256 as a clip already in the project."""


class NotEnoughLabels(RecordError):
    """Too few labelled clips to learn label suggestions from. ``have`` of ``need`` counts the
    labelled clips toward the minimum; ``reason`` says what is missing, in words."""

    def __init__(self, have: int, need: int, reason: str) -> None:
        super().__init__(f"not enough labels yet: {have} of {need} ({reason})")
        self.have, self.need, self.reason = have, need, reason
