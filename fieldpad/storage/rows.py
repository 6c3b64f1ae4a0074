"""Checked values for stored rows: text by the one text rule, numbers in range, an insert that names its
problems.  Shared by sites, boards and readings."""

from __future__ import annotations

from ..core.readings import stored_text
from .db import StorageError


class ValidationError(StorageError):
    """Values that cannot be saved; ``problems`` is a list of (field, reason)."""

    def __init__(self, problems):
        self.problems = list(problems)
        super().__init__("; ".join(f"{f}: {r}" for f, r in self.problems))


def clean_text(value, field, problems, required=False, limit=10_000):
    text, why = stored_text(value, limit)
    if why:
        problems.append((field, why))
    elif text is None and required:
        problems.append((field, "is required"))
    return text


NO_NUMBER = object()


def number(value, field, problems, low=0.0, high=1e6):
    """A setting typed as a number (a decimal comma is accepted): float, None when empty, or
    ``NO_NUMBER`` after recording the problem."""
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    try:
        x = float(str(value).replace(",", ".")) if isinstance(value, str) else float(value)
    except (TypeError, ValueError):
        problems.append((field, f"{value!r} is not a number"))
        return NO_NUMBER
    if not (x == x and low <= x < high):
        problems.append((field, f"{value!r} is not a plausible value"))
        return NO_NUMBER
    return x


def insert(db, table: str, row: dict) -> None:
    """Plain INSERT of one row (sqlite-utils' insert() inspects the table on every call,
    which doubles the cost of saving one reading)."""
    cols = ", ".join(f'"{c}"' for c in row)
    db.conn.execute(f'INSERT INTO "{table}" ({cols}) VALUES ({", ".join("?" * len(row))})', list(row.values()))


# ---- sites -----------------------------------------------------------------
