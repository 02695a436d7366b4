"""Settings for the thermal survey app, read from the environment.

Every variable is listed in `.env.example`. Defaults are safe for a laptop: SQLite under
the project, tasks run in-process, DEBUG on. Production sets DEBUG=0, SECRET_KEY,
ALLOWED_HOSTS, DATABASE_URL and REDIS_URL.
"""

import os
from pathlib import Path

import dj_database_url
from django.core.exceptions import ImproperlyConfigured

BASE_DIR = Path(__file__).resolve().parent.parent


def env_str(name: str, default: str) -> str:
    return os.environ.get(name, default)


def env_bool(name: str, default: bool) -> bool:
    raw = os.environ.get(name)
    if raw is None or raw == "":
        return default
    value = raw.strip().lower()
    if value in {"1", "true", "yes", "on"}:
        return True
    if value in {"0", "false", "no", "off"}:
        return False
    raise ImproperlyConfigured(f"{name} must be 1 or 0 (true/false), not {raw!r}")


def env_int(name: str, default: int) -> int:
    raw = os.environ.get(name)
    if raw is None or raw == "":
        return default
    try:
        return int(raw)
    except ValueError:
        raise ImproperlyConfigured(f"{name} must be a whole number, not {raw!r}") from None


def env_list(name: str, default: str) -> list[str]:
    return [item.strip() for item in env_str(name, default).split(",") if item.strip()]


DEBUG = env_bool("DEBUG", True)
_INSECURE_KEY = "local-development-only-not-secret"
SECRET_KEY = env_str("SECRET_KEY", _INSECURE_KEY if DEBUG else "")
if not SECRET_KEY:
    raise ImproperlyConfigured("SECRET_KEY must be set when DEBUG=0")
ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", "127.0.0.1,localhost,testserver" if DEBUG else "")
CSRF_TRUSTED_ORIGINS = env_list("CSRF_TRUSTED_ORIGINS", "")
# Behind a reverse proxy: the header it writes the client's address into (for example
# X-Forwarded-For) and how many proxies of yours stand in front of the app. Unset, the
# connection's own address is used and such headers are ignored (survey/net.py).
TRUSTED_PROXY_HEADER = env_str("TRUSTED_PROXY_HEADER", "")
TRUSTED_PROXY_COUNT = env_int("TRUSTED_PROXY_COUNT", 1)
if TRUSTED_PROXY_COUNT < 1:
    raise ImproperlyConfigured("TRUSTED_PROXY_COUNT must be 1 or more")

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "survey",
    "reports",
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    # Static files before anything that touches the session or the database.
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "survey.logs.RequestLogMiddleware",
    # Before anything reads the body: refuses oversized requests and NUL characters.
    "survey.middleware.RequestLimitsMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "survey.middleware.PrivateCacheMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    "survey.middleware.ContentSecurityPolicyMiddleware",
]
# The JSON API answers a refused CSRF check with its JSON error (survey/views/errors.py).
CSRF_FAILURE_VIEW = "survey.views.errors.csrf_failure"

ROOT_URLCONF = "survey.urls"
WSGI_APPLICATION = "survey.wsgi.application"

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
                "survey.context_processors.membership",
            ],
        },
    },
]

DATABASES = {
    "default": dj_database_url.parse(
        env_str("DATABASE_URL", f"sqlite:///{BASE_DIR / 'db.sqlite3'}"),
        conn_max_age=env_int("DB_CONN_MAX_AGE", 0),
    )
}
if DATABASES["default"]["ENGINE"] == "django.db.backends.sqlite3":
    # The embedded default serves several requests at once: take the write lock when a
    # transaction starts and wait for it, instead of failing with "database is locked"
    # when a read-then-write transaction meets another writer.
    DATABASES["default"]["OPTIONS"] = {
        "transaction_mode": "IMMEDIATE",
        "timeout": 20,
        "init_command": "PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL;",
    }
elif DATABASES["default"]["ENGINE"] == "django.db.backends.postgresql":
    # A database that does not answer fails a request (and /healthz) in seconds, not minutes.
    DATABASES["default"].setdefault("OPTIONS", {})["connect_timeout"] = env_int(
        "DB_CONNECT_TIMEOUT", 5
    )
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

# Sign-in is throttled for every form that authenticates, the admin's included.
AUTHENTICATION_BACKENDS = ["survey.backends.ThrottledModelBackend"]

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]
LOGIN_URL = "login"
LOGIN_REDIRECT_URL = "survey:home"
LOGOUT_REDIRECT_URL = "login"

LANGUAGE_CODE = "en"
TIME_ZONE = env_str("TIME_ZONE", "UTC")
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATICFILES_DIRS = [BASE_DIR / "static"]
STATIC_ROOT = Path(env_str("STATIC_ROOT", str(BASE_DIR / "staticfiles")))

