"""The nightly recompute survives a worker killed in the middle of it: the sweep queues the
run's undone batches again, no unit is skipped, and none is counted twice (a redelivered
batch neither recomputes nor counts again)."""

from __future__ import annotations

import os
import signal
import subprocess
import time
from collections.abc import Iterator
from datetime import timedelta
from pathlib import Path
from typing import Any

import psycopg
import pytest
import redis
import time_machine
from celery import Celery
from django.db import connection
from django.test import override_settings
from django.utils import timezone

from fleetfuel.fleet.models import Unit
from fleetfuel.planning import runs
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem, ProjectionBatch, ProjectionRun
from fleetfuel.planning.tasks import recompute_all, recompute_batch, stale_sweep
from tests import factories as f
from tests.conftest import need
from tests.planning.builders import history_make
from tests.planning.test_celery_worker import ROOT, redis_up, test_db_url, worker_command

UNITS = 7
BATCH = 2  # four batches: 2 + 2 + 2 + 1


class WorkerKilled(BaseException):
    """The worker process dies: nothing after this point of the batch happens."""


@pytest.fixture
def fleet(site: Any, unit_class: Any) -> list[int]:
    tank = f.source_make()
    units = [f.unit_make(site=site, unit_class=unit_class) for _ in range(UNITS)]
    for u in units:
        history_make(unit=u, source=tank, days=5)
    return sorted(u.pk for u in units)


@pytest.fixture
def recomputed(monkeypatch: pytest.MonkeyPatch) -> Iterator[list[list[int]]]:
    """The batches whose recompute ran to its end, in order; the third one is killed."""
    done: list[list[int]] = []
    real = runs.due_items_recompute
    state = {"calls": 0}

    def recompute(*, unit_ids: list[int], now: Any, sources: bool = True, lives: Any = None) -> Any:
        state["calls"] += 1
        if state["calls"] == 3:
            raise WorkerKilled
        result = real(unit_ids=unit_ids, now=now, sources=sources, lives=lives)
        done.append(list(unit_ids))
        return result

    monkeypatch.setattr(runs, "due_items_recompute", recompute)
    with override_settings(PLANNING_BATCH_SIZE=BATCH):
        yield done


@pytest.mark.usefixtures("clock_at_now")
@pytest.mark.django_db
def test_a_run_killed_mid_batch_resumes_with_no_unit_skipped_or_counted_twice(
    fleet: list[int], recomputed: list[list[int]]
) -> None:
    with pytest.raises(WorkerKilled):
        recompute_all()  # in-process: each queued batch runs at once; the third one dies
    run = ProjectionRun.objects.get()
    assert run.finished_at is None
    assert run.units == 2 * BATCH
    assert recomputed == [fleet[0:2], fleet[2:4]]
    # Every batch was recorded before any was queued: the lost ones are still on record.
    assert [b.unit_ids for b in run.batches.all()] == [
        fleet[0:2],
        fleet[2:4],
        fleet[4:6],
        fleet[6:7],
    ]

    # Its batches are lost with the worker. A sweep soon after leaves the run alone (a batch
    # may still be running) ...
    assert stale_sweep()["batches_requeued"] == 0
    # ... a sweep after the stall limit queues its undone batches again.
    with time_machine.travel(timezone.now() + timedelta(minutes=20), tick=True):
        assert stale_sweep()["batches_requeued"] == 2
        assert stale_sweep()["batches_requeued"] == 0  # finished: nothing left to queue
    run.refresh_from_db()
    assert run.finished_at is not None
    # Every unit once: none skipped, none done twice, and counted once each.
    assert recomputed == [fleet[0:2], fleet[2:4], fleet[4:6], fleet[6:7]]
    assert run.units == UNITS
    assert set(DueItem.objects.values_list("unit_id", flat=True)) == set(fleet)

    # A batch delivered again (acknowledged late, so the broker re-sends it) after it was
    # done: it recomputes nothing and counts nothing again.
    for batch in run.batches.all():
        recompute_batch(batch.pk)
    run.refresh_from_db()
    assert recomputed[4:] == []
    assert run.units == UNITS


@pytest.mark.django_db
def test_a_full_run_refreshes_the_sources_decisions_once_at_its_end(
    fleet: list[int], monkeypatch: pytest.MonkeyPatch
) -> None:
    calls: list[Any] = []
    monkeypatch.setattr(runs, "source_decisions_refresh", lambda *, now: calls.append(now))
    with override_settings(PLANNING_BATCH_SIZE=BATCH):
        recompute_all()
    run = ProjectionRun.objects.get()
    assert run.finished_at is not None and run.units == UNITS
    assert ProjectionBatch.objects.filter(run=run, done_at__isnull=True).count() == 0
    assert len(calls) == 1 and calls[0] == run.finished_at


# ------------------------------------------------------------------ with a real worker

BROKER = os.environ.get("CELERY_BROKER_URL") or "redis://127.0.0.1:6379/11"
QUEUE_KEYS = ("celery", "projection", "unacked", "unacked_index", "unacked_mutex")


