"""Settings for the test suite: fast hashing, temporary media, same database rules."""

import tempfile
from pathlib import Path

from .base import *  # noqa: F401,F403
from .base import database_from_environment

DEBUG = False
SECRET_KEY = "test-only-not-secret"
ALLOWED_HOSTS = ["testserver", "127.0.0.1", "localhost"]

_TEST_DIR = Path(tempfile.mkdtemp(prefix="sersledger-test-"))
MEDIA_ROOT = _TEST_DIR / "media"
DATABASES = {"default": database_from_environment(_TEST_DIR / "test.sqlite3")}
if DATABASES["default"]["ENGINE"] == "django.db.backends.postgresql":
    # The test runner empties tables with TRUNCATE, which the signature table refuses unless
    # the session allows it (inventory migration 0006); production sessions never do.
    DATABASES["default"].setdefault("OPTIONS", {})["options"] = (
        "-c sersledger.allow_signature_truncate=on")

PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]
