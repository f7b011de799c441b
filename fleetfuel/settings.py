"""fleetfuel settings: one file, read from the environment.

With nothing set, the app runs on the embedded defaults: SQLite under var/,
Celery tasks executed in-process, email printed to the console. Production
sets the variables listed in the README (DATABASE_URL, CELERY_BROKER_URL,
EMAIL_HOST, SECRET_KEY, ALLOWED_HOSTS, ...). A bad value fails at start with
a message that names the variable.
"""

from __future__ import annotations

import copy
import os
from datetime import timedelta
from email.utils import parseaddr
from pathlib import Path
from typing import Any
from urllib.parse import urlsplit

import dj_database_url
from django.core.exceptions import ImproperlyConfigured
from django.utils.csp import CSP

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


def env_int(name: str, default: int, *, low: int | None = None, high: int | None = None) -> int:
    """A whole number from ``name``, within ``low``..``high`` when given."""
    value = os.environ.get(name)
    if value is None or value == "":
        return default
    try:
        number = int(value)
    except ValueError:
        raise ImproperlyConfigured(
            f"Environment variable {name}={value!r} is not a whole number."
        ) from None
    if (low is not None and number < low) or (high is not None and number > high):
        bounds = f"{low} or more" if high is None else f"from {low} to {high}"
        raise ImproperlyConfigured(f"Environment variable {name}={value!r} must be {bounds}.")
    return number


def env_choice(name: str, default: str, choices: tuple[str, ...]) -> str:
    """One of ``choices`` (any case), returned as written in ``choices``."""
    value = env_str(name, default)
    by_upper = {choice.upper(): choice for choice in choices}
    if value.strip().upper() not in by_upper:
        raise ImproperlyConfigured(
            f"Environment variable {name}={value!r} is not one of {', '.join(choices)}."
        )
    return by_upper[value.strip().upper()]


def url_check(name: str, value: str, *, schemes: tuple[str, ...], example: str) -> str:
    """``value`` if it is a URL with one of ``schemes``, a host and a port that is a number."""
    parts = urlsplit(value)
    try:
        port_ok = parts.port is None or parts.port > 0
    except ValueError:
        port_ok = False
    if parts.scheme not in schemes or not parts.hostname or not port_ok:
        raise ImproperlyConfigured(
            f"Environment variable {name}={value!r} is not a URL starting "
            f"{' or '.join(f'{scheme}://' for scheme in schemes)} with a host, like {example}."
        )
    return value


def env_url(name: str, default: str, *, schemes: tuple[str, ...], example: str) -> str:
    value = env_str(name, default)
    return url_check(name, value, schemes=schemes, example=example) if value else value


def env_list(name: str, default: list[str]) -> list[str]:
    value = os.environ.get(name)
    if value is None or value.strip() == "":
        return default
    return [item.strip() for item in value.split(",") if item.strip()]


def env_hosts(name: str, default: list[str]) -> list[str]:
    """Host names only: a scheme or a path (``https://host/``) is a common slip."""
    hosts = env_list(name, default)
    for host in hosts:
        if "/" in host:
            raise ImproperlyConfigured(
                f"Environment variable {name} holds {host!r}: give host names only "
                "(fleetfuel.example.com), without scheme or path."
            )
    return hosts


WEB = ("https", "http")
REDIS = ("redis", "rediss")

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

# The service history's checkpoints are signed with a key of their own, so rotating SECRET_KEY
# breaks nothing; older ledger keys stay valid for verification (README, "The service history").
_LEDGER_DEV_KEY = "ledger-dev-only-" + SECRET_KEY
LEDGER_SIGNING_KEY = env_str("LEDGER_SIGNING_KEY", _LEDGER_DEV_KEY if DEBUG or TESTING else None)
LEDGER_SIGNING_KEY_FALLBACKS = env_list("LEDGER_SIGNING_KEY_FALLBACKS", [])
for _name, _key in [("LEDGER_SIGNING_KEY", LEDGER_SIGNING_KEY)] + [
    ("LEDGER_SIGNING_KEY_FALLBACKS", key) for key in LEDGER_SIGNING_KEY_FALLBACKS
]:
    if not (DEBUG or TESTING) and (len(_key) < 50 or _key in (SECRET_KEY, _LEDGER_DEV_KEY)):
        raise ImproperlyConfigured(
            f"Environment variable {_name} must hold random strings of at least 50 characters, "
            "other than SECRET_KEY, when DEBUG is off."
        )