# Media is private: originals, arrays, previews and PDFs are served only by views that
# check access (see survey/access.py), never from a public URL.
MEDIA_ROOT = Path(env_str("MEDIA_ROOT", str(BASE_DIR / "media")))
MEDIA_URL = "/media-not-public/"
# In production the web server serves checked files through an internal redirect.
MEDIA_ACCEL_REDIRECT_PREFIX = env_str("MEDIA_ACCEL_REDIRECT_PREFIX", "")

# Media on this host's disk (MEDIA_ROOT), or in an S3-compatible bucket shared by every web
# process and worker (MEDIA_STORAGE=s3). Static files: hashed and compressed names served
# by WhiteNoise once `collectstatic` has run (the Docker image runs it at build); plain
# names from the app folders while DEBUG=1.
MEDIA_STORAGE = env_str("MEDIA_STORAGE", "local")


def media_storages(kind: str) -> dict:
    """STORAGES entries "default" (never overwrites) and "derived" (rewrites fixed names)."""
    if kind == "local":
        local = {"BACKEND": "django.core.files.storage.FileSystemStorage"}
        return {"default": local, "derived": local}
    if kind != "s3":
        raise ImproperlyConfigured(f"MEDIA_STORAGE must be local or s3, not {kind!r}")
    from botocore.config import Config

    endpoint = env_str("S3_ENDPOINT_URL", "")
    options = {
        "bucket_name": env_str("S3_BUCKET", ""),
        "endpoint_url": endpoint or None,
        "region_name": env_str("S3_REGION", "") or None,
        # Unset: boto3's own chain (instance role, ~/.aws) supplies the credentials.
        "access_key": env_str("AWS_ACCESS_KEY_ID", "") or None,
        "secret_key": env_str("AWS_SECRET_ACCESS_KEY", "") or None,
        # A bucket that does not answer fails in seconds (as /healthz says), not minutes.
        "client_config": Config(
            s3={"addressing_style": env_str("S3_ADDRESSING_STYLE", "path" if endpoint else "auto")},
            signature_version="s3v4",
            connect_timeout=env_int("S3_CONNECT_TIMEOUT", 3),
            read_timeout=60,
            retries={"max_attempts": 3, "mode": "standard"},
        ),
        # Objects stay private; downloads go through the views' access checks.
        "default_acl": None,
        "querystring_auth": True,
        "querystring_expire": 300,
        # An upload never replaces another file of the same name.
        "file_overwrite": False,
    }
    if not options["bucket_name"]:
        raise ImproperlyConfigured("S3_BUCKET must be set when MEDIA_STORAGE=s3")
    backend = "storages.backends.s3.S3Storage"
    return {
        "default": {"BACKEND": backend, "OPTIONS": options},
        # Derived files (arrays, previews) are rewritten in place: one PUT replaces them whole.
        "derived": {"BACKEND": backend, "OPTIONS": {**options, "file_overwrite": True}},
    }


STORAGES = {
    **media_storages(MEDIA_STORAGE),
    "staticfiles": {
        "BACKEND": "django.contrib.staticfiles.storage.StaticFilesStorage"
        if DEBUG
        else "survey.storage.StaticStorage"
    },
}
# Hashed static names are cached for ten years by browsers and proxies; the rest a minute.
WHITENOISE_MAX_AGE = 60

DATA_UPLOAD_MAX_MEMORY_SIZE = 5 * 1024 * 1024
FILE_UPLOAD_MAX_MEMORY_SIZE = 5 * 1024 * 1024
DATA_UPLOAD_MAX_NUMBER_FILES = 500
THERMOGRAM_MAX_UPLOAD_BYTES = env_int("THERMOGRAM_MAX_UPLOAD_BYTES", 200 * 1024 * 1024)
# Text tables (CSV, TSV) cost about 13 times their size in memory to decode: the one limit
# for them, checked at upload and at decode (a 1280 × 1024 table is about 10 MB).
THERMOGRAM_MAX_TEXT_BYTES = env_int("THERMOGRAM_MAX_TEXT_BYTES", 50 * 1024 * 1024)
# The most the files of one survey archive may hold together, uncompressed (import_survey).
ARCHIVE_MAX_BYTES = env_int("ARCHIVE_MAX_BYTES", 4 * 1024 * 1024 * 1024)
# The most one request may send (a batch of files); larger batches are sent in parts.
UPLOAD_MAX_REQUEST_BYTES = env_int("UPLOAD_MAX_REQUEST_BYTES", 1024 * 1024 * 1024)
THERMOGRAM_MAX_PIXELS = env_int("THERMOGRAM_MAX_PIXELS", 20_000_000)
# A running job refreshes its heartbeat this often, from a thread, while its process lives
# (survey/services/heartbeat.py). One silent for the stall time has lost its worker: another
# worker may take it, and the re-queue job sends it again (CELERY_BEAT_SCHEDULE below).
TASK_HEARTBEAT_SECONDS = env_int("TASK_HEARTBEAT_SECONDS", 15)
THERMOGRAM_STALLED_AFTER_SECONDS = env_int("THERMOGRAM_STALLED_AFTER_SECONDS", 120)

