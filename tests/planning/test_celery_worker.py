"""A real Celery worker on Redis runs the per-unit recompute end to end.

The worker is a separate process using the test database (committed data: transaction=True).
Locally this skips when Redis is not reachable; in CI (CI=true) it must run.
"""

from __future__ import annotations

import os
import subprocess
import sys
import time
from pathlib import Path
from typing import Any

import pytest
from celery import Celery
from django.db import connection

from fleetfuel.celery import QUEUES
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.tasks import recompute_units
from tests import factories as f
from tests.conftest import need
from tests.planning.builders import history_make

ROOT = Path(__file__).resolve().parents[2]
BROKER = os.environ.get("CELERY_BROKER_URL") or "redis://127.0.0.1:6379/14"


def redis_up(url: str) -> bool:
    try:
        import redis

        return bool(redis.Redis.from_url(url, socket_connect_timeout=1).ping())
    except Exception:
        return False


def test_db_url() -> str:
    s = connection.settings_dict
    if connection.vendor == "sqlite":
        return f"sqlite:///{s['NAME']}"
    user = s.get("USER") or "postgres"
    host = s.get("HOST") or "127.0.0.1"
    return f"postgres://{user}@{host}:{s.get('PORT') or 5432}/{s['NAME']}"


test_db_url.__test__ = False  # type: ignore[attr-defined]


def worker_command(*, hostname: str, queue: str | None = None) -> list[str]:
    """A real worker, one task at a time, on every queue (as docker-compose's single-worker
    setup) or on ``queue`` only."""
    return [
        sys.executable,
        "-m",
        "celery",
        "-A",
        "fleetfuel",
        "worker",
        "--pool",
        "solo",
        "--loglevel",
        "WARNING",
        "--without-gossip",
        "--without-mingle",
        "--hostname",
        hostname,
        "-Q",
        queue or ",".join(QUEUES),
    ]


@pytest.mark.celery_worker
@pytest.mark.django_db(transaction=True)
def test_worker_recomputes_a_unit(site: Any, unit_class: Any) -> None:
    need(redis_up(BROKER), f"needs Redis at {BROKER}")
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="W-1")
    history_make(unit=unit, source=f.source_make(), days=10)
    assert not DueItem.objects.filter(unit=unit).exists()

    env = {
        **os.environ,
        "DATABASE_URL": test_db_url(),
        "CELERY_BROKER_URL": BROKER,
        "CELERY_TASK_ALWAYS_EAGER": "false",
        "FLEETFUEL_TESTING": "true",
    }
    worker = subprocess.Popen(
        worker_command(hostname=f"test-{os.getpid()}@localhost", queue="fleetfuel-test"),
        cwd=ROOT,
        env=env,
        stdout=subprocess.PIPE,
        stderr=subprocess.STDOUT,
    )
    # A separate client app, so the suite's in-process (eager) app is left as it is (and
    # stays the current app: the tasks of later tests still run in-process).
    sender = Celery("fleetfuel-test-client", broker=BROKER, set_as_current=False)
    try:
        sender.send_task(recompute_units.name, args=[[unit.pk]], queue="fleetfuel-test")
        deadline = time.monotonic() + 90
        tasks: set[str] = set()
        while time.monotonic() < deadline and len(tasks) < 3:
            time.sleep(0.5)
            assert worker.poll() is None, worker.stdout.read().decode() if worker.stdout else ""
            tasks = set(DueItem.objects.filter(unit=unit).values_list("task", flat=True))
        assert tasks == {"primary_filter", "fine_filter", "separator_drain"}
    finally:
        sender.close()
        worker.terminate()
        try:
            worker.wait(timeout=20)
        except subprocess.TimeoutExpired:
            worker.kill()
        time.sleep(0.1)
