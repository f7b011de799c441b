"""Closing a work order settles the due items it covered: another open work order holding the
same item (made before duplicates were refused) no longer asks for it, and says so; one whose
every item was done elsewhere closes with nothing recorded twice. And the due list learns
which open work order holds an item."""

from __future__ import annotations

from typing import Any

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders import selectors
from fleetfuel.workorders.close import work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests.workorders.conftest import task_make, work_order_make

K = WorkOrderTask.Kind


def job(hours: float | None) -> JobEntry:
    return JobEntry(
        hour_meter=hours, meter_replaced=False, meter_old_final=None, meter_new_start=None,
        notes=None,
    )  # fmt: skip


@pytest.fixture
def drain(unit: Any, reading: Any) -> DueItem:
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    return DueItem.objects.get(unit=unit, task=DueItem.Task.SEPARATOR_DRAIN)


@pytest.fixture
def twice(drain: DueItem, unit: Any, manager: Any, mechanic: Any) -> tuple[WorkOrder, WorkOrder]:
    """Two open work orders holding the same drain, as the data stood before the refusal."""
    orders = []
    for number in ("WO-0201", "WO-0202"):
        wo = work_order_make(unit=unit, created_by=manager, assigned_to=mechanic, number=number)
        task_make(wo, K.SEPARATOR_DRAIN, description="Drain water separator", due_item=drain)
        orders.append(wo)
    return orders[0], orders[1]


def test_the_second_work_order_no_longer_asks_for_a_drain_the_first_closed(
    as_mechanic: Any, twice: tuple[WorkOrder, WorkOrder], mechanic: Any
) -> None:
    first, second = twice
    first.tasks.update(entry={"water_ml": 40.0, "appearance": "cloudy"})
    assert work_order_close(
        work_order_id=first.pk, user=mechanic, token="a", job=job(2_000.0)
    ).result == "closed"  # fmt: skip

    html = as_mechanic.get(reverse("workorders:detail", args=[second.pk])).content.decode()
    assert "Nothing left to do here" in html
    assert "Every item of this work order was done in" in html and first.number in html
    assert 'name="water_ml"' not in html  # the drain's fields are not asked again
    assert "no hour meter is needed" in html

    outcome = work_order_close(work_order_id=second.pk, user=mechanic, token="b", job=job(None))
    assert outcome.result == "closed", (outcome.problems, outcome.violations)
    second.refresh_from_db()
    assert f"Done in work order {first.number}: Drain water separator" in second.notes
    # One drain in the history, recorded by the first work order only.
    drains = ServiceEvent.objects.filter(kind=ServiceEvent.Kind.SEPARATOR_DRAINED)
    assert list(drains.values_list("work_order_id", flat=True)) == [first.pk]
    assert not second.tasks.filter(done=True).exists()


def test_a_task_left_with_others_still_asks_for_the_rest(
    twice: tuple[WorkOrder, WorkOrder], mechanic: Any
) -> None:
    first, second = twice
    first.tasks.update(entry={"water_ml": 0.0, "appearance": "clear"})
    work_order_close(work_order_id=first.pk, user=mechanic, token="a", job=job(2_000.0))
    task_make(second, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    outcome = work_order_close(work_order_id=second.pk, user=mechanic, token="b", job=job(None))
    # The relief valve is real work: the hour meter is asked for; the drain is not.
    assert outcome.result == "refused"
    assert any("hour meter" in p.lower() for p in outcome.problems)
    assert not any("Drain water separator" in p for p in outcome.problems)


def test_a_dp_check_done_elsewhere_does_not_settle_a_filter_change(
    unit: Any, reading: Any, manager: Any, mechanic: Any
) -> None:
    """A dP reading is no filter change (common practice): the change is still asked for."""
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    primary = DueItem.objects.get(unit=unit, task=DueItem.Task.PRIMARY_FILTER)
    a = work_order_make(unit=unit, created_by=manager, number="WO-0301")
    b = work_order_make(unit=unit, created_by=manager, number="WO-0302")
    task_make(a, K.FILTER_CHECK, description="Check dP", due_item=primary, done=True)
    WorkOrder.objects.filter(pk=a.pk).update(
        status=WorkOrder.Status.CLOSED, closed_at=timezone.now(), closed_by=mechanic
    )
    change = task_make(b, K.FILTER_CHANGE, description="Change primary", due_item=primary)
    assert selectors.tasks_settled_elsewhere(work_order=b, tasks=[change]) == {}


def test_the_due_list_is_told_which_open_work_order_holds_an_item(
    twice: tuple[WorkOrder, WorkOrder], drain: DueItem, unit: Any
) -> None:
    first, _second = twice
    rows = {
        i.pk: i
        for i in DueItem.objects.filter(unit=unit).annotate(**selectors.due_item_open_work_order())
    }
    held = rows[drain.pk]
    assert held.open_work_order_id == first.pk
    assert held.open_work_order_number == first.number
    free = next(i for i in rows.values() if i.pk != drain.pk)
    assert free.open_work_order_id is None and free.open_work_order_number is None
