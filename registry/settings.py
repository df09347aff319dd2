"""Beamkeeper settings, read from the environment through registry.env.

Two modes, chosen by BEAMKEEPER_ENV:

- ``development`` (the default): DEBUG on, SQLite beside the code, mail printed to the
  console, a fixed insecure SECRET_KEY that is only ever accepted in this mode.
- ``production``: refuses to start without a strong SECRET_KEY (or SECRET_KEY_FILE) of its
  own and named ALLOWED_HOSTS, refuses DEBUG (registry.env.refuse_unsafe_production), and
  turns on the HTTPS protections that ``manage.py check --deploy`` looks for.

See DEVELOPERS.md for the full list of variables.
"""
from __future__ import annotations

import tempfile
from datetime import timedelta
from pathlib import Path

import dj_database_url
from csp.constants import NONE, SELF

from hazards.caution import CAUTION
from hazards.classes import LASER_CLASSES
from hazards.limits import DEFAULT_LIMITS, LIMIT_SETS
from registry.env import (
    DEVELOPMENT_SECRET_KEY,
    env_bool,
    env_choice,
    env_int,
    env_list,
    env_mapping,
    env_secret,
    env_str,
    env_time_zone,
    refuse_unsafe_production,
)

BASE_DIR = Path(__file__).resolve().parent.parent

BEAMKEEPER_ENV = env_choice("BEAMKEEPER_ENV", "development", ("development", "production"))
PRODUCTION = BEAMKEEPER_ENV == "production"

_secret_key = env_secret("SECRET_KEY")
DEBUG = env_bool("DEBUG", default=not PRODUCTION)
ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", [] if PRODUCTION else ["127.0.0.1", "localhost", "[::1]"])
if PRODUCTION:
    # What production refuses is decided in that one function.
    refuse_unsafe_production(secret_key=_secret_key, debug=DEBUG, allowed_hosts=ALLOWED_HOSTS)
# Development only: a key everyone knows, so sessions survive restarts of runserver.
SECRET_KEY = _secret_key or DEVELOPMENT_SECRET_KEY
CSRF_TRUSTED_ORIGINS = env_list("CSRF_TRUSTED_ORIGINS", [])

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "rest_framework",
    "rest_framework.authtoken",
    "django_filters",
    "drf_spectacular",
    "drf_spectacular_sidecar",
    "simple_history",
    "axes",
    "csp",
    "registry",
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    # Content-Security-Policy on every response (CONTENT_SECURITY_POLICY below).
    "csp.middleware.CSPMiddleware",
    # Before anything reads the query string: too many parameters is a 400 on every URL.
    "registry.middleware.QueryFieldLimitMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    # Records the signed-in user on every history row written during a request.
    "simple_history.middleware.HistoryRequestMiddleware",
    # Last: answers a sign-in refused by the lockout (AXES_* below).
    "axes.middleware.AxesMiddleware",
]

# Content-Security-Policy: everything from this site, no inline script or style, no plug-ins,
# no framing, forms sent only here. The register's pages and the admin need nothing more;
# the few views that do widen it for themselves with django-csp's decorators (the API's docs
# and browsable pages: registry.api.docs).
CONTENT_SECURITY_POLICY = {
    "DIRECTIVES": {
        "default-src": [SELF],
        "script-src": [SELF],
        "style-src": [SELF],
        "img-src": [SELF],
        "font-src": [SELF],
        "connect-src": [SELF],
        "object-src": [NONE],
        "base-uri": [NONE],
        "frame-ancestors": [NONE],
        "form-action": [SELF],
    },
}

ROOT_URLCONF = "registry.urls"
WSGI_APPLICATION = "registry.wsgi.application"

TEMPLATES = [
    {
        "BACKEND": "django.template.backends.django.DjangoTemplates",
        "DIRS": [BASE_DIR / "templates"],
        "APP_DIRS": True,
        "OPTIONS": {
            "context_processors": [
                "django.template.context_processors.request",
                "django.contrib.auth.context_processors.auth",
                "django.contrib.messages.context_processors.messages",
                "registry.views.navigation.navigation",
            ],
        },
    },
]

