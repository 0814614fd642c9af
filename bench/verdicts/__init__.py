"""Verdicts first: each result page's verdict in words and its key figures (one shape)."""

from inventory.models import DepositionRun
from qc.models import UvVisRecord

from .base import KeyFigure, Verdict
from .colloid import batch_verdict, uvvis_verdict
from .deposition import deposition_verdict
from .qc import qc_verdict
from .readiness import readiness_verdict

__all__ = ["KeyFigure", "MAKE_RESULT_VERDICTS", "Verdict", "batch_verdict",
           "deposition_verdict", "qc_verdict", "readiness_verdict", "uvvis_verdict"]

# The Make result pages that lead with the same verdict as the record's own page.
MAKE_RESULT_VERDICTS = {DepositionRun: deposition_verdict, UvVisRecord: uvvis_verdict}
