"""Exceptions shared by every layer."""


class RecordError(ValueError):
    """Bad input: a record, a path, a label, a setting. The message names what and where."""


class ProjectError(RuntimeError):
    """A project that cannot be opened or used (missing, too new, locked, unreachable)."""


class StaleWriteError(RecordError):
    """Someone else changed the row since it was read; the caller's value is kept, not written."""


class ServerBusyError(ProjectError):
    """The database server gave up waiting: a lock held by another session, or a time limit."""
