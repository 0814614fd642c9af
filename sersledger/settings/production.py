"""Production settings: DEBUG off; SECRET_KEY and ALLOWED_HOSTS must come from the environment.

Choose with ``DJANGO_SETTINGS_MODULE=sersledger.settings.production``; set ``DATABASE_URL`` for
PostgreSQL.  Starting without the secrets is refused rather than falling back to a default.
"""

import os

from django.core.exceptions import ImproperlyConfigured

from .base import *  # noqa: F401,F403
from .base import DATA_DIR


def _required_environment(name: str) -> str:
    value = os.environ.get(name, "").strip()
    if not value:
        raise ImproperlyConfigured(f"Set the environment variable {name} for production settings.")
    return value


DEBUG = False

# The signature lockout counter (inventory.signature_throttle) must be one count for
# every gunicorn worker: a file cache on this host's disk is shared by its processes and needs
# no extra service.  A lab serving from several hosts sets a network cache (memcached, Redis).
CACHES = {"default": {"BACKEND": "django.core.cache.backends.filebased.FileBasedCache",
                      "LOCATION": str(DATA_DIR / "cache")}}
SECRET_KEY = _required_environment("SECRET_KEY")
ALLOWED_HOSTS = [h.strip() for h in _required_environment("ALLOWED_HOSTS").split(",") if h.strip()]
CSRF_TRUSTED_ORIGINS = [
    origin.strip()
    for origin in os.environ.get("CSRF_TRUSTED_ORIGINS", "").split(",")
    if origin.strip()
]

SESSION_COOKIE_SECURE = True
CSRF_COOKIE_SECURE = True
SECURE_SSL_REDIRECT = os.environ.get("SECURE_SSL_REDIRECT", "true").lower() != "false"
SECURE_HSTS_SECONDS = 31536000
SECURE_HSTS_INCLUDE_SUBDOMAINS = True
SECURE_HSTS_PRELOAD = True
SECURE_CONTENT_TYPE_NOSNIFF = True
SECURE_PROXY_SSL_HEADER = ("HTTP_X_FORWARDED_PROTO", "https")
X_FRAME_OPTIONS = "DENY"
