"""Production settings: DEBUG off; SECRET_KEY and ALLOWED_HOSTS must come from the environment.

Choose with ``DJANGO_SETTINGS_MODULE=sersledger.settings.production``; set ``DATABASE_URL`` for
PostgreSQL.  Starting without the secrets is refused rather than falling back to a default.
"""

import os
from email.utils import getaddresses

from django.core.exceptions import ImproperlyConfigured

from .base import *  # noqa: F401,F403
from .base import DATA_DIR, MIDDLEWARE


def _required_environment(name: str) -> str:
    value = os.environ.get(name, "").strip()
    if not value:
        raise ImproperlyConfigured(f"Set the environment variable {name} for production settings.")
    return value


DEBUG = False

# Static files (admin, API docs) are served by whitenoise from STATIC_ROOT, filled by
# ``manage.py collectstatic`` at deployment, with hashed names and compressed copies so
# browsers may cache them for good.  Django itself serves static files only with DEBUG on.
_AFTER_SECURITY = MIDDLEWARE.index("django.middleware.security.SecurityMiddleware") + 1
MIDDLEWARE = [*MIDDLEWARE[:_AFTER_SECURITY], "whitenoise.middleware.WhiteNoiseMiddleware",
              *MIDDLEWARE[_AFTER_SECURITY:]]
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {"BACKEND": "whitenoise.storage.CompressedManifestStaticFilesStorage"},
}

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

# Server errors: every ERROR (a 500 with its traceback included) goes to stderr (gunicorn's
# error log, or the journal under systemd) and to data/logs/sersledger.log, rotated at 10 MB
# with 10 old files kept; concurrent-log-handler locks the file so several gunicorn workers
# share it.  Each line carries the request's id (django-log-request-id), also sent back in
# the X-Request-ID header, so a person reporting a failed page can quote it.
# ADMINS="Name <person@lab.example>, other@lab.example" mails each server error to them
# (as manage.py send_digest mails the daily digest, exchange) through EMAIL_HOST
# (EMAIL_PORT, EMAIL_HOST_USER, EMAIL_HOST_PASSWORD, EMAIL_USE_TLS).
LOG_DIR = DATA_DIR / "logs"
LOG_DIR.mkdir(parents=True, exist_ok=True)
ADMINS = [(name, address) for name, address in getaddresses([os.environ.get("ADMINS", "")])
          if address]
SERVER_EMAIL = os.environ.get("SERVER_EMAIL", "sersledger@localhost")
EMAIL_BACKEND = os.environ.get("EMAIL_BACKEND", "django.core.mail.backends.smtp.EmailBackend")
EMAIL_HOST = os.environ.get("EMAIL_HOST", "localhost")
EMAIL_PORT = int(os.environ.get("EMAIL_PORT", "25"))
EMAIL_HOST_USER = os.environ.get("EMAIL_HOST_USER", "")
EMAIL_HOST_PASSWORD = os.environ.get("EMAIL_HOST_PASSWORD", "")
EMAIL_USE_TLS = os.environ.get("EMAIL_USE_TLS", "").lower() == "true"
LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "filters": {"request_id": {"()": "log_request_id.filters.RequestIDFilter"}},
    "formatters": {"line": {"format": "%(asctime)s %(levelname)s [%(request_id)s] "
                                      "%(name)s: %(message)s"}},
    "handlers": {
        "stderr": {"class": "logging.StreamHandler", "filters": ["request_id"],
                   "formatter": "line"},
        "file": {"class": "concurrent_log_handler.ConcurrentRotatingFileHandler",
                 "filename": str(LOG_DIR / "sersledger.log"), "maxBytes": 10 * 1024 * 1024,
                 "backupCount": 10, "encoding": "utf-8", "filters": ["request_id"],
                 "formatter": "line"},
        "mail_admins": {"class": "django.utils.log.AdminEmailHandler", "level": "ERROR"},
    },
    "root": {"handlers": ["stderr", "file"], "level": "WARNING"},
    "loggers": {
        "django.request": {"handlers": ["stderr", "file", "mail_admins"], "level": "ERROR",
                           "propagate": False},
        "django.security": {"handlers": ["stderr", "file", "mail_admins"], "level": "ERROR",
                            "propagate": False},
    },
}
