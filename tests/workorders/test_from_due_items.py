"""Work orders made from the due list's items (actions.work_orders_from_due_items): one per
unit, one task per item of the kind that does it, assigned to the site's least busy mechanic."""

from __future__ import annotations

from typing import Any

import pytest
from django.utils import timezone

from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.actions import (
    WorkOrderCreateError,
    mechanic_for_site,
    work_orders_from_due_items,
)
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests import factories as f
from tests.workorders.conftest import work_order_make

K = WorkOrderTask.Kind


@pytest.fixture
def items(unit: Any, reading: Any) -> dict[str, DueItem]:
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    return {i.task: i for i in DueItem.objects.filter(unit=unit)}


def test_items_of_one_unit_make_one_work_order_with_a_task_each(
    items: dict[str, DueItem], unit: Any, manager: Any, mechanic: Any
) -> None:
    today = timezone.localdate()
    picked = [items[DueItem.Task.PRIMARY_FILTER], items[DueItem.Task.SEPARATOR_DRAIN]]
    created = work_orders_from_due_items(
        item_ids=[i.pk for i in picked], site_ids=[unit.site_id], created_by=manager, today=today
    )
    (order,) = created.orders
    assert order.number == f"WO-{order.pk:05d}" and order.unit == unit
    assert order.assigned_to == mechanic and order.created_by == manager
    assert order.due_on == max(today, min(i.due_on for i in picked))
    # The primary filter is overdue (the planner's projection): the work order is urgent.
    assert items[DueItem.Task.PRIMARY_FILTER].status == DueItem.Status.OVERDUE
    assert order.priority == WorkOrder.Priority.URGENT
    tasks = {t.due_item_id: t for t in order.tasks.all()}
    primary = tasks[items[DueItem.Task.PRIMARY_FILTER].pk]
    drain = tasks[items[DueItem.Task.SEPARATOR_DRAIN].pk]
    assert (primary.kind, drain.kind) == (K.FILTER_CHANGE, K.SEPARATOR_DRAIN)
    assert primary.component == items[DueItem.Task.PRIMARY_FILTER].component
    assert primary.description == items[DueItem.Task.PRIMARY_FILTER].get_task_display()


def test_an_item_already_in_an_open_work_order_is_refused_and_named(
    items: dict[str, DueItem], unit: Any, manager: Any
) -> None:
    fine, drain = items[DueItem.Task.FINE_FILTER], items[DueItem.Task.SEPARATOR_DRAIN]
    kw = {"site_ids": [unit.site_id], "created_by": manager, "today": timezone.localdate()}
    (first,) = work_orders_from_due_items(item_ids=[fine.pk], **kw).orders
    # Picked again, alone or with an item that is free: refused whole, naming both.
    for picked in ([fine.pk], [drain.pk, fine.pk]):
        with pytest.raises(WorkOrderCreateError) as refused:
            work_orders_from_due_items(item_ids=picked, **kw)
        text = str(refused.value)
        assert f"{unit.fleet_number}: {fine.get_task_display()}" in text
        assert f"open work order {first.number}" in text
        assert fine.get_task_display() in text and drain.get_task_display() not in text
    assert list(WorkOrder.objects.all()) == [first]
    assert WorkOrderTask.objects.filter(due_item=fine).count() == 1
    assert not WorkOrderTask.objects.filter(due_item=drain).exists()


def test_an_item_is_free_again_once_its_work_order_closed(
    items: dict[str, DueItem], unit: Any, manager: Any
) -> None:
    fine = items[DueItem.Task.FINE_FILTER]
    kw = {"site_ids": [unit.site_id], "created_by": manager, "today": timezone.localdate()}
    (first,) = work_orders_from_due_items(item_ids=[fine.pk], **kw).orders
    WorkOrder.objects.filter(pk=first.pk).update(
        status=WorkOrder.Status.CLOSED, closed_at=timezone.now(), closed_by=manager
    )
    (second,) = work_orders_from_due_items(item_ids=[fine.pk], **kw).orders
    assert second.pk != first.pk


def test_nothing_selected_or_another_sites_item_is_refused(
    items: dict[str, DueItem], unit: Any, other_site: Any, manager: Any
) -> None:
    kw = {"created_by": manager, "today": timezone.localdate()}
    with pytest.raises(WorkOrderCreateError, match="Select at least one due item."):
        work_orders_from_due_items(item_ids=[], site_ids=[unit.site_id], **kw)
    item = items[DueItem.Task.FINE_FILTER]
    with pytest.raises(WorkOrderCreateError, match="not at your sites"):
        work_orders_from_due_items(item_ids=[item.pk], site_ids=[other_site.pk], **kw)
    assert not WorkOrder.objects.exists()


def test_the_mechanic_with_fewest_open_work_orders_gets_it(
    unit: Any, site: Any, manager: Any
) -> None:
    busy = f.user_make("mechanic", username="bea", sites=[site])
    free = f.user_make("mechanic", username="cal", sites=[site])
    f.user_make("mechanic", username="abe", sites=[])  # not at this site
    assert mechanic_for_site(site.pk) == busy  # a tie goes by username
    work_order_make(unit=unit, created_by=manager, assigned_to=busy)
    assert mechanic_for_site(site.pk) == free
    closed = work_order_make(unit=unit, created_by=manager, assigned_to=free, number="C-1")
    WorkOrder.objects.filter(pk=closed.pk).update(
        status=WorkOrder.Status.CLOSED, closed_at=timezone.now(), closed_by=manager
    )
    assert mechanic_for_site(site.pk) == free  # closed work orders do not count
