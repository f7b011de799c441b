"""Shared fixtures. Services that tests need (PostgreSQL, Redis, Chromium) are required in CI
(CI=true): a test that needs one fails there if it is missing, and skips locally with the
reason."""

from __future__ import annotations

import os
from collections.abc import Iterator
from contextlib import contextmanager
from datetime import datetime
from typing import Any

import pytest
import time_machine
from django.db import connection, transaction
from hypothesis import settings as hypothesis_settings

from tests import factories as f

IN_CI = os.environ.get("CI", "").lower() in {"1", "true", "yes"}

# Hypothesis profiles, chosen by HYPOTHESIS_PROFILE. "quick" (make test): few examples, the
# same ones every run (derandomized), so the suite is fast and passes the same way on any
# day; "thorough" (CI): many fresh random examples. Neither has a deadline: a slow, loaded
# machine must not fail a property test. A test's own @settings(max_examples=...) wins.
hypothesis_settings.register_profile("quick", max_examples=25, deadline=None, derandomize=True)
hypothesis_settings.register_profile("thorough", max_examples=1000, deadline=None)
hypothesis_settings.load_profile(os.environ.get("HYPOTHESIS_PROFILE", "quick"))


def frozen_now_parse(value: str) -> datetime | None:
    """FLEETFUEL_FROZEN_NOW: an ISO 8601 instant with its time zone, or empty (the real clock)."""
    if not value:
        return None
    try:
        when = datetime.fromisoformat(value)
    except ValueError:
        when = None
    if when is None or when.utcoffset() is None:
        raise pytest.UsageError(
            f"FLEETFUEL_FROZEN_NOW={value!r} is not an ISO 8601 instant with a time zone "
            "(e.g. 2026-12-02T00:05:00Z)"
        )
    return when


FROZEN_NOW = frozen_now_parse(os.environ.get("FLEETFUEL_FROZEN_NOW", ""))


@pytest.fixture(autouse=True)
def _wall_clock_at_frozen_now() -> Iterator[None]:
    """With FLEETFUEL_FROZEN_NOW set, every test starts with the wall clock at that instant
    (and ticking from there): a run at a few instants shows whether an outcome depends on
    when the suite runs (DEVELOPERS.md, "The clock"). A test's own freeze still wins."""
    if FROZEN_NOW is None:
        yield
        return
    with time_machine.travel(FROZEN_NOW, tick=True):
        yield


def need(condition: bool, reason: str) -> None:
    """Skip locally, fail in CI, when a service a test needs is missing."""
    if condition:
        return
    if IN_CI:
        pytest.fail(f"CI requires this: {reason}")
    pytest.skip(reason)


@contextmanager
def db_shared(django_db_blocker: Any) -> Iterator[None]:
    """Data built once for the tests of a module (or a session) that only read it, the way
    Django's setUpTestData works: it is written inside a transaction that stays open while
    those tests run (each test's own transaction nests in it as a savepoint) and is rolled back
    after them, so no other test sees it. For tests that use ``db``, not ``transactional_db``
    or ``live_server`` (those commit, and empty the tables after). For example::

        @pytest.fixture(scope="module")
        def demo(django_db_setup: Any, django_db_blocker: Any) -> Iterator[None]:
            with db_shared(django_db_blocker):
                call_command("seed_demo")
                yield
    """
    with django_db_blocker.unblock(), transaction.atomic():
        try:
            yield
        finally:
            transaction.set_rollback(True)


@pytest.fixture
def clock_at_now() -> Iterator[datetime]:
    """The wall clock at tests.factories.NOW (ticking from there), for a test whose data is
    laid back from NOW and whose page reads the clock. List it before the fixtures that log in
    or build data (or use ``pytest.mark.usefixtures``), so they run at NOW too."""
    with time_machine.travel(f.NOW, tick=True):
        yield f.NOW


@pytest.fixture
def postgres() -> None:
    need(connection.vendor == "postgresql", "needs PostgreSQL (set DATABASE_URL=postgres://...)")


@pytest.fixture
def site(db: Any) -> Any:
    return f.site_make(name="North Depot", code="north")


@pytest.fixture
def other_site(db: Any) -> Any:
    return f.site_make(name="South Depot", code="south")


@pytest.fixture
def unit_class(db: Any) -> Any:
    uc = f.unit_class_make(name="Test hauler")
    f.plans_make(uc)
    return uc


@pytest.fixture
def unit(site: Any, unit_class: Any) -> Any:
    return f.unit_make(site=site, unit_class=unit_class, fleet_number="N-001")


@pytest.fixture
def manager(site: Any) -> Any:
    return f.user_make("manager", username="maria")


@pytest.fixture
def mechanic(site: Any) -> Any:
    return f.user_make("mechanic", username="mick", sites=[site])


@pytest.fixture
def auditor(db: Any) -> Any:
    return f.user_make("auditor", username="audrey")


@pytest.fixture
def as_manager(client: Any, manager: Any) -> Any:
    client.force_login(manager)
    return client


@pytest.fixture
def as_mechanic(client: Any, mechanic: Any) -> Any:
    client.force_login(mechanic)
    return client


@pytest.fixture
def as_auditor(client: Any, auditor: Any) -> Any:
    client.force_login(auditor)
    return client


@pytest.fixture(scope="session", autouse=True)
def _close_stray_connections(django_db_setup: Any, django_db_blocker: Any) -> Any:
    """Threads in the concurrency tests and the live server may leave a session open on the
    test database; end them before pytest-django drops it, so the drop never fails."""
    yield
    if connection.vendor != "postgresql":
        return
    with django_db_blocker.unblock(), connection.cursor() as cursor:
        cursor.execute(
            "SELECT pg_terminate_backend(pid) FROM pg_stat_activity "
            "WHERE datname = current_database() AND pid <> pg_backend_pid()"
        )