DATABASES = {
    "default": dj_database_url.config(
        default=f"sqlite:///{BASE_DIR / 'db.sqlite3'}",
        # Production keeps each worker's connection for the next requests: a new one per request
        # cost PostgreSQL 5 to 10 ms of CPU (a backend started, its caches cold), as much as a page's
        # queries. A kept connection is checked before a request uses it. Development's server runs
        # each request in a new thread, where kept connections would only pile up.
        conn_max_age=env_int("DATABASE_CONN_MAX_AGE", 600 if PRODUCTION else 0, minimum=0),
        conn_health_checks=True,
    ),
}
if DATABASES["default"]["ENGINE"] == "django.db.backends.sqlite3":
    # SQLite takes no row locks. A transaction that starts by reading and then writes cannot
    # wait for another writer ("database is locked" at once, a 500); one that takes the write
    # lock when it begins (IMMEDIATE) waits up to the timeout, then sees the other's change
    # and answers as PostgreSQL would (412, 409).
    DATABASES["default"].setdefault("OPTIONS", {}).update({
        "transaction_mode": "IMMEDIATE",
        "timeout": env_int("SQLITE_TIMEOUT_SECONDS", 20, minimum=1),
    })
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

# A password sign-in anywhere (admin, the register's page, the API token) is first checked
# against django-axes' lockout: BEAMKEEPER_SIGN_IN_FAILURE_LIMIT failures for one account name
# lock it for BEAMKEEPER_SIGN_IN_LOCKOUT_MINUTES, wherever they came from. Counted per name,
# not per address, so that a building behind one address is not locked out by one typist.
# Unlock early with `manage.py axes_reset_username <name>` (see DEVELOPERS.md).
AUTHENTICATION_BACKENDS = [
    "axes.backends.AxesStandaloneBackend",
    "django.contrib.auth.backends.ModelBackend",
]
AXES_FAILURE_LIMIT = env_int("BEAMKEEPER_SIGN_IN_FAILURE_LIMIT", 5, minimum=1)
AXES_COOLOFF_TIME = timedelta(minutes=env_int("BEAMKEEPER_SIGN_IN_LOCKOUT_MINUTES", 30, minimum=1))
AXES_LOCKOUT_PARAMETERS = ["username"]
# axes.W006 asks for the address as well; left out on purpose (above). Guessing across many
# names from one address is met by the token sign-in's address throttle and by the lock on
# each name it tries.
SILENCED_SYSTEM_CHECKS = ["axes.W006"]
AXES_USERNAME_CALLABLE = "registry.signin.axes_username"
AXES_CLIENT_IP_CALLABLE = "registry.signin.attempt_address"
AXES_RESET_ON_SUCCESS = True
AXES_LOCKOUT_TEMPLATE = "pages/locked_out.html"

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]

# The limit set the register's pages, signs and reports lead with; results under every shipped
# set are stored, and the pages show the others beside it. Local rules decide which one leads.
HAZARD_LIMITS = env_choice("BEAMKEEPER_LIMITS", DEFAULT_LIMITS, LIMIT_SETS)

# The signal word a door sign carries, by the highest class in the room (classes left out need
# no sign). Common practice, no source: caution for 2, 2M and 3R, warning or danger for 3B and
# 4. Institutions differ, so it is a setting: BEAMKEEPER_SIGNAL_WORDS="2=CAUTION,...,4=DANGER".
SIGNAL_WORDS = env_mapping("BEAMKEEPER_SIGNAL_WORDS", {"2": "CAUTION", "2M": "CAUTION", "3R": "CAUTION",
                                                       "3B": "WARNING", "4": "DANGER"}, keys=LASER_CLASSES)
