"""Two managers making a work order from the same due item at once, on PostgreSQL (row locks
are real there): exactly one work order holds the item, the other manager is told which."""

from __future__ import annotations

import contextlib
import threading
from typing import Any

import pytest
from django.db import connection
from django.utils import timezone

from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders import actions
from fleetfuel.workorders.actions import (
    CreatedOrders,
    WorkOrderCreateError,
    work_orders_from_due_items,
)
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests import factories as f

pytestmark = pytest.mark.postgres


def test_two_managers_pick_the_same_item_at_once_exactly_one_work_order_holds_it(
    postgres: None,
    transactional_db: Any,
    monkeypatch: Any,
    unit: Any,
    reading: Any,
    manager: Any,
    site: Any,
) -> None:
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    drain = DueItem.objects.get(unit=unit, task=DueItem.Task.SEPARATOR_DRAIN)
    fine = DueItem.objects.get(unit=unit, task=DueItem.Task.FINE_FILTER)
    other = f.user_make("manager", username="second-manager", sites=[site])
    # Each picks the drain, one with the fine filter too: the selections overlap.
    picks = {"a": (manager, [drain.pk, fine.pk]), "b": (other, [drain.pk])}
    barrier = threading.Barrier(len(picks))
    # Both desks meet again just before the "already held?" read, if both can get there. With
    # the items' rows locked only the first gets there (the other waits on the lock); it goes
    # on once the meeting is given up. Without the lock both would read "free" together.
    meeting = threading.Barrier(len(picks))
    held_read = actions.open_work_orders_holding

    def held_after_meeting(**kw: Any) -> Any:
        with contextlib.suppress(threading.BrokenBarrierError):
            meeting.wait(timeout=1)
        return held_read(**kw)

    monkeypatch.setattr(actions, "open_work_orders_holding", held_after_meeting)
    made: dict[str, CreatedOrders] = {}
    refused: dict[str, str] = {}
    errors: list[BaseException] = []

    def desk(name: str) -> None:
        user, ids = picks[name]
        try:
            barrier.wait(timeout=10)
            made[name] = work_orders_from_due_items(
                item_ids=ids, site_ids=[site.pk], created_by=user, today=timezone.localdate()
            )
        except WorkOrderCreateError as exc:
            refused[name] = str(exc)
        except BaseException as exc:  # reported below, in the test's own thread
            errors.append(exc)
        finally:
            connection.close()  # each thread had its own connection

    threads = [threading.Thread(target=desk, args=(n,)) for n in picks]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=60)
    assert not errors, errors
    assert len(made) == 1 and len(refused) == 1
    (order,) = next(iter(made.values())).orders
    assert WorkOrderTask.objects.filter(due_item=drain).count() == 1
    assert WorkOrder.objects.count() == 1
    assert f"open work order {order.number}" in next(iter(refused.values()))