def worker_start(env: dict[str, str], log: Any) -> subprocess.Popen[bytes]:
    return subprocess.Popen(
        worker_command(hostname=f"batch-{os.getpid()}@localhost"),
        cwd=ROOT,
        env=env,
        stdout=log,  # a file, not a pipe: a full pipe would stop the worker
        stderr=subprocess.STDOUT,
    )


def until(condition: Any, worker: subprocess.Popen[bytes], log: Path, what: str) -> None:
    """Wait for a state of the worker's progress (a condition, not a duration; the bound
    only stops a hung run)."""
    deadline = time.monotonic() + 120
    while not condition():
        assert worker.poll() is None, f"worker exited before {what}: {log.read_text()}"
        assert time.monotonic() < deadline, f"never reached: {what}: {log.read_text()}"
        time.sleep(0.2)


@pytest.mark.celery_worker
@pytest.mark.django_db(transaction=True)
def test_a_worker_killed_mid_batch_leaves_a_run_the_sweep_resumes(
    postgres: None, site: Any, unit_class: Any, tmp_path: Path
) -> None:
    """A real worker on Redis runs the nightly batches (two units each). The third unit's
    due-item rows are held locked from another session, so the worker's second batch waits
    inside its transaction; the worker is killed there (SIGKILL). Its batch rolls back, the
    batch is lost, and the sweep queues the run's undone batches again: every unit
    recomputed, the first batch not again, each counted once."""
    need(redis_up(BROKER), f"needs Redis at {BROKER}")
    tank = f.source_make()
    fleet = sorted(
        f.unit_make(site=site, unit_class=unit_class, fleet_number=f"K-{n}").pk for n in range(5)
    )
    for pk in fleet:
        history_make(unit=Unit.objects.get(pk=pk), source=tank, days=5)
    # The worker keeps the real clock while this process may run at FLEETFUEL_FROZEN_NOW:
    # compare its stamps by equality only, and stall the run from the worker's own stamp.
    earlier = f.NOW - timedelta(days=400)
    due_items_recompute(unit_ids=fleet, now=earlier)
    assert set(computed_at(fleet)) == set(fleet)
    queue = redis.Redis.from_url(BROKER)
    queue.delete(*QUEUE_KEYS)

    env = {
        **os.environ,
        "DATABASE_URL": test_db_url(),
        "CELERY_BROKER_URL": BROKER,
        "CELERY_TASK_ALWAYS_EAGER": "false",
        "FLEETFUEL_TESTING": "true",
        "PLANNING_BATCH_SIZE": "2",
    }
    holder = psycopg.connect(test_db_url(), autocommit=False)
    log = tmp_path / "worker.log"
    out = log.open("wb")
    worker = worker_start(env, out)
    sender = Celery("fleetfuel-batch-client", broker=BROKER, set_as_current=False)
    try:
        holder.execute("SELECT id FROM planning_dueitem WHERE unit_id = %s FOR UPDATE", [fleet[2]])
        sender.send_task(recompute_all.name)
        first_done = ProjectionBatch.objects.filter(number=0, done_at__isnull=False)
        until(first_done.exists, worker, log, "the first batch")
        until(lambda: lock_waiters() > 0, worker, log, "the second batch waiting on its rows")
        worker.send_signal(signal.SIGKILL)
        worker.wait(timeout=30)
    finally:
        holder.rollback()
        holder.close()
        sender.close()
        if worker.poll() is None:
            worker.kill()
            worker.wait(timeout=30)
        out.close()
    run = ProjectionRun.objects.get(trigger="nightly")
    assert run.finished_at is None and run.units == 2
    first = {u: at for u, at in computed_at(fleet).items() if u in fleet[:2]}
    assert all(at != earlier for at in first.values())
    assert all(at == earlier for u, at in computed_at(fleet).items() if u in fleet[2:])

    with (
        time_machine.travel(run.updated_at + timedelta(minutes=20), tick=True),
        override_settings(PLANNING_BATCH_SIZE=2),
    ):
        resumed_at = timezone.now()
        assert stale_sweep()["batches_requeued"] == 2  # in-process here, as a worker would
    run.refresh_from_db()
    assert run.finished_at is not None and run.units == len(fleet)
    after = computed_at(fleet)
    assert {u: after[u] for u in fleet[:2]} == first  # the first batch: not done again
    assert all(after[u] >= resumed_at for u in fleet[2:])  # the rest: none skipped
    queue.delete(*QUEUE_KEYS)  # the killed batch's unacknowledged message


def computed_at(unit_ids: list[int]) -> dict[int, Any]:
    rows = DueItem.objects.filter(unit_id__in=unit_ids).values_list("unit_id", "computed_at")
    out: dict[int, Any] = {}
    for unit_id, at in rows:
        assert out.setdefault(unit_id, at) == at  # a unit's items are written together
    return out


def lock_waiters() -> int:
    """Sessions on the test database waiting for a lock (the worker's batch). Asked on the
    test's own connection, one statement a transaction: a transaction sees the activity
    statistics as they were at its first look."""
    with connection.cursor() as cursor:
        cursor.execute(
            "SELECT count(*) FROM pg_stat_activity WHERE datname = current_database() "
            "AND wait_event_type = 'Lock'"
        )
        return int(cursor.fetchone()[0])
