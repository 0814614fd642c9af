"""QC services, split by topic (Raman reference-analyte QC; colloid UV-vis); import from here."""

from .background import *  # noqa: F401,F403
from .colloid import *  # noqa: F401,F403
from .raman import *  # noqa: F401,F403
from .raman_results import *  # noqa: F401,F403
