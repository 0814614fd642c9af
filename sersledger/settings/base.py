"""Settings shared by every environment.

The embedded default database is SQLite in the git-ignored ``data/`` folder; setting
``DATABASE_URL`` (e.g. ``postgres://user@127.0.0.1:5432/sersledger``) switches any settings
module to that database through dj-database-url.
"""

import os
from datetime import timedelta
from pathlib import Path

import dj_database_url

BASE_DIR = Path(__file__).resolve().parent.parent.parent
DATA_DIR = Path(os.environ.get("SERSLEDGER_DATA_DIR", BASE_DIR / "data"))
# The demo's invented instrument files (the repository's fixtures/; they are not in the wheel,
# so an installed copy points this at a checkout to load the demo).
SERSLEDGER_DEMO_FILES = Path(os.environ.get("SERSLEDGER_DEMO_FILES", BASE_DIR / "fixtures"))

INSTALLED_APPS = [
    # The pages (templates in bench/templates/); first, so its templates win over Django's.
    "bench",
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "rest_framework",
    "knox",
    "django_filters",
    "drf_spectacular",
    "simple_history",
    "axes",
    "django_tasks",
    "django_tasks_db",
    "inventory",
    "qc",
    "insight",
    "exchange",
]

# Background work (big QC maps) on Django's task interface (the django-tasks backport of
# Django 6's django.tasks).  Embedded default: tasks wait in this database and a worker
# (`manage.py db_worker`, started by serve_demo) runs them.  A lab on several machines sets
# SERSLEDGER_REDIS_URL: tasks then go to Redis (RQ) and `manage.py rqworker --job-class
# django_tasks_rq.Job default` runs on any machine that shares the database and the media
# storage (README.md, "A lab on several machines").
SERSLEDGER_REDIS_URL = os.environ.get("SERSLEDGER_REDIS_URL", "")
if SERSLEDGER_REDIS_URL:
    INSTALLED_APPS += ["django_rq", "django_tasks_rq"]
    RQ_QUEUES = {"default": {"URL": SERSLEDGER_REDIS_URL, "DEFAULT_TIMEOUT": 3600}}
    TASKS = {"default": {"BACKEND": "django_tasks_rq.RQBackend", "QUEUES": ["default"]}}
else:
    TASKS = {"default": {"BACKEND": "django_tasks_db.DatabaseBackend"}}
# Media (raw files, stored results) on S3-compatible object storage when a lab spans machines.
if os.environ.get("SERSLEDGER_S3_BUCKET"):
    STORAGES = {
        "default": {"BACKEND": "storages.backends.s3.S3Storage", "OPTIONS": {
            "bucket_name": os.environ["SERSLEDGER_S3_BUCKET"],
            "endpoint_url": os.environ.get("SERSLEDGER_S3_ENDPOINT_URL") or None,
            "file_overwrite": False}},
        "staticfiles": {"BACKEND": "django.contrib.staticfiles.storage.StaticFilesStorage"},
    }
# Files up to this size are analysed inside the request; bigger ones by a worker.
SERSLEDGER_INLINE_ANALYSIS_BYTES = int(os.environ.get("SERSLEDGER_INLINE_ANALYSIS_MB", "5")) \
    * 1024 * 1024
# A worker that has not reported for this long is taken for dead; another may take over.
SERSLEDGER_ANALYSIS_LEASE_S = 900

MIDDLEWARE = [
    # An id for each request, on every log line and in the X-Request-ID response header.
    "log_request_id.middleware.RequestIDMiddleware",
    "django.middleware.security.SecurityMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    # Puts request.user on every history row written during a request.
    "simple_history.middleware.HistoryRequestMiddleware",
    # Answers a locked-out sign-in with the lockout page (django-axes); keep it last.
    "axes.middleware.AxesMiddleware",
]

ROOT_URLCONF = "sersledger.urls"
WSGI_APPLICATION = "sersledger.wsgi.application"

TEMPLATES = [
    {
        "BACKEND": "django.template.backends.django.DjangoTemplates",
        "DIRS": [],
        "APP_DIRS": True,
        "OPTIONS": {
            "context_processors": [
                "django.template.context_processors.request",
                "django.contrib.auth.context_processors.auth",
                "django.contrib.messages.context_processors.messages",
                "bench.context_processors.user_roles",
            ],
        },
    },
]


