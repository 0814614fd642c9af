"""Development settings: DEBUG on, SQLite in data/ unless DATABASE_URL is set."""

from .base import *  # noqa: F401,F403
from .base import DATA_DIR

DEBUG = True
SECRET_KEY = "development-only-not-secret"
ALLOWED_HOSTS = ["127.0.0.1", "localhost", "[::1]"]

DATA_DIR.mkdir(parents=True, exist_ok=True)

# The daily digest (exchange) is printed, not sent.
EMAIL_BACKEND = "django.core.mail.backends.console.EmailBackend"
