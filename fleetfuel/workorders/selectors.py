"""Reads of the work-order app: one place per query shape, a fixed number of queries each."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Any

from django.db.models import Count, OuterRef, Q, QuerySet, Subquery
from django.db.models.functions import Coalesce

from fleetfuel.accounts.access import site_ids_for_user, user_role
from fleetfuel.accounts.models import Role
from fleetfuel.fleet.models import HIGH_PRESSURE_KINDS, Component, MeasurementLimit, MeterReading
from fleetfuel.planning.models import DueItem, UnitFlag

from .context import TaskContext
from .kinds import HIGH_PRESSURE_TASK_KINDS, ITEM_DOING_KINDS
from .models import WorkOrder, WorkOrderTask


def work_orders_visible(user: Any) -> QuerySet[WorkOrder]:
    """Every work order at the sites the user may see."""
    return WorkOrder.objects.filter(unit__site_id__in=site_ids_for_user(user))


def _with_counts(qs: QuerySet[WorkOrder]) -> QuerySet[WorkOrder]:
    flags = (
        UnitFlag.objects.filter(unit_id=OuterRef("unit_id"))
        .order_by()
        .values("unit_id")
        .annotate(n=Count("pk"))
        .values("n")
    )
    return qs.select_related("unit__site", "assigned_to").annotate(
        task_count=Count("tasks", distinct=True),
        hp_task_count=Count(
            "tasks",
            # As the page marks a task: by its kind, or by the part it works on.
            filter=Q(tasks__kind__in=HIGH_PRESSURE_TASK_KINDS)
            | Q(tasks__component__kind__in=HIGH_PRESSURE_KINDS),
            distinct=True,
        ),
        flag_count=Coalesce(Subquery(flags[:1]), 0),
    )


def my_work_for_user(user: Any) -> list[WorkOrder]:
    """Open work orders at the user's sites, most urgent first, then by due date.

    A mechanic sees those assigned to them and those not yet assigned to anyone; a manager
    sees every open work order at their sites. One query.
    """
    qs = work_orders_visible(user).filter(status=WorkOrder.Status.OPEN)
    if user_role(user) == Role.MECHANIC:
        qs = qs.filter(Q(assigned_to=user) | Q(assigned_to__isnull=True))
    return list(_with_counts(qs).order_by("priority", "due_on", "number"))


LIST_STATUSES = [("open", "Open"), ("closed", "Closed"), ("cancelled", "Cancelled"), ("", "All")]


def work_order_list(user: Any, *, status: str) -> QuerySet[WorkOrder]:
    qs = work_orders_visible(user)
    if status:
        qs = qs.filter(status=status)
    order = ["priority", "due_on", "number"] if status == "open" else ["-due_on", "number"]
    return _with_counts(qs).select_related("closed_by").order_by(*order)


def measurement_limits_for_class(unit_class_id: int) -> dict[int, MeasurementLimit]:
    return {
        lim.pk: lim
        for lim in MeasurementLimit.objects.filter(plan__unit_class_id=unit_class_id)
        .select_related("plan")
        .order_by("plan__component_kind", "name")
    }


def task_context(work_order: WorkOrder) -> TaskContext:
    unit = work_order.unit
    return TaskContext(
        system=unit.site.unit_system,
        cylinders=unit.cylinders,
        limits=measurement_limits_for_class(unit.unit_class_id),
        components=list(
            Component.objects.filter(unit_id=unit.pk, removed_on__isnull=True).order_by(
                "kind", "position"
            )
        ),
    )


def tasks_not_done(*, work_order: WorkOrder) -> list[WorkOrderTask]:
    """The work order's tasks marked not done, with who marked them. One query."""
    return list(
        work_order.tasks.filter(not_done_at__isnull=False)
        .select_related("not_done_by")
        .order_by("id")
    )


def last_meter_reading(unit_id: int) -> MeterReading | None:
    return MeterReading.objects.filter(unit_id=unit_id).order_by("-taken_at", "-pk").first()


@dataclass
class PageData:
    tasks: list[WorkOrderTask]
    flags: list[UnitFlag]
    due_items: list[DueItem]
    last_reading: MeterReading | None
    ctx: TaskContext
    follow_ups: list[WorkOrder]


def work_order_page(work_order: WorkOrder) -> PageData:
    unit_id = work_order.unit_id
    return PageData(
        tasks=list(
            work_order.tasks.select_related("component", "due_item", "not_done_by").order_by("id")
        ),
        flags=list(UnitFlag.objects.filter(unit_id=unit_id).order_by("code")),
        due_items=list(
            DueItem.objects.filter(unit_id=unit_id)
            .select_related("component")
            .order_by("rank", "due_on", "task")
        ),
        last_reading=last_meter_reading(unit_id),
        ctx=task_context(work_order),
        follow_ups=list(work_order.follow_ups.order_by("pk")),
    )


def _open_work_order_tasks() -> QuerySet[WorkOrderTask]:
    return WorkOrderTask.objects.filter(
        due_item__isnull=False, work_order__status=WorkOrder.Status.OPEN
    )


def due_item_open_work_order() -> dict[str, Any]:
    """Annotations of a due item (the outer row of a query): the open work order that holds
    it (``open_work_order_id``, ``open_work_order_number``; None when none). Subqueries of the
    same query: no query more."""
    held = _open_work_order_tasks().filter(due_item_id=OuterRef("pk")).order_by("work_order_id")
    return {
        "open_work_order_id": Subquery(held.values("work_order_id")[:1]),
        "open_work_order_number": Subquery(held.values("work_order__number")[:1]),
    }


def open_work_orders_holding(*, item_ids: list[int]) -> dict[int, WorkOrder]:
    """Which of these due items are tasks of an open work order, and of which. One query."""
    tasks = (
        _open_work_order_tasks()
        .filter(due_item_id__in=item_ids)
        .select_related("work_order")
        .order_by("work_order_id")
    )
    held: dict[int, WorkOrder] = {}
    for task in tasks:
        if task.due_item_id is not None:
            held.setdefault(task.due_item_id, task.work_order)
    return held


def tasks_settled_elsewhere(
    *, work_order: WorkOrder, tasks: list[WorkOrderTask]
) -> dict[int, WorkOrder]:
    """The open work order's tasks (of ``tasks``) whose due item another work order has done
    since this one was made: task id -> that work order. Done means a task of the same kind,
    or of a kind that does the item (a filter changed, a separator drained), recorded at a
    close. One query, none when no task comes from a due item."""
    pending = {
        t.pk: t for t in tasks if t.due_item_id is not None and not t.done and not t.is_not_done
    }
    if work_order.status != WorkOrder.Status.OPEN or not pending:
        return {}
    done = (
        WorkOrderTask.objects.filter(
            done=True,
            due_item_id__in={t.due_item_id for t in pending.values()},
            work_order__status=WorkOrder.Status.CLOSED,
            work_order__closed_at__gte=work_order.created_at,
        )
        .exclude(work_order_id=work_order.pk)
        .select_related("work_order")
        .order_by("work_order__closed_at", "pk")
    )
    by: dict[int, WorkOrder] = {}
    for other in done:
        for task in pending.values():
            same_item = other.due_item_id == task.due_item_id
            does_it = other.kind in ITEM_DOING_KINDS or other.kind == task.kind
            if same_item and does_it:
                by.setdefault(task.pk, other.work_order)
    return by