def database_from_environment(default_sqlite_path: Path) -> dict:
    """DATABASE_URL wins; otherwise SQLite at ``default_sqlite_path``."""
    url = os.environ.get("DATABASE_URL")
    if url:
        database = dj_database_url.parse(url, conn_max_age=60)
        if database["ENGINE"] == "django.db.backends.postgresql" and os.environ.get(
                "DATABASE_PREPARED_STATEMENTS", "true").lower() != "false":
            # Parameters bound on the server, and a statement run 5 times on a connection is
            # prepared: PostgreSQL then skips planning, which was most of the database time of
            # an API read (1.7 ms planning against 0.08 ms execution; benchmarks/REPORT.md).
            # Turn off with DATABASE_PREPARED_STATEMENTS=false behind a transaction-mode pooler.
            database.setdefault("OPTIONS", {}).update(server_side_binding=True,
                                                      prepare_threshold=5)
        return database
    return {
        "ENGINE": "django.db.backends.sqlite3",
        "NAME": default_sqlite_path,
        # Several people saving at once: SQLite has one writer at a time, and a transaction
        # that reads before it writes cannot wait for the lock ("database is locked").
        # BEGIN IMMEDIATE takes the write lock first, so writers queue for up to `timeout`
        # seconds; write-ahead logging lets pages read while someone writes.
        # (tests/inventory/test_concurrent_writers.py)
        "OPTIONS": {"timeout": 20, "transaction_mode": "IMMEDIATE",
                    "init_command": "PRAGMA journal_mode=WAL;"},
    }


DATABASES = {"default": database_from_environment(DATA_DIR / "sersledger.sqlite3")}

DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

GENERATE_REQUEST_ID_IF_NOT_IN_HEADER = True
REQUEST_ID_RESPONSE_HEADER = "X-Request-ID"

# Sign-in lockouts (django-axes): AXES_FAILURE_LIMIT wrong passwords for one user name from
# one address lock that pair for AXES_COOLOFF_TIME, even with the right password; guessing
# from elsewhere never locks a person out at their own desk.  Counted in the database, so
# every server process and host shares the count.  The signature step uses the same numbers
# (inventory.signature_throttle).  The person is told, on the page and by the token endpoint
# (inventory.signin.lockout_response).
AUTHENTICATION_BACKENDS = ["axes.backends.AxesStandaloneBackend",
                           "django.contrib.auth.backends.ModelBackend"]
AXES_FAILURE_LIMIT = 5
AXES_COOLOFF_TIME = timedelta(minutes=15)
AXES_LOCKOUT_PARAMETERS = [["username", "ip_address"]]
AXES_RESET_ON_SUCCESS = True
AXES_CLIENT_IP_CALLABLE = "inventory.signin.client_address"
AXES_LOCKOUT_CALLABLE = "inventory.signin.lockout_response"
AXES_VERBOSE = False
SERSLEDGER_BEHIND_PROXY = os.environ.get("SERSLEDGER_BEHIND_PROXY", "").lower() == "true"

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator",
     "OPTIONS": {"min_length": 10}},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]

LANGUAGE_CODE = "en-gb"
TIME_ZONE = "UTC"
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATIC_ROOT = DATA_DIR / "static"
MEDIA_URL = "media/"
MEDIA_ROOT = DATA_DIR / "media"

LOGIN_URL = "login"
LOGIN_REDIRECT_URL = "home"

# Uploaded instrument files are kept as uploaded.  Files over 5 MB stream to a temporary file
# on disk while they arrive (Django's TemporaryFileUploadHandler), never whole in memory; the
# largest file accepted is SERSLEDGER_MAX_UPLOAD_MB (default 500 MB: a 200 x 200 map of 1,024
# shifts written with decimals is about 200 MB).  Form fields other than files stay small.
DATA_UPLOAD_MAX_MEMORY_SIZE = 5 * 1024 * 1024
FILE_UPLOAD_MAX_MEMORY_SIZE = 5 * 1024 * 1024
FILE_UPLOAD_HANDLERS = ["django.core.files.uploadhandler.MemoryFileUploadHandler",
                        "django.core.files.uploadhandler.TemporaryFileUploadHandler"]
SERSLEDGER_MAX_UPLOAD_BYTES = int(os.environ.get("SERSLEDGER_MAX_UPLOAD_MB", "500")) * 1024 * 1024
# A spreadsheet is read whole into memory (openpyxl), so sheets keep a smaller limit than maps.
SERSLEDGER_MAX_SHEET_BYTES = int(os.environ.get("SERSLEDGER_MAX_SHEET_MB", "50")) * 1024 * 1024

# exchange: an API or page export holds at most this many rows (more: narrow the filters).
SERSLEDGER_EXPORT_MAX_ROWS = 50_000
# exchange digest: stock expiring within this many days; colloids re-measured this often.
SERSLEDGER_EXPIRY_WARNING_DAYS = 14
SERSLEDGER_COLLOID_REMEASURE_DAYS = 7
# The digest's sender; development prints mail to the console, production sends by SMTP.
DEFAULT_FROM_EMAIL = os.environ.get("SERSLEDGER_FROM_EMAIL", "sersledger@localhost")