ALLOWED_HOSTS = env_hosts("ALLOWED_HOSTS", ["localhost", "127.0.0.1", "[::1]"] if DEBUG else [])
CSRF_TRUSTED_ORIGINS = [
    url_check("CSRF_TRUSTED_ORIGINS", origin, schemes=WEB, example="https://fleetfuel.example.com")
    for origin in env_list("CSRF_TRUSTED_ORIGINS", [])
]

INSTALLED_APPS = [
    "django.contrib.admin",
    "django.contrib.auth",
    "django.contrib.contenttypes",
    "django.contrib.sessions",
    "django.contrib.messages",
    "django.contrib.staticfiles",
    "django.contrib.humanize",
    "django_htmx",
    "axes",
    # fleetfuel's apps in the order they may import each other (lower first), then the
    # composing apps (DEVELOPERS.md, "Rules of the house").
    "fleetfuel.accounts",
    "fleetfuel.fleet",
    "fleetfuel.ledger",
    "fleetfuel.planning",
    "fleetfuel.workorders",
    "fleetfuel.pages",
    "fleetfuel.demo",
    "fleetfuel.intake",
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
    "django.middleware.csp.ContentSecurityPolicyMiddleware",
    "django_htmx.middleware.HtmxMiddleware",
    # Session lifetime and Cache-Control: no-store for signed-in people (accounts/middleware.py)
    "fleetfuel.accounts.middleware.SignedInMiddleware",
    # Last: it answers a locked-out login (django-axes).
    "axes.middleware.AxesMiddleware",
]

ROOT_URLCONF = "fleetfuel.urls"
WSGI_APPLICATION = "fleetfuel.wsgi.application"
ASGI_APPLICATION = "fleetfuel.asgi.application"
FORM_RENDERER = "fleetfuel.renderers.FormRenderer"  # common widgets without templates

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
                "django.template.context_processors.csp",
                "fleetfuel.accounts.context.role",
                "fleetfuel.accounts.context.depot",
            ],
            "builtins": ["fleetfuel.planning.templatetags.fleetfuel_tags"],
        },
    }
]

# Database: DATABASE_URL (postgres://user@host:5432/name) or the SQLite default under var/;
# DATABASE_REPLICA_URL (optional): a read replica for exports and history reads only
# (fleetfuel/dbrouters.py); tests run it as a mirror of the default database.
_default_sqlite = f"sqlite:///{BASE_DIR / 'var' / 'fleetfuel.sqlite3'}"
SUPPORTED_DATABASES = ("django.db.backends.postgresql", "django.db.backends.sqlite3")
_conn_max_age = env_int("DB_CONN_MAX_AGE", 60, low=0)


def env_database(name: str, default: str) -> dict[str, Any]:
    try:
        db = dj_database_url.parse(env_str(name, default), conn_max_age=_conn_max_age)
    except ValueError as exc:
        raise ImproperlyConfigured(f"Environment variable {name} is not usable: {exc}") from exc
    if db["ENGINE"] not in SUPPORTED_DATABASES:
        raise ImproperlyConfigured(
            f"Environment variable {name} must name PostgreSQL (postgres://user@host:5432/name) "
            "or SQLite (sqlite:///path)."
        )
    return dict(db)


DATABASES = {"default": env_database("DATABASE_URL", _default_sqlite)}
DATABASE_REPLICA_READS = bool(env_str("DATABASE_REPLICA_URL", ""))
if DATABASE_REPLICA_READS or TESTING:
    _replica = (
        env_database("DATABASE_REPLICA_URL", "")
        if DATABASE_REPLICA_READS
        else copy.deepcopy(DATABASES["default"])  # tests without one: the default, parsed once
    )
    DATABASES["replica"] = {**_replica, "TEST": {"MIRROR": "default"}}
