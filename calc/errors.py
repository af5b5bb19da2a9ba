"""Errors raised by the calculation library.

Every error names where the problem is (a file, a line, a field) and what was
expected, so that the command line and the web app can show it to a user as is.
"""

from __future__ import annotations


class CupcalError(Exception):
    """Base class of every error that cupcal reports to a user."""


class InputError(CupcalError):
    """Bad input: names the source, the place in it and what was expected.

    Parameters
    ----------
    message:
        What is wrong and what was expected, in plain words.
    source:
        The file (or upload) the problem is in, when known.
    field:
        The dotted run-file field (``"water.volume"``), when the problem is a field.
    line:
        The 1-based line number in ``source``, when the problem is a line.
    """

    def __init__(
        self,
        message: str,
        *,
        source: str | None = None,
        field: str | None = None,
        line: int | None = None,
    ) -> None:
        super().__init__(message)
        self.message = message
        self.source = source
        self.field = field
        self.line = line

    def __str__(self) -> str:
        where = []
        if self.source:
            where.append(str(self.source))
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.field:
            where.append(f"field '{self.field}'")
        prefix = ", ".join(where)
        return f"{prefix}: {self.message}" if prefix else self.message


class AnalysisError(CupcalError):
    """The data are readable but the analysis cannot give a trustworthy number."""