# A location with a class 3B or 4 laser is due for audit this many months after its last one.
AUDIT_INTERVAL_MONTHS = env_int("BEAMKEEPER_AUDIT_INTERVAL_MONTHS", 12, minimum=1)
# Laser protective eyewear is looked over by its wearer before each use; this is the interval of the
# recorded inspection (filters, frame, marking legible), counted from the last one. Common practice,
# no source: six months; local rules may ask for another.
EYEWEAR_INSPECTION_MONTHS = env_int("BEAMKEEPER_EYEWEAR_INSPECTION_MONTHS", 6, minimum=1)

LANGUAGE_CODE = "en"
TIME_ZONE = env_time_zone("TIME_ZONE", "UTC")
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATIC_ROOT = Path(env_str("STATIC_ROOT", str(BASE_DIR / "staticfiles")))
MEDIA_URL = "media/"
MEDIA_ROOT = Path(env_str("MEDIA_ROOT", str(BASE_DIR / "media")))
# Sheets uploaded to the import page, kept between their dry run and its confirmation
# (registry.services.import_uploads); every process serving the pages must see the same folder.
IMPORT_UPLOAD_DIR = Path(env_str("IMPORT_UPLOAD_DIR", str(Path(tempfile.gettempdir()) / "beamkeeper-imports")))
# Uploaded SOP documents: at most this size (registry.models.sop.validate_sop_document). They
# are served only through /api/v1/sops/{id}/document/, under the SOP's permissions; a web
# server must not serve MEDIA_ROOT itself.
SOP_DOCUMENT_MAX_BYTES = env_int("BEAMKEEPER_SOP_MAX_MB", 20, minimum=1) * 2**20

# The register's own sign-in page, for every role (the admin keeps refusing researchers and users).
LOGIN_URL = "login"
LOGIN_REDIRECT_URL = "home"
LOGOUT_REDIRECT_URL = "login"

# History is read, never restored: a revert would write an old version over a record past
# every check of the services (registry.admin.RegisterAdmin refuses the POST as well).
SIMPLE_HISTORY_REVERT_DISABLED = True

# Mail: SMTP when EMAIL_HOST is set, otherwise printed to the console. A production
# deployment without EMAIL_HOST gets a system-check warning (registry.checks).
EMAIL_HOST = env_str("EMAIL_HOST", "")
EMAIL_PORT = env_int("EMAIL_PORT", 587, minimum=1)
EMAIL_HOST_USER = env_str("EMAIL_HOST_USER", "")
EMAIL_HOST_PASSWORD = env_secret("EMAIL_HOST_PASSWORD") or ""
EMAIL_USE_TLS = env_bool("EMAIL_USE_TLS", default=True)
EMAIL_BACKEND = (
    "django.core.mail.backends.smtp.EmailBackend" if EMAIL_HOST
    else "django.core.mail.backends.console.EmailBackend"
)
DEFAULT_FROM_EMAIL = env_str("DEFAULT_FROM_EMAIL", "beamkeeper@localhost")
SERVER_EMAIL = DEFAULT_FROM_EMAIL

if PRODUCTION:
    SECURE_SSL_REDIRECT = env_bool("SECURE_SSL_REDIRECT", default=True)
    SESSION_COOKIE_SECURE = True
    CSRF_COOKIE_SECURE = True
    SECURE_HSTS_SECONDS = env_int("SECURE_HSTS_SECONDS", 31_536_000, minimum=0)
    SECURE_HSTS_INCLUDE_SUBDOMAINS = env_bool("SECURE_HSTS_INCLUDE_SUBDOMAINS", default=True)
    SECURE_HSTS_PRELOAD = env_bool("SECURE_HSTS_PRELOAD", default=True)
    if env_bool("SECURE_PROXY_SSL_HEADER", default=False):
        # Only behind a proxy that sets this header itself and strips it from clients.
        SECURE_PROXY_SSL_HEADER = ("HTTP_X_FORWARDED_PROTO", "https")