DATABASE_ROUTERS = ["fleetfuel.dbrouters.PrimaryRouter"]
if DATABASES["default"]["ENGINE"] == "django.db.backends.sqlite3":
    (BASE_DIR / "var").mkdir(exist_ok=True)
    DATABASES["default"]["CONN_MAX_AGE"] = 0
    DATABASES["default"].setdefault("OPTIONS", {}).update(
        {"transaction_mode": "IMMEDIATE", "init_command": "PRAGMA journal_mode=WAL;"}
    )
    # A file (not memory) so a real Celery worker process can share it; one per test process.
    DATABASES["default"]["TEST"] = {"NAME": str(BASE_DIR / "var" / f"test-{os.getpid()}.sqlite3")}
for _db in DATABASES.values():
    if _db["ENGINE"] == "django.db.backends.postgresql":
        # No JIT compilation: the queries are short, and compiling the engine's batch reads
        # took longer than running them (EXPLAIN ANALYZE, README "Scale"). In tests, the
        # ledger's tables refuse TRUNCATE unless the session says so; the test runner empties
        # tables with TRUNCATE between transactional tests (fleetfuel/ledger/migrations/0005).
        _db.setdefault("OPTIONS", {})["options"] = "-c jit=off" + (
            " -c fleetfuel.ledger_truncate=allow" if TESTING else ""
        )
DEFAULT_AUTO_FIELD = "django.db.models.BigAutoField"

AUTH_PASSWORD_VALIDATORS = [
    {"NAME": "django.contrib.auth.password_validation.UserAttributeSimilarityValidator"},
    {
        "NAME": "django.contrib.auth.password_validation.MinimumLengthValidator",
        "OPTIONS": {"min_length": 12},
    },
    {"NAME": "django.contrib.auth.password_validation.CommonPasswordValidator"},
    {"NAME": "django.contrib.auth.password_validation.NumericPasswordValidator"},
]
if TESTING:
    # Django's default hasher is deliberately slow (about 1.7 s a user here); tests make many.
    PASSWORD_HASHERS = ["django.contrib.auth.hashers.MD5PasswordHasher"]
LOGIN_URL = "accounts:login"
LOGIN_REDIRECT_URL = "accounts:home"
LOGOUT_REDIRECT_URL = "accounts:login"

# Login throttling (django-axes): after LOGIN_FAILURE_LIMIT wrong passwords for one username,
# that username is refused, the right password too, for LOGIN_LOCKOUT_MINUTES (0: until a
# manager unlocks it). Counted per username, not per address: a shop's tablets share one.
AUTHENTICATION_BACKENDS = [
    "axes.backends.AxesStandaloneBackend",
    "django.contrib.auth.backends.ModelBackend",
]
AXES_FAILURE_LIMIT = env_int("LOGIN_FAILURE_LIMIT", 5, low=1, high=100)
_lockout_minutes = env_int("LOGIN_LOCKOUT_MINUTES", 30, low=0, high=7 * 24 * 60)
AXES_COOLOFF_TIME = timedelta(minutes=_lockout_minutes) if _lockout_minutes else None
AXES_LOCKOUT_PARAMETERS = ["username"]
AXES_RESET_ON_SUCCESS = True
AXES_LOCKOUT_CALLABLE = "fleetfuel.accounts.views.login_locked"
AXES_SENSITIVE_PARAMETERS = ["password"]
AXES_ENABLE_ADMIN = False  # locks are lifted on /unlock/ (site-limited), not in the admin
AXES_VERBOSE = False

