"""Process insight, pure statistics: numpy/pandas in, numbers out; no Django, no plotting.

Fits are done by statsmodels (proportion intervals, LOWESS, linear mixed models); this package
only chooses the published method, refuses data that are too few, and shapes the answer.
"""

from .errors import NotEnoughData

__all__ = ["NotEnoughData"]