# --- REST API (registry.api) -------------------------------------------------------------
REST_FRAMEWORK = {
    # Token first: an anonymous API call then answers 401 with WWW-Authenticate, not 403.
    "DEFAULT_AUTHENTICATION_CLASSES": [
        "rest_framework.authentication.TokenAuthentication",
        "rest_framework.authentication.SessionAuthentication",
    ],
    # Register viewsets apply their role policy (registry.permissions); this is the floor.
    "DEFAULT_PERMISSION_CLASSES": ["rest_framework.permissions.IsAuthenticated"],
    # Bodies and query values are bounded before anything parses them (registry.api.parsers,
    # registry.filters).
    "DEFAULT_PARSER_CLASSES": [
        "registry.api.parsers.BoundedJSONParser",
        "rest_framework.parsers.FormParser",
        "rest_framework.parsers.MultiPartParser",
    ],
    "DEFAULT_FILTER_BACKENDS": [
        "registry.filters.BoundedFilterBackend",
        "rest_framework.filters.OrderingFilter",
        "registry.filters.BoundedSearchFilter",
    ],
    "DEFAULT_PAGINATION_CLASS": "registry.api.pagination.BoundedPagination",
    "DEFAULT_SCHEMA_CLASS": "registry.schema.RegisterAutoSchema",
    "EXCEPTION_HANDLER": "registry.api.errors.api_exception_handler",
    # How many proxies of this deployment's own stand in front of it; the address a throttle
    # counts is then read that far back in X-Forwarded-For. 0: the header is ignored, since
    # any client can send it.
    "NUM_PROXIES": env_int("BEAMKEEPER_NUM_PROXIES", 0, minimum=0),
    "DEFAULT_THROTTLE_RATES": {
        "token-sign-in": env_str("API_SIGN_IN_RATE", "10/min"),
        "token-sign-in-username": env_str("API_SIGN_IN_USERNAME_RATE", "5/min"),
    },
    "TEST_REQUEST_DEFAULT_FORMAT": "json",
}

SPECTACULAR_SETTINGS = {
    "TITLE": "Beamkeeper API",
    "DESCRIPTION": (
        "The laser register over HTTP. Physical fields take a number in the SI unit named in "
        "their description (and in x-unit) or a string with units such as '5 mW' or '532 nm'; "
        "responses give the SI number and a '<field>_text' string. " + CAUTION
    ),
    "VERSION": "1",
    # Requests accept strings with units where responses give numbers, so the two differ.
    "COMPONENT_SPLIT_REQUEST": True,
    "SERVE_INCLUDE_SCHEMA": False,
    "SWAGGER_UI_DIST": "SIDECAR",
    "SWAGGER_UI_FAVICON_HREF": "SIDECAR",
    "REDOC_DIST": "SIDECAR",
    "ENUM_NAME_OVERRIDES": {
        "LaserClassEnum": "registry.models.LaserClass",
        "LaserStatusEnum": "registry.models.LaserStatus",
        "DiameterDefinitionEnum": "registry.models.DiameterDefinition",
        "AuthorizationStatusEnum": "registry.models.AuthorizationStatus",
        "SOPStatusEnum": "registry.models.SOPStatus",
        "AuditStatusEnum": "registry.models.AuditStatus",
        "FindingStatusEnum": "registry.models.FindingStatus",
        "IncidentStatusEnum": "registry.models.IncidentStatus",
    },
    "POSTPROCESSING_HOOKS": [
        "drf_spectacular.hooks.postprocess_schema_enums",
        "registry.schema.add_error_responses",
    ],
}

# --- Serving (issue 13): health check -----------------------------------------------------
# A load balancer asks app servers for /healthz over plain HTTP on the private network; the
# redirect to HTTPS (SECURE_SSL_REDIRECT) would answer it 301 instead of the check's own status.
SECURE_REDIRECT_EXEMPT = [r"^healthz$"]

