"""The exception hierarchy of geosect.

Every error that a user can fix is a :class:`GeosectError`.  The command line
turns it into one message and exit code 2; anything else is a bug (exit 1).

An error names *where* (file, key, row, column), *what* is wrong and *how to fix
it*, so that a message reads like::

    stations.csv, row 12, column 'lat': value 'abc' is not a number.
    Fix: write the latitude in decimal degrees, for example 46.52.
"""

from __future__ import annotations

from dataclasses import dataclass
from os import PathLike

__all__ = [
    "GeosectError",
    "InputError",
    "ConfigError",
    "CRSError",
    "LineError",
    "ModelError",
]


class GeosectError(Exception):
    """Root of every error that geosect reports to the user (exit code 2)."""

    def __init__(self, what: str, *, fix: str | None = None, where: str | None = None):
        self.what = what
        self.fix = fix
        self.where = where
        super().__init__(self.message)

    @property
    def message(self) -> str:
        text = f"{self.where}: {self.what}" if self.where else self.what
        if self.fix:
            text += f"\nFix: {self.fix}"
        return text

    def __str__(self) -> str:  # pragma: no cover - trivial
        return self.message


def _where(file: str | PathLike | None, key: str | None, row: int | None, column: str | None) -> str | None:
    parts = []
    if file is not None:
        parts.append(str(file))
    if key is not None:
        parts.append(f"key '{key}'")
    if row is not None:
        parts.append(f"row {row}")
    if column is not None:
        parts.append(f"column '{column}'")
    return ", ".join(parts) or None


class InputError(GeosectError):
    """A fault of an input file: missing, unreadable, wrong columns, no CRS.

    Parameters
    ----------
    what : str
        What is wrong, quoting the bad value.
    file, key, row, column : optional
        Where it is wrong.  ``row`` counts data rows from 1.
    fix : str
        How the user can fix it.
    """

    def __init__(
        self,
        what: str,
        *,
        file: str | PathLike | None = None,
        key: str | None = None,
        row: int | None = None,
        column: str | None = None,
        fix: str | None = None,
    ):
        self.file = None if file is None else str(file)
        self.key = key
        self.row = row
        self.column = column
        super().__init__(what, fix=fix, where=_where(file, key, row, column))


class ConfigError(InputError):
    """A fault of the project file: unknown key, wrong type, bad value."""


class CRSError(InputError):
    """A coordinate reference system that cannot be read or used."""


class LineError(GeosectError):
    """A survey line that cannot be built or used (too short, self-intersecting)."""


class ModelError(InputError):
    """A velocity model that is inconsistent (crossing interfaces, bad velocity)."""


@dataclass(frozen=True)
class RowIssue:
    """One row-level fault: kept in the table as a status or flag, never raised."""

    row: int
    code: str
    detail: str = ""
