"""Each kind of work goes to its own queue (fleetfuel/celery.py), so a worker that takes only
the projection queue recomputes while an email waits on its own queue, untouched: a slow
export, import or email never delays a recompute."""

from __future__ import annotations

import os
import subprocess
import time
from typing import Any

import pytest
import redis
from celery import Celery

from fleetfuel.celery import QUEUES
from fleetfuel.celery import app as project_app
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.tasks import (
    recompute_all,
    recompute_batch,
    recompute_units,
    stale_sweep,
    worklist_send,
    worklists_tick,
)
from tests import factories as f
from tests.conftest import need
from tests.planning.builders import history_make
from tests.planning.test_celery_worker import BROKER, ROOT, redis_up, test_db_url, worker_command

EXPECTED = {
    recompute_units.name: "projection",
    recompute_all.name: "projection",
    recompute_batch.name: "projection",
    stale_sweep.name: "projection",
    worklists_tick.name: "email",
    worklist_send.name: "email",
    "fleetfuel.intake.tasks.import_run": "imports",
    "fleetfuel.ledger.tasks.export_history_file": "exports",  # any export task, by its name
    "fleetfuel.ledger.tasks.checkpoint_heads": "celery",
}


def queue_of(name: str) -> str:
    route = project_app.amqp.router.route({}, name, args=(), kwargs={})
    return str(route["queue"].name)


@pytest.mark.parametrize(("task", "queue"), list(EXPECTED.items()))
def test_each_task_has_its_queue(task: str, queue: str) -> None:
    assert queue_of(task) == queue
    assert queue in QUEUES


def test_every_scheduled_task_goes_to_a_queue_a_worker_takes() -> None:
    for entry in project_app.conf.beat_schedule.values():
        assert queue_of(entry["task"]) in QUEUES


@pytest.mark.celery_worker
@pytest.mark.django_db(transaction=True)
def test_a_projection_worker_recomputes_while_an_email_waits_on_its_queue(
    site: Any, unit_class: Any
) -> None:
    need(redis_up(BROKER), f"needs Redis at {BROKER}")
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="Q-1")
    history_make(unit=unit, source=f.source_make(), days=10)
    queue = redis.Redis.from_url(BROKER)
    queue.delete(*QUEUES)
    env = {
        **os.environ,
        "DATABASE_URL": test_db_url(),
        "CELERY_BROKER_URL": BROKER,
        "CELERY_TASK_ALWAYS_EAGER": "false",
        "FLEETFUEL_TESTING": "true",
    }
    worker = subprocess.Popen(
        worker_command(hostname=f"queues-{os.getpid()}@localhost", queue="projection"),
        cwd=ROOT,
        env=env,
        stdout=subprocess.DEVNULL,
        stderr=subprocess.DEVNULL,
    )
    # A client with the project's routes and no queue named: the routes choose.
    sender = Celery("fleetfuel-queues-client", broker=BROKER, set_as_current=False)
    sender.conf.task_routes = project_app.conf.task_routes
    try:
        sender.send_task(worklist_send.name, args=[0, 0, "2026-01-01"])  # waits: no taker
        sender.send_task(recompute_units.name, args=[[unit.pk]])
        deadline = time.monotonic() + 90
        while time.monotonic() < deadline and not DueItem.objects.filter(unit=unit).exists():
            assert worker.poll() is None
            time.sleep(0.5)
        assert DueItem.objects.filter(unit=unit).count() == 3
        assert queue.llen("email") == 1  # the email is still queued, on its own queue
        assert queue.llen("projection") == 0
    finally:
        sender.close()
        worker.terminate()
        try:
            worker.wait(timeout=20)
        except subprocess.TimeoutExpired:
            worker.kill()
        queue.delete(*QUEUES)