# Celery: with no REDIS_URL every task runs eagerly in the process (the embedded default).
REDIS_URL = env_str("REDIS_URL", "")
CELERY_BROKER_URL = REDIS_URL or "memory://"
CELERY_RESULT_BACKEND = None
CELERY_TASK_ALWAYS_EAGER = env_bool("CELERY_EAGER", not REDIS_URL)
CELERY_TASK_EAGER_PROPAGATES = False
CELERY_TASK_ACKS_LATE = True
CELERY_TASK_REJECT_ON_WORKER_LOST = True
CELERY_WORKER_PREFETCH_MULTIPLIER = 1
CELERY_WORKER_MAX_TASKS_PER_CHILD = env_int("CELERY_WORKER_MAX_TASKS_PER_CHILD", 50)
CELERY_BROKER_CONNECTION_RETRY_ON_STARTUP = True
CELERY_TASK_TIME_LIMIT = env_int("CELERY_TASK_TIME_LIMIT", 900)
# Publishing gives up quickly when Redis is down: the upload or report is kept as waiting
# for the broker and the re-queue jobs send it later (no request hangs on a dead broker).
# A task taken by a worker that died (killed, power lost) is handed out again by Redis after
# visibility_timeout seconds: the longest task (the time limit) with five minutes' margin,
# so a running task is never handed out twice. A lost job is found sooner from its
# heartbeat by the re-queue jobs (about two minutes).
CELERY_BROKER_TRANSPORT_OPTIONS = {
    "visibility_timeout": env_int("CELERY_VISIBILITY_TIMEOUT", CELERY_TASK_TIME_LIMIT + 300),
    "unacked_restore_interval": env_int("CELERY_UNACKED_RESTORE_INTERVAL", 10),
    "socket_connect_timeout": 2,
    "max_retries": 1,
    "interval_start": 0,
    "interval_step": 0.2,
}
# A report render whose worker has been silent this long may be claimed by another worker.
REPORT_STALLED_AFTER_SECONDS = env_int("REPORT_STALLED_AFTER_SECONDS", 120)
# A job whose worker was lost this many times (killed, out of memory) is failed with a
# message instead of being tried again: one file must not take the workers down for ever.
TASK_MAX_ATTEMPTS = env_int("TASK_MAX_ATTEMPTS", 3)

# Periodic jobs, run by `celery -A survey.celery beat` (one beat process per installation);
# workers find them through CELERY_IMPORTS (tasks.py modules are found on their own).
CELERY_IMPORTS = ["survey.jobs", "reports.jobs"]
# Each job is idempotent; `expires` drops runs that waited longer than their interval, so a
# broker outage does not leave a backlog of identical runs behind it.
CELERY_BEAT_SCHEDULE = {
    # Thermograms and report renders waiting for the broker or whose worker was lost.
    "requeue-thermograms": {
        "task": "survey.jobs.requeue_thermograms",
        "schedule": 60.0,
        "options": {"expires": 55},
    },
    "requeue-reports": {
        "task": "reports.jobs.requeue_reports",
        "schedule": 60.0,
        "options": {"expires": 55},
    },
    # Sign-in counters that no longer hold anyone back (survey/services/signin.py).
    "prune-signin-throttle": {
        "task": "survey.jobs.prune_signin_throttle",
        "schedule": 3600.0,
        "options": {"expires": 3000},
    },
}

# E-mail (share links sent to clients) goes through Django's mail framework: SMTP when
# EMAIL_HOST is set, else printed on the console (the embedded default).
EMAIL_HOST = env_str("EMAIL_HOST", "")
EMAIL_PORT = env_int("EMAIL_PORT", 587)
EMAIL_HOST_USER = env_str("EMAIL_HOST_USER", "")
EMAIL_HOST_PASSWORD = env_str("EMAIL_HOST_PASSWORD", "")
EMAIL_USE_TLS = env_bool("EMAIL_USE_TLS", True)
EMAIL_USE_SSL = env_bool("EMAIL_USE_SSL", False)
if EMAIL_USE_TLS and EMAIL_USE_SSL:
    raise ImproperlyConfigured(
        "Set EMAIL_USE_TLS (STARTTLS, port 587) or EMAIL_USE_SSL (465), not both"
    )
