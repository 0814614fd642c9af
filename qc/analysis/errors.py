"""The one error type of the science modules; its home is :mod:`inventory.physics.errors`."""

from inventory.physics.errors import AnalysisInputError

__all__ = ["AnalysisInputError"]