# --- Serving (issue 13): logging ----------------------------------------------------------
# One line per request (registry.middleware.RequestLogMiddleware, first of all middleware so it
# sees every answer) and per service action (registry.services._logging), each with the request
# id that also goes back in X-Request-ID. Everything goes to stderr, where gunicorn, systemd or
# the container runtime collects it.
MIDDLEWARE = ["registry.middleware.RequestLogMiddleware", *MIDDLEWARE]
LOG_LEVEL = env_choice("LOG_LEVEL", "INFO", ("DEBUG", "INFO", "WARNING", "ERROR"))
LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "formatters": {
        "line": {
            "()": "logging.Formatter",
            "fmt": "%(asctime)s %(levelname)s %(name)s [%(request_id)s] %(message)s",
            # Lines written before the app is ready have no request id (registry.log_context).
            "defaults": {"request_id": "-"},
        },
    },
    "handlers": {"stderr": {"class": "logging.StreamHandler", "formatter": "line"}},
    "root": {"handlers": ["stderr"], "level": "WARNING"},
    "loggers": {
        "registry": {"level": LOG_LEVEL},
        # Through the root handler only: Django's default sends it to the console with DEBUG on as well.
        "django": {"handlers": [], "level": "INFO"},
    },
}

# --- Serving (issue 13): the shared cache ---------------------------------------------------
# Throttles (the API's sign-in limits) and the sign-in lockout count in Django's default cache.
# Every gunicorn worker and every server must see the same counters, or guessing is multiplied
# by their number: production uses the database cache (`manage.py createcachetable`) unless
# CACHE_URL names a Redis server; development and tests keep one in each process's memory.
from registry.env import env_cache  # noqa: E402 - imported here to keep this block apart for merging

CACHES = {"default": env_cache("CACHE_URL", shared_by_default=PRODUCTION)}

# --- Serving (issue 13): static files and uploaded documents -------------------------------
# WhiteNoise serves what `manage.py collectstatic` gathered into STATIC_ROOT (the stylesheet,
# the admin's files, the offline API docs of drf-spectacular-sidecar) from every app server,
# with DEBUG off, so no separate file server is needed. Production gives them content-hashed
# names, cached for a year, and gzip and Brotli copies; development and tests keep the plain
# names and need no collectstatic.
MIDDLEWARE.insert(MIDDLEWARE.index("django.middleware.security.SecurityMiddleware") + 1,
                  "whitenoise.middleware.WhiteNoiseMiddleware")
# Uploaded SOP documents: files under MEDIA_ROOT by default; MEDIA_STORAGE=s3 keeps them in an
# S3-compatible bucket through django-storages (installed separately; see the README).
MEDIA_STORAGE = env_choice("MEDIA_STORAGE", "files", ("files", "s3"))
STORAGES = {
    "default": (
        {"BACKEND": "django.core.files.storage.FileSystemStorage"} if MEDIA_STORAGE == "files" else {
            "BACKEND": "storages.backends.s3.S3Storage",
            "OPTIONS": {
                "bucket_name": env_str("MEDIA_S3_BUCKET"),
                "endpoint_url": env_str("MEDIA_S3_ENDPOINT_URL", "") or None,
                "region_name": env_str("MEDIA_S3_REGION", "") or None,
                # Private objects, reached through links signed for an hour.
                "default_acl": "private",
                "querystring_auth": True,
                "querystring_expire": 3600,
                "file_overwrite": False,
            },
        }
    ),
    "staticfiles": {"BACKEND": "whitenoise.storage.CompressedManifestStaticFilesStorage" if PRODUCTION
                    else "django.contrib.staticfiles.storage.StaticFilesStorage"},
}
# collectstatic compresses every file it keeps: only the hashed names are kept, and the API docs'
# source maps (megabytes, fetched only by a browser's developer tools) are not compressed.
WHITENOISE_KEEP_ONLY_HASHED_FILES = PRODUCTION
# Development and tests have no collected files: WhiteNoise looks for them per request instead of
# listing STATIC_ROOT once at start-up (and warning that it is missing).
WHITENOISE_AUTOREFRESH = not PRODUCTION
WHITENOISE_SKIP_COMPRESS_EXTENSIONS = ["map", "jpg", "jpeg", "png", "gif", "webp", "zip", "gz", "tgz", "bz2", "tbz",
                                       "xz", "br", "woff", "woff2"]