# Extra readiness reasons contributed by other apps, as dotted paths to callables
# ``provider(substrate, ancestry) -> list[Reason]``.  Inventory never imports them directly.
SERSLEDGER_READINESS_PROVIDERS = [
    "qc.readiness.qc_reasons",
]

# Extra rules a release must pass, as dotted paths to ``check(record) -> note or None``
# that raise ValidationError to refuse (inventory.services.record_release).
# Called in the transaction of every amendment with the fields that changed, to recompute or
# mark stale the figures another app derived from them (inventory.services.derived).
SERSLEDGER_AMEND_HOOKS = [
    "qc.services.colloid.uvvis_mark_stale_on_amend",
    "qc.services.enhancement.ef_mark_stale_on_geometry_change",
]

SERSLEDGER_RELEASE_CHECKS = [
    "qc.services.raman_release.substrate_release_check",
]

# A maker may not release (sign off) a record they made; a one-person lab can allow it.
SERSLEDGER_ALLOW_SELF_RELEASE = False
# Printed label size in millimetres (width, height): 62 × 29 fits the common continuous
# label tape; a lab with other stock sets its own.
SERSLEDGER_LABEL_SIZE_MM = (62, 29)

# Further parts of the demo scenario from apps above qc, as dotted paths to callables
# ``load(scenario)``, run by load_demo after the QC demo in the same transaction.
SERSLEDGER_DEMO_EXTENSIONS = [
    "insight.demo.load_insight_demo",
]

# The API (inventory/api, qc/api): token for scripts and instruments, session for the browser.
REST_FRAMEWORK = {
    "DEFAULT_AUTHENTICATION_CLASSES": [
        "inventory.api.authentication.HashedTokenAuthentication",
        "rest_framework.authentication.SessionAuthentication",
    ],
    "DEFAULT_PERMISSION_CLASSES": ["rest_framework.permissions.IsAuthenticated"],
    "DEFAULT_FILTER_BACKENDS": [
        "django_filters.rest_framework.DjangoFilterBackend",
        "rest_framework.filters.SearchFilter",
        "rest_framework.filters.OrderingFilter",
    ],
    # JSON in; multipart only where an endpoint takes files (it says so itself).
    # (inventory.api.parsers: DRF's JSON parser refusing deep nesting and NUL characters)
    "DEFAULT_PARSER_CLASSES": ["inventory.api.parsers.JsonParser"],
    # JSON out, errors included; people read the API through the Swagger UI at /api/v1/docs/.
    # ?format=csv / ?format=xlsx or an Accept header gives a list as a table (exchange).
    "DEFAULT_RENDERER_CLASSES": [
        "rest_framework.renderers.JSONRenderer",
        "exchange.renderers.CSVRenderer",
        "exchange.renderers.XLSXRenderer",
    ],
    "DEFAULT_PAGINATION_CLASS": "inventory.api.pagination.Keyset",
    "DEFAULT_SCHEMA_CLASS": "drf_spectacular.openapi.AutoSchema",
    # One error body everywhere: {"errors": [{"field", "message", "code"}]}.
    "EXCEPTION_HANDLER": "inventory.api.errors.exception_handler",
}

# API tokens are stored as SHA-512 digests (django-rest-knox) and shown once; each lasts
# 90 days unless revoked (inventory/api/auth.py).
REST_KNOX = {"TOKEN_TTL": timedelta(days=90), "AUTH_HEADER_PREFIX": "Token"}

SPECTACULAR_SETTINGS = {
    "TITLE": "sersledger API",
    "DESCRIPTION": "Records, readiness, lineage and QC results of a SERS substrate laboratory. "
                   "Every quantity carries its unit in its field name and its description. "
                   "Authenticate with 'Authorization: Token <token>' (POST /api/v1/token/) "
                   "or a browser session. Errors: {\"errors\": [{\"field\", \"message\", "
                   "\"code\"}]}.",
    "VERSION": "1",
    "SERVE_INCLUDE_SCHEMA": False,
    "COMPONENT_SPLIT_REQUEST": True,
    "ENUM_NAME_OVERRIDES": {
        "StorageKindEnum": "inventory.models.StorageLocation.Kind",
        "ReagentKindEnum": "inventory.models.ReagentKind",
        "RecordKindEnum": "inventory.models.RecordKind",
        "SubstrateStageEnum": "inventory.models.Substrate.Stage",
    },
    "POSTPROCESSING_HOOKS": [
        "drf_spectacular.hooks.postprocess_schema_enums",
        "inventory.api.schema.add_error_responses",
    ],
    # Swagger UI at /api/v1/docs/ from the drf-spectacular-sidecar package (offline, no CDN).
    "SWAGGER_UI_DIST": "/api/v1/docs/assets/swagger-ui-dist",
    "SWAGGER_UI_FAVICON_HREF": "/api/v1/docs/assets/swagger-ui-dist/favicon-32x32.png",
}
