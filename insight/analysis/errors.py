"""The refusal a statistic gives instead of a number when the data cannot carry one."""

from __future__ import annotations

from qc.analysis.errors import AnalysisInputError

#: Fewer than this many substrates behind a group, a setting or a window: no number is given.
MIN_PER_GROUP = 10


class NotEnoughData(AnalysisInputError):
    """Too few data (or a setting that never varies) for an honest number.

    ``str(error)`` always starts with "not enough data" so pages and the API can show it
    where the number would have been.
    """

    def __init__(self, reason: str, *, field: str | None = None):
        super().__init__(f"not enough data: {reason}", field=field)
        self.reason = reason

    def __str__(self) -> str:
        return self.message
