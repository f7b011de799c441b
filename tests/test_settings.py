"""Settings come from the environment; a bad value stops the app naming the variable."""

from __future__ import annotations

import os
import re
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
# Set by the test run itself (or by the browser tests), never in production.
TEST_ONLY = {"FLEETFUEL_TESTING", "DEBUG", "DJANGO_ALLOW_ASYNC_UNSAFE"}


def production_like_env() -> dict[str, str]:
    return {k: v for k, v in os.environ.items() if k not in TEST_ONLY}


def settings_error(**env: str) -> str:
    clean = production_like_env()
    result = subprocess.run(
        [sys.executable, "-c", "import fleetfuel.settings"],
        cwd=ROOT,
        env={**clean, **env},
        capture_output=True,
        text=True,
        timeout=60,
    )
    return result.stderr if result.returncode else ""


@pytest.mark.parametrize(
    "env,name,hint",
    [
        ({"DEBUG": "true", "PLANNING_BATCH_SIZE": "lots"}, "PLANNING_BATCH_SIZE", "whole number"),
        ({"DEBUG": "true", "PLANNING_BATCH_SIZE": "0"}, "PLANNING_BATCH_SIZE", "1 or more"),
        ({"DEBUG": "maybe"}, "DEBUG", "boolean"),
        ({"DEBUG": "false"}, "SECRET_KEY", "required"),
        ({"DEBUG": "false", "SECRET_KEY": "short"}, "SECRET_KEY", "50 characters"),
        ({"DEBUG": "false", "SECRET_KEY": "s" * 60}, "LEDGER_SIGNING_KEY", "required"),
        (
            {"DEBUG": "false", "SECRET_KEY": "s" * 60, "LEDGER_SIGNING_KEY": "s" * 60},
            "LEDGER_SIGNING_KEY",
            "other than SECRET_KEY",
        ),
        (
            {
                "DEBUG": "false",
                "SECRET_KEY": "s" * 60,
                "LEDGER_SIGNING_KEY": "l" * 60,
                "LEDGER_SIGNING_KEY_FALLBACKS": "old",
            },
            "LEDGER_SIGNING_KEY_FALLBACKS",
            "50 characters",
        ),
        ({"DEBUG": "true", "DATABASE_URL": "nosuchdb://x"}, "DATABASE_URL", "not usable"),
        ({"DEBUG": "true", "DATABASE_URL": "mysql://u@h/db"}, "DATABASE_URL", "PostgreSQL"),
        ({"DEBUG": "true", "DB_CONN_MAX_AGE": "-1"}, "DB_CONN_MAX_AGE", "0 or more"),
        ({"DEBUG": "true", "LOG_LEVEL": "LOUD"}, "LOG_LEVEL", "DEBUG, INFO, WARNING, ERROR"),
        ({"DEBUG": "true", "FLEETFUEL_TESTING": "sometimes"}, "FLEETFUEL_TESTING", "boolean"),
        ({"DEBUG": "true", "CELERY_TASK_ALWAYS_EAGER": "2"}, "CELERY_TASK_ALWAYS_EAGER", "boolean"),
        ({"DEBUG": "true", "CELERY_BROKER_URL": "localhost:6379"}, "CELERY_BROKER_URL", "redis://"),
        (
            {"DEBUG": "true", "CELERY_RESULT_BACKEND": "redis://host:port/1"},
            "CELERY_RESULT_BACKEND",
            "redis://",
        ),
        ({"DEBUG": "true", "EMAIL_PORT": "70000"}, "EMAIL_PORT", "from 1 to 65535"),
        ({"DEBUG": "true", "EMAIL_TIMEOUT": "0"}, "EMAIL_TIMEOUT", "1 or more"),
        ({"DEBUG": "true", "EMAIL_USE_TLS": "tls"}, "EMAIL_USE_TLS", "boolean"),
        ({"DEBUG": "true", "EMAIL_HOST": "smtp.example.com:587"}, "EMAIL_HOST", "EMAIL_PORT"),
        ({"DEBUG": "true", "DEFAULT_FROM_EMAIL": "fleetfuel"}, "DEFAULT_FROM_EMAIL", "address"),
        ({"DEBUG": "true", "SITE_URL": "fleetfuel.example.com"}, "SITE_URL", "https://"),
        ({"DEBUG": "true", "ALLOWED_HOSTS": "https://ff.example.com"}, "ALLOWED_HOSTS", "host"),
        (
            {"DEBUG": "true", "CSRF_TRUSTED_ORIGINS": "ff.example.com"},
            "CSRF_TRUSTED_ORIGINS",
            "https://",
        ),
        ({"DEBUG": "true", "SECURE_SSL_REDIRECT": "2"}, "SECURE_SSL_REDIRECT", "boolean"),
        ({"DEBUG": "true", "SECURE_HSTS_SECONDS": "-1"}, "SECURE_HSTS_SECONDS", "0 or more"),
        ({"DEBUG": "true", "SECURE_HSTS_PRELOAD": "please"}, "SECURE_HSTS_PRELOAD", "boolean"),
    ],
)
def test_bad_value_names_the_variable(env: dict[str, str], name: str, hint: str) -> None:
    error = settings_error(**env)
    # The last line is the message a person reads: no logging or parsing traceback instead.
    message = error.strip().splitlines()[-1] if error else ""
    assert message.startswith("django.core.exceptions.ImproperlyConfigured"), error
    assert f"variable {name}" in message and hint in message, message


