"""fleetfuel settings: one file, read from the environment.

With nothing set, the app runs on the embedded defaults: SQLite under var/,
Celery tasks executed in-process, email printed to the console. Production
sets the variables listed in the README (DATABASE_URL, CELERY_BROKER_URL,
EMAIL_HOST, SECRET_KEY, ALLOWED_HOSTS, ...). A bad value fails at start with
a message that names the variable.
"""

from __future__ import annotations

import os
from pathlib import Path

import dj_database_url
from celery.schedules import crontab
from django.core.exceptions import ImproperlyConfigured

BASE_DIR = Path(__file__).resolve().parent.parent


def env_str(name: str, default: str | None = None) -> str:
    value = os.environ.get(name)
    if value is None or value == "":
        if default is None:
            raise ImproperlyConfigured(f"Environment variable {name} is required.")
        return default
    return value


def env_bool(name: str, default: bool) -> bool:
    value = os.environ.get(name)
    if value is None or value == "":
        return default
    lowered = value.strip().lower()
    if lowered in {"1", "true", "yes", "on"}:
        return True
    if lowered in {"0", "false", "no", "off"}:
        return False
    raise ImproperlyConfigured(
        f"Environment variable {name}={value!r} is not a boolean (use true/false, 1/0, yes/no)."
    )


def env_int(name: str, default: int) -> int:
    value = os.environ.get(name)
    if value is None or value == "":
        return default
    try:
        return int(value)
    except ValueError:
        raise ImproperlyConfigured(
            f"Environment variable {name}={value!r} is not a whole number."
        ) from None


def env_list(name: str, default: list[str]) -> list[str]:
    value = os.environ.get(name)
    if value is None or value.strip() == "":
        return default
    return [item.strip() for item in value.split(",") if item.strip()]


DEBUG = env_bool("DEBUG", False)
TESTING = env_bool("FLEETFUEL_TESTING", False)

_DEV_SECRET = "dev-only-not-secret-fleetfuel-change-me"
if DEBUG or TESTING:
    SECRET_KEY = env_str("SECRET_KEY", _DEV_SECRET)
else:
    SECRET_KEY = env_str("SECRET_KEY")
    if SECRET_KEY == _DEV_SECRET or len(SECRET_KEY) < 50:
        raise ImproperlyConfigured(
            "Environment variable SECRET_KEY must be a random string of at least 50 characters "
            "when DEBUG is off."
        )

ALLOWED_HOSTS = env_list("ALLOWED_HOSTS", ["localhost", "127.0.0.1", "[::1]"] if DEBUG else [])
CSRF_TRUSTED_ORIGINS = env_list("CSRF_TRUSTED_ORIGINS", [])

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "django.contrib.humanize",
    "django_htmx",
    "fleetfuel.accounts",
    "fleetfuel.fleet",
    "fleetfuel.planning",
    "fleetfuel.workorders",
    "fleetfuel.ledger",
    "fleetfuel.pages",
    "fleetfuel.demo",
]

MIDDLEWARE = [
    "django.middleware.security.SecurityMiddleware",
    "whitenoise.middleware.WhiteNoiseMiddleware",
    "django.contrib.sessions.middleware.SessionMiddleware",
    "django.middleware.common.CommonMiddleware",
    "django.middleware.csrf.CsrfViewMiddleware",
    "django.contrib.auth.middleware.AuthenticationMiddleware",
    "django.contrib.messages.middleware.MessageMiddleware",
    "django.middleware.clickjacking.XFrameOptionsMiddleware",
    "django_htmx.middleware.HtmxMiddleware",
]

ROOT_URLCONF = "fleetfuel.urls"
WSGI_APPLICATION = "fleetfuel.wsgi.application"
ASGI_APPLICATION = "fleetfuel.asgi.application"

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
                "fleetfuel.accounts.context.role",
            ],
            "builtins": ["fleetfuel.planning.templatetags.fleetfuel_tags"],
        },
    }
]

# Database: DATABASE_URL (postgres://user@host:5432/name) or the SQLite default under var/.
_default_sqlite = f"sqlite:///{BASE_DIR / 'var' / 'fleetfuel.sqlite3'}"
try:
    DATABASES = {
        "default": dj_database_url.parse(
            env_str("DATABASE_URL", _default_sqlite), conn_max_age=env_int("DB_CONN_MAX_AGE", 60)
        )
    }
except ValueError as exc:
    raise ImproperlyConfigured(f"Environment variable DATABASE_URL is not usable: {exc}") from exc
if DATABASES["default"]["ENGINE"] == "django.db.backends.sqlite3":
    (BASE_DIR / "var").mkdir(exist_ok=True)
    DATABASES["default"]["CONN_MAX_AGE"] = 0
    DATABASES["default"].setdefault("OPTIONS", {}).update(
        {"transaction_mode": "IMMEDIATE", "init_command": "PRAGMA journal_mode=WAL;"}
    )
    # A file (not memory) so a real Celery worker process can share it; one per test process.
    DATABASES["default"]["TEST"] = {"NAME": str(BASE_DIR / "var" / f"test-{os.getpid()}.sqlite3")}
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {"NAME": "django.contrib.auth.password_validation.MinimumLengthValidator"},
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]
if TESTING:
    # Django's default hasher is deliberately slow (about 1.7 s a user here); tests make many.
    PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]
