"""The nightly recompute survives a worker killed in the middle of it: the run resumes from
its cursor, no unit is skipped, and none is counted twice (a redelivered batch neither counts
again nor starts a second chain)."""

from __future__ import annotations

from collections.abc import Iterator
from datetime import timedelta
from typing import Any

import pytest
import time_machine
from django.test import override_settings
from django.utils import timezone

from fleetfuel.planning import tasks
from fleetfuel.planning.models import DueItem, ProjectionRun
from fleetfuel.planning.tasks import recompute_all, stale_sweep
from tests import factories as f
from tests.planning.builders import history_make

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
    real = tasks.due_items_recompute
    state = {"calls": 0}

    def recompute(*, unit_ids: list[int], now: Any) -> Any:
        state["calls"] += 1
        if state["calls"] == 3:
            raise WorkerKilled
        result = real(unit_ids=unit_ids, now=now)
        done.append(list(unit_ids))
        return result

    monkeypatch.setattr(tasks, "due_items_recompute", recompute)
    with override_settings(PLANNING_BATCH_SIZE=BATCH):
        yield done


@pytest.mark.usefixtures("clock_at_now")
@pytest.mark.django_db
def test_a_run_killed_mid_batch_resumes_with_no_unit_skipped_or_counted_twice(
    fleet: list[int], recomputed: list[list[int]]
) -> None:
    with pytest.raises(WorkerKilled):
        recompute_all()  # in-process: each batch queues the next; the third one dies
    run = ProjectionRun.objects.get()
    assert run.finished_at is None
    assert (run.units, run.last_unit_id) == (2 * BATCH, fleet[2 * BATCH - 1])
    assert recomputed == [fleet[0:2], fleet[2:4]]

    # Its chain is lost with the worker. A sweep soon after leaves the run alone (a batch
    # may still be running) ...
    assert stale_sweep()["runs_resumed"] == 0
    # ... a sweep after the stall limit resumes it from its cursor.
    with time_machine.travel(timezone.now() + timedelta(minutes=20), tick=True):
        assert stale_sweep()["runs_resumed"] == 1
        assert stale_sweep()["runs_resumed"] == 0  # finished: nothing left to resume
    run.refresh_from_db()
    assert run.finished_at is not None
    # Every unit once, in order: none skipped, none done twice, and counted once each.
    assert recomputed == [fleet[0:2], fleet[2:4], fleet[4:6], fleet[6:7]]
    assert run.units == UNITS
    assert set(DueItem.objects.values_list("unit_id", flat=True)) == set(fleet)

    # The killed batch delivered again (acknowledged late, so the broker re-sends it): it
    # rewrites its own rows, counts nothing again and starts no second chain.
    recompute_all(after_id=fleet[3], run_id=run.pk)
    run.refresh_from_db()
    assert recomputed[4:] == [fleet[4:6]]
    assert run.units == UNITS
