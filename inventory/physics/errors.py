"""The one error type raised by the science modules for bad input."""

from __future__ import annotations


class AnalysisInputError(ValueError):
    """Input that cannot be analysed, with where the problem is.

    Parameters
    ----------
    message : str
        What is wrong, in a sentence a lab member understands.
    line : int, optional
        1-based line number in the uploaded file, when the problem is in a file.
    field : str, optional
        Name of the parameter or column at fault (e.g. ``"power_mW"``).
    """

    def __init__(self, message: str, *, line: int | None = None, field: str | None = None):
        self.message = message
        self.line = line
        self.field = field
        super().__init__(str(self))

    def __str__(self) -> str:
        where = []
        if self.line is not None:
            where.append(f"line {self.line}")
        if self.field is not None:
            where.append(f"field '{self.field}'")
        return f"{', '.join(where)}: {self.message}" if where else self.message
