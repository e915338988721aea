"""The package's own errors.

Every error a user can cause is a :class:`WorkbenchError` (a ``ValueError``)
whose ``str()`` is one line naming *where* (file, line, column or key) and
*what was expected*. The command line prints that line after ``error:`` and
exits with status 2; notebooks show it in the panel. Nothing below the user
interface prints or asserts.
"""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

__all__ = [
    "WorkbenchError",
    "InputFileError",
    "RangeCoverageError",
    "where",
]


class WorkbenchError(ValueError):
    """Base of every error the workbench raises on bad input."""


def where(path: str | Path | None = None, line: int | None = None,
          column: str | int | None = None, key: str | None = None) -> str:
    """Return the ``file, line N, column 'c'`` prefix used in every message."""
    parts = []
    if path is not None:
        parts.append(str(path))
    if line is not None:
        parts.append(f"line {line}")
    if column is not None:
        parts.append(f"column {column!r}" if isinstance(column, str) else f"column {column}")
    if key is not None:
        parts.append(f"key {key!r}")
    return ", ".join(parts)


@dataclass(eq=False)
class InputFileError(WorkbenchError):
    """A file could not be read as asked.

    ``str()`` gives ``<path>, line <n>, column <c>: <what was expected>``;
    the parts that do not apply are left out.
    """

    message: str
    path: str | None = None
    line: int | None = None
    column: str | int | None = None

    def __post_init__(self) -> None:
        super().__init__(str(self))

    def __str__(self) -> str:
        prefix = where(self.path, self.line, self.column)
        return f"{prefix}: {self.message}" if prefix else self.message


class RangeCoverageError(WorkbenchError):
    """Spectral data do not cover the wavelength range a computation needs."""
