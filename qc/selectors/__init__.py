"""QC selectors, split by topic (Raman reference-analyte QC; colloid UV-vis); import from here."""

from .colloid import *  # noqa: F401,F403
from .current import *  # noqa: F401,F403
from .limits import *  # noqa: F401,F403
from .raman import *  # noqa: F401,F403
