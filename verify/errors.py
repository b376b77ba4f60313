"""Typed errors for bad input.

Every error a user can cause by a bad spec or a bad data file is a :class:`VerifyError`.
The CLI maps any ``VerifyError`` to exit status 2 and prints :meth:`VerifyError.report`.
Each error carries one or more *issues*; each issue names where the problem is (file and
line/column for a spec, file/row/column for data) and what to do about it.
"""

from __future__ import annotations

from dataclasses import dataclass


@dataclass(frozen=True)
class SpecIssue:
    """One problem in a spec file.

    ``path`` is the key path in the YAML, e.g. ``characteristics[2].checks.shift.margin``.
    ``line`` and ``column`` are 1-based positions in the YAML file (None when unknown).
    """

    file: str
    path: str
    message: str
    line: int | None = None
    column: int | None = None

    def __str__(self) -> str:
        where = self.file
        if self.line is not None:
            where += f":{self.line}"
            if self.column is not None:
                where += f":{self.column}"
        key = f" `{self.path}`" if self.path else ""
        return f"{where}:{key} {self.message}"


@dataclass(frozen=True)
class DataIssue:
    """One problem in a data file.

    ``row`` is the source row number as a spreadsheet user counts it (the header is row 1 in
    a CSV or on a sheet); ``column`` is the column's header text.
    """

    file: str
    message: str
    row: int | None = None
    column: str | None = None

    def __str__(self) -> str:
        where = self.file
        if self.row is not None:
            where += f", row {self.row}"
        if self.column is not None:
            where += f", column '{self.column}'"
        return f"{where}: {self.message}"


class VerifyError(Exception):
    """Base class: bad input that the user must fix. Exit status 2."""

    exit_code = 2

    def __init__(self, issues: list | tuple | str):
        if isinstance(issues, str):
            issues = [issues]
        self.issues = tuple(issues)
        super().__init__(self.report())

    def report(self) -> str:
        lines = [str(i) for i in self.issues]
        if len(lines) == 1:
            return lines[0]
        return f"{len(lines)} problems:\n" + "\n".join(f"  - {line}" for line in lines)


class SpecError(VerifyError):
    """The spec file is invalid: issues are :class:`SpecIssue`."""


class DataError(VerifyError):
    """A data file is missing or invalid: issues are :class:`DataIssue`."""


class ReportError(VerifyError):
    """A report given to ``verify replay`` cannot be read."""


class UsageError(VerifyError):
    """A command-line argument is invalid."""
