"""Settings for benchmarks/qc_map_import.py: the test settings on a benchmark-only database."""

from pathlib import Path

from sersledger.settings.test import *  # noqa: F401,F403

_OUT = Path(__file__).resolve().parent / "out"
DATABASES = {"default": {"ENGINE": "django.db.backends.sqlite3",
                         "NAME": str(_OUT / "import.sqlite3")}}
MEDIA_ROOT = _OUT / "import-media"
SERSLEDGER_INLINE_ANALYSIS_BYTES = 0  # every map goes through the background path
