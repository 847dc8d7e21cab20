"""How the edit history keeps a row's column values, and how undo reads them back.

The history stores a row as JSON, so a time becomes an ISO string. Reading it back must follow the
column's declared type, never the shape of the value: a caption whose text happens to look like a
timestamp stays text.
"""

from __future__ import annotations

import datetime as dt
from typing import Any

from sqlalchemy import DateTime, inspect


def json_value(v: Any) -> Any:
    """One column value as the edit history keeps it."""
    if isinstance(v, dt.datetime):
        # times are stored in UTC; SQLite hands them back without a zone, PostgreSQL with
        # its own zone object: write one form so history rows compare equal
        return (v.replace(tzinfo=dt.timezone.utc) if v.tzinfo is None
                else v.astimezone(dt.timezone.utc)).isoformat()
    return v


def row_dict(obj: Any) -> dict[str, Any]:
    """Column values of an ORM row as JSON-safe data (for the edit history)."""
    return {attr.key: json_value(getattr(obj, attr.key)) for attr in inspect(obj).mapper.column_attrs}


def row_values(model: type, data: dict[str, Any]) -> dict[str, Any]:
    """The column values of ``model`` from a history row, each decoded by its column's type."""
    columns = {attr.key: attr.columns[0] for attr in inspect(model).column_attrs}
    out: dict[str, Any] = {}
    for key, value in data.items():
        column = columns.get(key)
        if column is not None and isinstance(column.type, DateTime) and isinstance(value, str):
            value = dt.datetime.fromisoformat(value)
        out[key] = value
    return out