LOGIN_URL = "accounts:login"
LOGIN_REDIRECT_URL = "accounts:home"
LOGOUT_REDIRECT_URL = "accounts:login"

LANGUAGE_CODE = "en"
TIME_ZONE = "UTC"
USE_I18N = True
USE_TZ = True

STATIC_URL = "static/"
STATICFILES_DIRS = [BASE_DIR / "static"]
STATIC_ROOT = BASE_DIR / "var" / "staticfiles"
STATIC_ROOT.mkdir(parents=True, exist_ok=True)
STORAGES = {
    "default": {"BACKEND": "django.core.files.storage.FileSystemStorage"},
    "staticfiles": {
        "BACKEND": (
            "django.contrib.staticfiles.storage.StaticFilesStorage"
            if DEBUG or TESTING
            else "whitenoise.storage.CompressedManifestStaticFilesStorage"
        )
    },
}

# Security: strict by default; DEBUG relaxes only what local http needs.
SECURE_SSL_REDIRECT = env_bool("SECURE_SSL_REDIRECT", not (DEBUG or TESTING))
SESSION_COOKIE_SECURE = not DEBUG
CSRF_COOKIE_SECURE = not DEBUG
SECURE_HSTS_SECONDS = env_int("SECURE_HSTS_SECONDS", 0 if DEBUG else 31_536_000)
SECURE_HSTS_INCLUDE_SUBDOMAINS = not DEBUG
SECURE_HSTS_PRELOAD = env_bool("SECURE_HSTS_PRELOAD", False)
# The container health check speaks plain http inside the network.
SECURE_REDIRECT_EXEMPT = [r"^healthz$"]
SECURE_PROXY_SSL_HEADER = ("HTTP_X_FORWARDED_PROTO", "https")
SECURE_CONTENT_TYPE_NOSNIFF = True
X_FRAME_OPTIONS = "DENY"
SILENCED_SYSTEM_CHECKS = ["security.W021"] if not SECURE_HSTS_PRELOAD else []

# Email: the console by default; SMTP when EMAIL_HOST is set (Django 6.1 MAILERS).
EMAIL_HOST_ENV = os.environ.get("EMAIL_HOST", "")
if EMAIL_HOST_ENV:
    MAILERS = {
        "default": {
            "BACKEND": "django.core.mail.backends.smtp.EmailBackend",
            "OPTIONS": {
                "host": EMAIL_HOST_ENV,
                "port": env_int("EMAIL_PORT", 587),
                "username": env_str("EMAIL_HOST_USER", ""),
                "password": env_str("EMAIL_HOST_PASSWORD", ""),
                "use_tls": env_bool("EMAIL_USE_TLS", True),
                "timeout": env_int("EMAIL_TIMEOUT", 20),
            },
        }
    }
else:
    MAILERS = {"default": {"BACKEND": "django.core.mail.backends.console.EmailBackend"}}
DEFAULT_FROM_EMAIL = env_str("DEFAULT_FROM_EMAIL", "fleetfuel <fleetfuel@localhost>")
SERVER_EMAIL = DEFAULT_FROM_EMAIL
# Absolute base for links in emails (the due list), e.g. https://fleetfuel.example.com
SITE_URL = env_str("SITE_URL", "http://127.0.0.1:8000").rstrip("/")

# Celery: Redis in production; with no broker, tasks run in-process (eager).
CELERY_BROKER_URL = os.environ.get("CELERY_BROKER_URL", "")
# Tests run tasks in-process too, except the ones that start a real worker (they switch it off).
CELERY_TASK_ALWAYS_EAGER = env_bool("CELERY_TASK_ALWAYS_EAGER", not CELERY_BROKER_URL or TESTING)
CELERY_TASK_EAGER_PROPAGATES = True
CELERY_RESULT_BACKEND = os.environ.get("CELERY_RESULT_BACKEND", CELERY_BROKER_URL or None)
CELERY_TASK_SERIALIZER = "json"
CELERY_ACCEPT_CONTENT = ["json"]
CELERY_TASK_ACKS_LATE = True
CELERY_WORKER_PREFETCH_MULTIPLIER = 1
CELERY_TASK_TIME_LIMIT = 300
CELERY_TASK_SOFT_TIME_LIMIT = 240
# Retries and countdowns stay well under this, so Redis never re-delivers a task twice.
CELERY_BROKER_TRANSPORT_OPTIONS = {"visibility_timeout": 3600}
CELERY_TIMEZONE = "UTC"
# Keep beat single (one process): every scheduled job is idempotent anyway.
CELERY_BEAT_SCHEDULE = {
    "nightly-recompute": {
        "task": "fleetfuel.planning.tasks.recompute_all",
        "schedule": crontab(hour=2, minute=15),
        "options": {"expires": 6 * 3600},
    },
    "ledger-checkpoints": {
        "task": "fleetfuel.ledger.tasks.checkpoint_heads",
        "schedule": crontab(minute="*/15"),
        "options": {"expires": 14 * 60},
    },
    "work-lists": {
        "task": "fleetfuel.planning.tasks.worklists_tick",
        "schedule": crontab(minute=0),
        "options": {"expires": 50 * 60},
    },
}

LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": env_str("LOG_LEVEL", "INFO")},
}

# Planning engine
PLANNING_BATCH_SIZE = env_int("PLANNING_BATCH_SIZE", 200)
