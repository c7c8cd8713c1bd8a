"""Exceptions that the command line turns into one-line messages and exit statuses."""

from __future__ import annotations

from dataclasses import dataclass


@dataclass
class InputError(Exception):
    """Bad input: a file, option or value the user must fix (exit status 2).

    The message names the file, the line and the column where they are known, says what is wrong
    and what to do.
    """

    problem: str
    file: str | None = None
    line: int | None = None
    column: str | None = None

    def __str__(self) -> str:
        where = []
        if self.file is not None:
            where.append(self.file)
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.column is not None:
            where.append(f"column '{self.column}'")
        prefix = ", ".join(where)
        return f"{prefix}: {self.problem}" if prefix else self.problem


class FitError(Exception):
    """A reduction that cannot be done with the data given (exit status 1); says why."""
