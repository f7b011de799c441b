"""PostgreSQL drops the connection in the middle of a close (a server restart, a network
blip): nothing of that close stands, and the tablet's retry with the same close token closes
exactly once. On PostgreSQL: the connection is really terminated by the server
(pg_terminate_backend), not mocked."""

from __future__ import annotations

import contextlib
from typing import Any

import psycopg
import pytest
from django.db import DatabaseError, InterfaceError, connection

from fleetfuel.fleet.models import MeterReading
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.workorders.close import CloseOutcome, work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests.workorders.conftest import task_make

pytestmark = pytest.mark.postgres


def closing(wo: WorkOrder, user: Any, token: str) -> CloseOutcome:
    job = JobEntry(hour_meter=2_000.0, meter_replaced=False, meter_old_final=None,
                   meter_new_start=None, notes="Bowl drained, water clear")  # fmt: skip
    return work_order_close(work_order_id=wo.pk, user=user, token=token, job=job)


def test_connection_dropped_mid_close_then_the_retry_closes_once(
    postgres: None, transactional_db: Any, wo: WorkOrder, mechanic: Any
) -> None:
    task_make(wo, WorkOrderTask.Kind.SEPARATOR_DRAIN, description="Drain the bowl",
              entry={"water_ml": 20, "appearance": "clear"})  # fmt: skip
    dropped: list[str] = []

    def drop_at_the_ledger_write(execute: Any, sql: str, params: Any, many: bool, ctx: Any) -> Any:
        if (
            not dropped
            and sql.lstrip().upper().startswith("INSERT")
            and "ledger_serviceevent" in sql
        ):
            dropped.append(sql)
            # The server ends this session, as a restart would, in the middle of the close;
            # the close's own statement then meets the dead connection.
            with contextlib.suppress(psycopg.Error), ctx["connection"].connection.cursor() as raw:
                raw.execute("SELECT pg_terminate_backend(pg_backend_pid())")
        return execute(sql, params, many, ctx)

    with (
        connection.execute_wrapper(drop_at_the_ledger_write),
        pytest.raises((DatabaseError, InterfaceError)),
    ):
        closing(wo, mechanic, token="tablet-7")
    connection.close()  # the next query opens a new session
    assert dropped, "the close never reached the ledger"
    # Nothing of the interrupted close stands (its transaction died with the session)...
    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.OPEN and wo.close_token is None
    assert not ServiceEvent.objects.filter(work_order=wo).exists()
    # ... and the tablet's retry, with the same token, closes it once; a second retry replays.
    first = closing(wo, mechanic, token="tablet-7")
    again = closing(wo, mechanic, token="tablet-7")
    assert first.result == "closed" and not first.replay
    assert again.result == "closed" and again.replay
    assert ServiceEvent.objects.filter(work_order=wo).count() == 1
    assert MeterReading.objects.filter(unit=wo.unit, source="work_order").count() == 1
    assert WorkOrder.objects.get(pk=wo.pk).status == WorkOrder.Status.CLOSED
