"""Integer columns of a query as a numpy array, or its rows as the driver's tuples, read through
the database driver's cursor.

SQLAlchemy's result layer builds and checks a row object per row: reading the 290k label rows
of a 100k-clip project (three ids each) took 0.88 s through it and 0.13 s through the driver's
cursor on the same connection (measured on the development machine). The statement is still
built and compiled by SQLAlchemy for the session's dialect, so this works the same on SQLite and
PostgreSQL; only the fetching is done by hand, because no library turns a DB-API cursor into an
array without a Python object per row.
"""

from __future__ import annotations

import contextlib
import itertools

import numpy as np
from sqlalchemy.orm import Session
from sqlalchemy.sql import Select


def int_columns(s: Session, stmt: Select) -> np.ndarray:
    """The rows of ``stmt`` (a select of integer columns, none of them NULL) as an int64 array
    of shape (rows, columns), in the order the database returns them, inside ``s``'s
    transaction."""
    width = len(stmt.selected_columns)
    with _executed(s, stmt) as cursor:
        flat = np.fromiter(itertools.chain.from_iterable(cursor), dtype=np.int64)
    return flat.reshape(-1, width)


def plain_rows(s: Session, stmt: Select) -> list[tuple]:
    """The rows of ``stmt`` as the driver's tuples, inside ``s``'s transaction: for columns
    the driver already gives as Python wants them (integers, text, NULL as None), where
    SQLAlchemy's per-row processing adds nothing but time (the 865k captions of a 100k-clip
    project: 1.46 s through it)."""
    with _executed(s, stmt) as cursor:
        return cursor.fetchall()


@contextlib.contextmanager
def _executed(s: Session, stmt: Select):
    """A cursor of the session's connection that has run ``stmt``, compiled by SQLAlchemy for
    the connection's dialect (parameters bound as the dialect wants them)."""
    conn = s.connection()
    compiled = stmt.compile(dialect=conn.dialect, compile_kwargs={"render_postcompile": True})
    params = compiled.params
    if compiled.positional:
        params = tuple(params[name] for name in compiled.positiontup or ())
    cursor = conn.connection.cursor()
    try:
        cursor.execute(str(compiled), params)
        yield cursor
    finally:
        cursor.close()