EMAIL_TIMEOUT = env_int("EMAIL_TIMEOUT", 20)
EMAIL_BACKEND = (
    "django.core.mail.backends.smtp.EmailBackend"
    if EMAIL_HOST
    else "django.core.mail.backends.console.EmailBackend"
)
DEFAULT_FROM_EMAIL = env_str("DEFAULT_FROM_EMAIL", "Heatmark <reports@localhost>")

SESSION_COOKIE_HTTPONLY = True
CSRF_COOKIE_HTTPONLY = False
X_FRAME_OPTIONS = "DENY"
SECURE_CONTENT_TYPE_NOSNIFF = True
SECURE_REFERRER_POLICY = "same-origin"
if not DEBUG:
    SESSION_COOKIE_SECURE = True
    CSRF_COOKIE_SECURE = True
    SECURE_SSL_REDIRECT = env_bool("SECURE_SSL_REDIRECT", True)
    # The container health check asks over plain HTTP from inside the container.
    SECURE_REDIRECT_EXEMPT = [r"^healthz$"]
    SECURE_HSTS_SECONDS = env_int("SECURE_HSTS_SECONDS", 31536000)
    SECURE_HSTS_INCLUDE_SUBDOMAINS = True
    SECURE_HSTS_PRELOAD = env_bool("SECURE_HSTS_PRELOAD", False)
    # Preloading is a lasting commitment an operator opts into; until then the reminder is noise.
    SILENCED_SYSTEM_CHECKS = [] if SECURE_HSTS_PRELOAD else ["security.W021"]
    SECURE_PROXY_SSL_HEADER = ("HTTP_X_FORWARDED_PROTO", "https")

# Logs: one JSON object per line in production (LOG_FORMAT=json, the default with DEBUG=0)
# carrying the request id, user id, organization id and task id; plain lines in development.
LOG_FORMAT = env_str("LOG_FORMAT", "plain" if DEBUG else "json")
if LOG_FORMAT not in {"plain", "json"}:
    raise ImproperlyConfigured(f"LOG_FORMAT must be plain or json, not {LOG_FORMAT!r}")
LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "filters": {"context": {"()": "survey.logs.ContextFilter"}},
    "formatters": {
        "json": {"()": "survey.logs.JsonFormatter"},
        "plain": {"format": "%(asctime)s %(levelname)s %(name)s %(message)s"},
    },
    "handlers": {
        "console": {
            "class": "logging.StreamHandler",
            "filters": ["context"],
            "formatter": LOG_FORMAT,
        }
    },
    "root": {"handlers": ["console"], "level": env_str("LOG_LEVEL", "WARNING")},
}
# Workers log through the same handler instead of Celery's own format.
CELERY_WORKER_HIJACK_ROOT_LOGGER = LOG_FORMAT == "plain"

# Error reports to a Sentry-protocol service (Sentry, GlitchTip…): off unless SENTRY_DSN is
# set. No personal data is sent (no cookies, no user names, no IP addresses).
SENTRY_DSN = env_str("SENTRY_DSN", "")
if SENTRY_DSN:
    import sentry_sdk

    sentry_sdk.init(
        dsn=SENTRY_DSN,
        environment=env_str("SENTRY_ENVIRONMENT", "production"),
        send_default_pii=False,
        traces_sample_rate=0.0,
    )

# Periodic jobs, run by `celery -A survey.celery beat` (one beat process per installation).
# Every job is idempotent and safe to run twice at once; each area adds its own entries.
PURGE_DELETED_AFTER_DAYS = env_int("PURGE_DELETED_AFTER_DAYS", 30)
SHARE_LINK_KEEP_DAYS = env_int("SHARE_LINK_KEEP_DAYS", 90)
PERIODIC_JOB_INTERVAL_SECONDS = env_int("PERIODIC_JOB_INTERVAL_SECONDS", 3600)
CELERY_BEAT_SCHEDULE = globals().get("CELERY_BEAT_SCHEDULE", {})
CELERY_BEAT_SCHEDULE.update(
    {
        "purge-deleted-surveys": {
            "task": "survey.tasks.purge_deleted_surveys",
            "schedule": float(PERIODIC_JOB_INTERVAL_SECONDS),
            # A run queued while no worker was up is dropped; the next one does the work.
            "options": {"expires": PERIODIC_JOB_INTERVAL_SECONDS},
        },
        "expire-share-links": {
            "task": "reports.tasks.expire_share_links",
            "schedule": float(PERIODIC_JOB_INTERVAL_SECONDS),
            "options": {"expires": PERIODIC_JOB_INTERVAL_SECONDS},
        },
    }
)
