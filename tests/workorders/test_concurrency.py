"""Two tablets closing the same work order at once, on PostgreSQL (row locks are real there)."""

from __future__ import annotations

import threading
from typing import Any

import pytest
from django.db import connection

from fleetfuel.fleet.models import MeterReading
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.workorders.close import CloseOutcome, work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests.workorders.conftest import task_make

pytestmark = pytest.mark.postgres


def test_two_tablets_close_at_once_exactly_one_wins(
    postgres: None, transactional_db: Any, wo: WorkOrder, mechanic: Any, manager: Any
) -> None:
    task_make(wo, WorkOrderTask.Kind.INJECTOR_REPLACE, cylinder=2, description="Injector 2",
              entry={"new_serial": "N-2", "old_serial": "O-2"})  # fmt: skip
    task_make(wo, WorkOrderTask.Kind.CONNECTOR_REPLACE, cylinder=2, description="Connector 2")
    entries = {
        "tablet-a": (manager, "Manager: all tight"),
        "tablet-b": (mechanic, "Mechanic: torque checked twice"),
    }
    barrier = threading.Barrier(len(entries))
    outcomes: dict[str, CloseOutcome] = {}
    errors: list[BaseException] = []

    def tablet(token: str) -> None:
        user, note = entries[token]
        try:
            barrier.wait(timeout=10)
            outcomes[token] = work_order_close(
                work_order_id=wo.pk,
                user=user,
                token=token,
                job=JobEntry(
                    hour_meter=2_000.0,
                    meter_replaced=False,
                    meter_old_final=None,
                    meter_new_start=None,
                    notes=note,
                ),  # fmt: skip
                snapshot=f'{{"Injector 2": {{"notes": "{token} was here"}}}}',
            )
        except BaseException as exc:  # reported below, in the test's own thread
            errors.append(exc)
        finally:
            connection.close()  # each thread had its own connection

    threads = [threading.Thread(target=tablet, args=(t,)) for t in entries]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=60)
    assert not errors, errors
    results = sorted(o.result for o in outcomes.values())
    assert results == ["closed", "closed_by_other"]
    winner = next(t for t, o in outcomes.items() if o.result == "closed")
    loser = next(t for t, o in outcomes.items() if o.result == "closed_by_other")

    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.CLOSED
    assert wo.close_token == winner and wo.closed_by == entries[winner][0]
    # One set of service events and one reading, whoever won.
    assert sorted(ServiceEvent.objects.filter(work_order=wo).values_list("kind", flat=True)) == [
        "connector_replaced",
        "injector_replaced",
    ]
    assert MeterReading.objects.filter(source=MeterReading.Source.WORK_ORDER).count() == 1
    # The loser is told who closed it; what they entered is kept in the notes.
    assert entries[winner][0].username in outcomes[loser].message
    assert f"{entries[loser][0].username} tried to close it" in wo.notes
    assert entries[loser][1] in wo.notes and f"{loser} was here" in wo.notes