# Sessions on shared tablets: signed out after SESSION_IDLE_MINUTES without a request, and
# SESSION_MAX_HOURS after signing in whatever happens (accounts/middleware.py).
SESSION_IDLE_MINUTES = env_int("SESSION_IDLE_MINUTES", 30, low=1, high=24 * 60)
SESSION_MAX_HOURS = env_int("SESSION_MAX_HOURS", 12, low=1, high=14 * 24)
SESSION_COOKIE_AGE = SESSION_MAX_HOURS * 3600
SESSION_EXPIRE_AT_BROWSER_CLOSE = True
SESSION_COOKIE_HTTPONLY = True

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
SECURE_HSTS_SECONDS = env_int("SECURE_HSTS_SECONDS", 0 if DEBUG else 31_536_000, low=0)
SECURE_HSTS_INCLUDE_SUBDOMAINS = not DEBUG
SECURE_HSTS_PRELOAD = env_bool("SECURE_HSTS_PRELOAD", False)
SECURE_REDIRECT_EXEMPT = [r"^healthz$"]  # the container health check: plain http inside
SECURE_PROXY_SSL_HEADER = ("HTTP_X_FORWARDED_PROTO", "https")
SECURE_CONTENT_TYPE_NOSNIFF = True
X_FRAME_OPTIONS = "DENY"
# Content Security Policy (Django's own middleware): scripts and styles from this site, or
# inline ones carrying the response's nonce; no plugins, no framing, forms post here only.
SECURE_CSP = {
    "default-src": [CSP.SELF],
    "script-src": [CSP.SELF, CSP.NONCE],
    "style-src": [CSP.SELF, CSP.NONCE],
    "img-src": [CSP.SELF, "data:"],
    "object-src": [CSP.NONE],
    "base-uri": [CSP.SELF],
    "form-action": [CSP.SELF],
    "frame-ancestors": [CSP.NONE],
}
SILENCED_SYSTEM_CHECKS = ["security.W021"] if not SECURE_HSTS_PRELOAD else []
# axes.W006 (lock not keyed on the address): ours is keyed on the username, which a client cannot
# rotate; keying on the address would lock out every tablet of a shop behind one address.
SILENCED_SYSTEM_CHECKS += ["axes.W006"]

# Email: the console by default; SMTP when EMAIL_HOST is set (Django 6.1 MAILERS).
# Every EMAIL_* variable is checked even while EMAIL_HOST is unset, so a slip shows at once.
EMAIL_HOST_ENV = env_str("EMAIL_HOST", "")
if "/" in EMAIL_HOST_ENV or ":" in EMAIL_HOST_ENV:
    raise ImproperlyConfigured(
        f"Environment variable EMAIL_HOST={EMAIL_HOST_ENV!r} must be a host name only "
        "(smtp.example.com); the port goes in EMAIL_PORT."
    )
_smtp = {
    "host": EMAIL_HOST_ENV,
    "port": env_int("EMAIL_PORT", 587, low=1, high=65535),
    "username": env_str("EMAIL_HOST_USER", ""),
    "password": env_str("EMAIL_HOST_PASSWORD", ""),
    "use_tls": env_bool("EMAIL_USE_TLS", True),
    "timeout": env_int("EMAIL_TIMEOUT", 20, low=1),
}
MAILERS = {
    "default": (
        {"BACKEND": "django.core.mail.backends.smtp.EmailBackend", "OPTIONS": _smtp}
        if EMAIL_HOST_ENV
        else {"BACKEND": "django.core.mail.backends.console.EmailBackend"}
    )
}
DEFAULT_FROM_EMAIL = env_str("DEFAULT_FROM_EMAIL", "fleetfuel <fleetfuel@localhost>")
if "@" not in parseaddr(DEFAULT_FROM_EMAIL)[1]:
    raise ImproperlyConfigured(
        f"Environment variable DEFAULT_FROM_EMAIL={DEFAULT_FROM_EMAIL!r} has no email address "
        "(use name <address@example.com> or address@example.com)."
    )
SERVER_EMAIL = DEFAULT_FROM_EMAIL
# Absolute base for links in emails (the due list), e.g. https://fleetfuel.example.com
SITE_URL = env_url(
    "SITE_URL", "http://127.0.0.1:8000", schemes=WEB, example="https://fleetfuel.example.com"
).rstrip("/")

