"""Settings come from the environment; a bad value stops the app naming the variable."""

from __future__ import annotations

import os
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
    "env,name",
    [
        ({"DEBUG": "true", "PLANNING_BATCH_SIZE": "lots"}, "PLANNING_BATCH_SIZE"),
        ({"DEBUG": "maybe"}, "DEBUG"),
        ({"DEBUG": "false"}, "SECRET_KEY"),
        ({"DEBUG": "false", "SECRET_KEY": "short"}, "SECRET_KEY"),
        ({"DEBUG": "true", "DATABASE_URL": "nosuchdb://x"}, "DATABASE_URL"),
    ],
)
def test_bad_value_names_the_variable(env: dict[str, str], name: str) -> None:
    error = settings_error(**env)
    assert "ImproperlyConfigured" in error and name in error


def test_defaults_need_nothing_but_debug() -> None:
    assert settings_error(DEBUG="true") == ""


def test_deploy_check_is_clean_with_production_variables() -> None:
    env = production_like_env()
    env.update(
        SECRET_KEY="k" * 20 + "-production-like-secret-key-0123456789-abcdef",
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
