"""A task made from a due item is bound to that item's part: the filter it changes cannot be
switched to another kind, on the page, in a post crafted by hand, or at the close. Another
filter changed is another task (added on the page)."""

from __future__ import annotations

from typing import Any

import pytest
from django.urls import reverse
from django.utils import timezone

from fleetfuel.fleet.models import Component, ComponentKind
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.actions import work_orders_from_due_items
from fleetfuel.workorders.close import work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask

K = WorkOrderTask.Kind
HTMX = {"HTTP_HX_REQUEST": "true"}


@pytest.fixture
def primary_task(unit: Any, reading: Any, manager: Any, mechanic: Any) -> WorkOrderTask:
    """The task 'Change primary filter / separator element' of a work order made from the
    due list (the primary filter is overdue in the fixture unit's projection)."""
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    item = DueItem.objects.get(unit=unit, task=DueItem.Task.PRIMARY_FILTER)
    assert item.status != DueItem.Status.CHECK  # a change, not a dP check first
    (order,) = work_orders_from_due_items(
        item_ids=[item.pk], site_ids=[unit.site_id], created_by=manager, today=item.due_on
    ).orders
    task = order.tasks.get()
    assert task.kind == K.FILTER_CHANGE and task.component == item.component
    return task


def fitted(unit: Any, kind: str) -> Component:
    return unit.components.get(kind=kind, removed_on__isnull=True)


def close_with(task: WorkOrderTask, user: Any, **kw: Any) -> Any:
    job = JobEntry(
        hour_meter=2_000.0,
        meter_replaced=False,
        meter_old_final=None,
        meter_new_start=None,
        notes=None,
    )
    return work_order_close(work_order_id=task.work_order_id, user=user, token="t", job=job, **kw)


def test_the_page_offers_only_the_due_items_filter_and_does_not_let_it_change(
    as_mechanic: Any, primary_task: WorkOrderTask, unit: Any
) -> None:
    html = as_mechanic.get(reverse("workorders:detail", args=[primary_task.work_order_id]))
    html = html.content.decode()
    select = html[html.rindex("<select", 0, html.index(f'id="t{primary_task.pk}-filter"')) :]
    select = select[: select.index("</select>")]
    assert "disabled" in select
    assert f'value="{fitted(unit, ComponentKind.PRIMARY_FILTER).pk}"' in select
    assert f'value="{fitted(unit, ComponentKind.FINE_FILTER).pk}"' not in select
    assert "Another filter changed is another task" in html


@pytest.mark.parametrize("htmx", [True, False], ids=["htmx", "plain form"])
def test_a_crafted_post_switching_the_filter_is_refused_and_changes_nothing(
    as_mechanic: Any, primary_task: WorkOrderTask, unit: Any, htmx: bool
) -> None:
    fine = fitted(unit, ComponentKind.FINE_FILTER)
    url = reverse("workorders:task_save", args=[primary_task.pk])
    data = {"filter": str(fine.pk), "part_number": "PF-77"}
    response = as_mechanic.post(url, data, **(HTMX if htmx else {}), follow=not htmx)
    html = response.content.decode()
    assert "this task is for the primary filter" in html.lower()
    assert "cannot be switched to another" in html
    primary_task.refresh_from_db()
    assert primary_task.component == fitted(unit, ComponentKind.PRIMARY_FILTER)
    assert primary_task.entry["part_number"] == "PF-77"  # the rest of the post is kept


def test_an_emptied_filter_is_refused_too(
    as_mechanic: Any, primary_task: WorkOrderTask, unit: Any
) -> None:
    url = reverse("workorders:task_save", args=[primary_task.pk])
    as_mechanic.post(url, {"filter": ""}, **HTMX)
    primary_task.refresh_from_db()
    assert primary_task.component == fitted(unit, ComponentKind.PRIMARY_FILTER)


def test_a_task_set_to_another_filter_before_cannot_close_and_a_save_sets_it_back(
    as_mechanic: Any, primary_task: WorkOrderTask, unit: Any, mechanic: Any, manager: Any
) -> None:
    """The state of a work order saved before the binding: the primary filter's task set to
    the pressure-side filter. Closing it would record a fine-filter change and leave the
    primary overdue."""
    fine = fitted(unit, ComponentKind.FINE_FILTER)
    WorkOrderTask.objects.filter(pk=primary_task.pk).update(
        component=fine, entry={"part_number": "PF-77"}
    )
    outcome = close_with(primary_task, mechanic)
    assert outcome.result == "refused"
    (problem,) = outcome.problems
    assert "for the primary filter" in problem.lower() and "fine" in problem.lower()
    assert not ServiceEvent.objects.filter(work_order_id=primary_task.work_order_id).exists()
    # A manager's override cannot get it through either: it is no closing rule.
    overridden = close_with(
        primary_task, manager, override=True, override_reason="Closing it as it stands, sorry"
    )
    assert overridden.result == "refused"

    as_mechanic.post(reverse("workorders:task_save", args=[primary_task.pk]), {}, **HTMX)
    primary_task.refresh_from_db()
    assert primary_task.component == fitted(unit, ComponentKind.PRIMARY_FILTER)
    assert close_with(primary_task, mechanic).result == "closed"
    (event,) = ServiceEvent.objects.filter(work_order_id=primary_task.work_order_id)
    assert event.kind == ServiceEvent.Kind.FILTER_CHANGED
    assert event.component_kind == ComponentKind.PRIMARY_FILTER


def test_another_filter_is_another_task_added_on_the_page(
    as_mechanic: Any, primary_task: WorkOrderTask, unit: Any
) -> None:
    fine = fitted(unit, ComponentKind.FINE_FILTER)
    wo = primary_task.work_order
    response = as_mechanic.post(
        reverse("workorders:task_add", args=[wo.pk]),
        {"kind": K.FILTER_CHANGE, "filter": str(fine.pk)},
    )
    assert response.status_code == 302
    added = wo.tasks.exclude(pk=primary_task.pk).get()
    assert added.component == fine and added.due_item is None
    # An added task is bound to nothing: its filter may be chosen.
    primary = fitted(unit, ComponentKind.PRIMARY_FILTER)
    as_mechanic.post(
        reverse("workorders:task_save", args=[added.pk]), {"filter": str(primary.pk)}, **HTMX
    )
    added.refresh_from_db()
    assert added.component == primary
    assert WorkOrder.objects.count() == 1