# Celery: Redis in production; with no broker, tasks run in-process (eager).
CELERY_BROKER_URL = env_url("CELERY_BROKER_URL", "", schemes=REDIS, example="redis://host:6379/0")
# Tests run tasks in-process too, except the ones that start a real worker (they switch it off).
CELERY_TASK_ALWAYS_EAGER = env_bool("CELERY_TASK_ALWAYS_EAGER", not CELERY_BROKER_URL or TESTING)
CELERY_TASK_EAGER_PROPAGATES = True
CELERY_RESULT_BACKEND = (
    env_url(
        "CELERY_RESULT_BACKEND", CELERY_BROKER_URL, schemes=REDIS, example="redis://host:6379/1"
    )
    or None
)
CELERY_TASK_SERIALIZER = "json"
CELERY_ACCEPT_CONTENT = ["json"]
CELERY_TASK_ACKS_LATE = True
CELERY_WORKER_PREFETCH_MULTIPLIER = 1
CELERY_TASK_TIME_LIMIT = 300
CELERY_TASK_SOFT_TIME_LIMIT = 240
# Retries and countdowns stay well under this, so Redis never re-delivers a task twice.
CELERY_BROKER_TRANSPORT_OPTIONS = {"visibility_timeout": 3600}
CELERY_TIMEZONE = "UTC"
# Publishing from a request fails fast when the broker is down: the write has committed, the
# units are marked stale and the sweep catches up, so the request must not wait ~20 s for
# Celery's default reconnection attempts (the result store's are 20 of 1 s each).
_PUBLISH_RETRY = {"max_retries": 1, "interval_start": 0, "interval_step": 0.2, "interval_max": 0.2}
CELERY_BROKER_CONNECTION_TIMEOUT = 2
CELERY_REDIS_SOCKET_CONNECT_TIMEOUT = 2
CELERY_TASK_PUBLISH_RETRY_POLICY = _PUBLISH_RETRY
CELERY_RESULT_BACKEND_TRANSPORT_OPTIONS = {"retry_policy": _PUBLISH_RETRY}
# Queues (task routes) and the beat schedule: fleetfuel/celery.py.

LOG_LEVEL = env_choice("LOG_LEVEL", "INFO", ("DEBUG", "INFO", "WARNING", "ERROR", "CRITICAL"))
LOGGING = {
    "version": 1,
    "disable_existing_loggers": False,
    "handlers": {"console": {"class": "logging.StreamHandler"}},
    "root": {"handlers": ["console"], "level": LOG_LEVEL},
}

# Planning engine
PLANNING_BATCH_SIZE = env_int("PLANNING_BATCH_SIZE", 200, low=1)
# A source sample is out of range when a size channel is this many ISO 4406 scale numbers above
# the plans' reference (or water is over EN 590's 200 mg/kg); it stands for so many days.
SOURCE_SAMPLE_MARGIN_SCALE_NUMBERS = env_int("SOURCE_SAMPLE_MARGIN_SCALE_NUMBERS", 2, low=0)
SOURCE_SAMPLE_MAX_AGE_DAYS = env_int("SOURCE_SAMPLE_MAX_AGE_DAYS", 90, low=1)

# Cache: Redis in production (the feed's per-token request counts are shared by every web
# worker there); without CACHE_URL, each process's own memory.
CACHE_URL = env_url("CACHE_URL", "", schemes=REDIS, example="redis://host:6379/2")
CACHES = {
    "default": (
        {"BACKEND": "django.core.cache.backends.redis.RedisCache", "LOCATION": CACHE_URL}
        if CACHE_URL
        else {"BACKEND": "django.core.cache.backends.locmem.LocMemCache"}
    )
}
# The telematics feed: requests a token may make per window of this many seconds.
FEED_RATE_LIMIT = 60
FEED_RATE_WINDOW_SECONDS = 60
