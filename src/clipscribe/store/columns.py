"""Integer columns of a query as a numpy array, read through the database driver's cursor.

SQLAlchemy's result layer builds and checks a row object per row: reading the 290k label rows
of a 100k-clip project (three ids each) took 0.88 s through it and 0.13 s through the driver's
cursor on the same connection (measured on the development machine). The statement is still
built and compiled by SQLAlchemy for the session's dialect, so this works the same on SQLite and
PostgreSQL; only the fetching is done by hand, because no library turns a DB-API cursor into an
array without a Python object per row.
"""

from __future__ import annotations

import itertools

import numpy as np
from sqlalchemy.orm import Session
from sqlalchemy.sql import Select


def int_columns(s: Session, stmt: Select) -> np.ndarray:
    """The rows of ``stmt`` (a select of integer columns, none of them NULL) as an int64 array
    of shape (rows, columns), in the order the database returns them, inside ``s``'s
    transaction."""
    conn = s.connection()
    compiled = stmt.compile(dialect=conn.dialect, compile_kwargs={"render_postcompile": True})
    params = compiled.params
    if compiled.positional:
        params = tuple(params[name] for name in compiled.positiontup or ())
    width = len(stmt.selected_columns)
    cursor = conn.connection.cursor()
    try:
        cursor.execute(str(compiled), params)
        flat = np.fromiter(itertools.chain.from_iterable(cursor), dtype=np.int64)
    finally:
        cursor.close()
    return flat.reshape(-1, width)