@pytest.mark.parametrize(
    "name,value",
    [
        ("LOG_LEVEL", "warning"),
        ("CELERY_BROKER_URL", "redis://127.0.0.1:6379/14"),
        ("CELERY_RESULT_BACKEND", "rediss://cache.example.com:6380/1"),
        ("DB_CONN_MAX_AGE", "0"),
        ("EMAIL_PORT", "465"),
        ("DEFAULT_FROM_EMAIL", "Depot office <office@example.com>"),
        ("SITE_URL", "https://fleetfuel.example.com/"),
        ("CSRF_TRUSTED_ORIGINS", "https://a.example.com, http://b.example.com:8080"),
    ],
)
def test_good_value_is_accepted(name: str, value: str) -> None:
    assert settings_error(DEBUG="true", **{name: value}) == ""


def test_defaults_need_nothing_but_debug() -> None:
    assert settings_error(DEBUG="true") == ""


def test_deploy_check_is_clean_with_production_variables() -> None:
    env = production_like_env()
    env.update(
        SECRET_KEY="k" * 20 + "-production-like-secret-key-0123456789-abcdef",
        LEDGER_SIGNING_KEY="l" * 20 + "-production-like-ledger-key-0123456789-abcdef",
        ALLOWED_HOSTS="fleetfuel.example.com",
        EMAIL_HOST="smtp.example.com",
    )
    result = subprocess.run(
        [sys.executable, "manage.py", "check", "--deploy", "--fail-level", "WARNING"],
        cwd=ROOT,
        env=env,
        capture_output=True,
        text=True,
        timeout=120,
    )
    assert result.returncode == 0, result.stdout + result.stderr
    assert "no issues" in result.stdout


def settings_variables() -> set[str]:
    """Every environment variable fleetfuel/settings.py reads (through its env_* helpers)."""
    source = (ROOT / "fleetfuel" / "settings.py").read_text()
    return set(re.findall(r'(?:env_\w+|url_check)\(\s*"([A-Z][A-Z0-9_]*)"', source))


def env_example() -> dict[str, str]:
    lines = (ROOT / ".env.example").read_text().splitlines()
    pairs = (line.partition("=") for line in lines if line and not line.startswith("#"))
    return {name: value for name, _, value in pairs}


def test_settings_variables_are_found() -> None:
    # The scan below finds what it should (a scan that found nothing would pass anything).
    assert {"LOG_LEVEL", "DB_CONN_MAX_AGE", "CELERY_RESULT_BACKEND", "FLEETFUEL_TESTING"} <= (
        settings_variables()
    )


def test_readme_table_and_env_example_name_every_variable() -> None:
    readme = (ROOT / "README.md").read_text()
    table = {
        m
        for line in readme.splitlines()
        if line.startswith("| `")
        for m in re.findall(r"`([A-Z][A-Z0-9_]*)`", line.split("|")[1])
    }
    example = (ROOT / ".env.example").read_text()
    for name in sorted(settings_variables() | {"POSTGRES_PASSWORD"}):
        assert name in table, f"README's variable table lacks {name}"
        assert re.search(rf"\b{name}\b", example), f".env.example lacks {name}"


def test_compose_passes_every_env_example_variable_and_requires_the_password() -> None:
    compose = (ROOT / "docker-compose.yml").read_text()
    for name in env_example():
        assert "${" + name + ":" in compose, f"docker-compose.yml does not pass {name}"
    # No fixed fallback password: compose stops when POSTGRES_PASSWORD is unset.
    assert "${POSTGRES_PASSWORD:-" not in compose
    assert compose.count("${POSTGRES_PASSWORD:?") == 2


def test_env_example_values_are_accepted() -> None:
    values = {k: v for k, v in env_example().items() if k != "POSTGRES_PASSWORD"}
    values["SECRET_KEY"] = "k" * 20 + "-production-like-secret-key-0123456789-abcdef"
    values["LEDGER_SIGNING_KEY"] = "l" * 20 + "-production-like-ledger-key-0123456789-abcdef"
    assert settings_error(**values) == ""
