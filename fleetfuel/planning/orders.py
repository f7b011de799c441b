"""Turn due items into work orders: one work order per unit, one task per item."""

from __future__ import annotations

import uuid
from collections import defaultdict
from dataclasses import dataclass
from datetime import date
from typing import Any

from django.contrib.auth.models import User
from django.db import transaction
from django.db.models import Count, Q
from django.utils import timezone

from fleetfuel.accounts.models import Role
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask

from .models import DueItem

TASK_KIND = {
    DueItem.Task.PRIMARY_FILTER: WorkOrderTask.Kind.FILTER_CHANGE,
    DueItem.Task.FINE_FILTER: WorkOrderTask.Kind.FILTER_CHANGE,
    DueItem.Task.SEPARATOR_DRAIN: WorkOrderTask.Kind.SEPARATOR_DRAIN,
}
PRIORITY = {
    DueItem.Status.OVERDUE: WorkOrder.Priority.URGENT,
    DueItem.Status.DUE: WorkOrder.Priority.HIGH,
}


class WorkOrderCreateError(Exception):
    pass


@dataclass(frozen=True)
class CreatedOrders:
    orders: list[WorkOrder]
    skipped: list[str]  # items already in an open work order, in words


def mechanic_for_site(site_id: int) -> User | None:
    """The site's mechanic with the fewest open work orders (ties: by username)."""
    return (
        User.objects.filter(is_active=True, groups__name=Role.MECHANIC, profile__sites__id=site_id)
        .annotate(
            open_orders=Count(
                "assigned_work_orders",
                filter=Q(assigned_work_orders__status=WorkOrder.Status.OPEN),
            )
        )
        .order_by("open_orders", "username")
        .first()
    )


def work_orders_from_due_items(
    *, item_ids: list[int], site_ids: list[int], created_by: Any, today: date
) -> CreatedOrders:
    """One work order per unit with one task per selected item, assigned to a mechanic of the
    unit's site, due on the earliest item's date (today for overdue items).

    Items already in an open work order are skipped and named. All or nothing.
    """
    if not item_ids:
        raise WorkOrderCreateError("Select at least one due item.")
    with transaction.atomic():
        items = list(
            DueItem.objects.select_for_update(of=("self",))
            .filter(pk__in=item_ids, unit__site_id__in=site_ids)
            .select_related("unit", "component")
            .order_by("unit_id", "due_on", "task")
        )
        if len(items) != len(set(item_ids)):
            raise WorkOrderCreateError(
                "Some selected items no longer exist or are not at your sites; reload the list."
            )
        busy = set(
            WorkOrderTask.objects.filter(
                due_item_id__in=item_ids, work_order__status=WorkOrder.Status.OPEN
            ).values_list("due_item_id", flat=True)
        )
        by_unit: dict[int, list[DueItem]] = defaultdict(list)
        skipped = []
        for item in items:
            if item.pk in busy:
                skipped.append(f"{item.unit.fleet_number}: {item.get_task_display()}")
            else:
                by_unit[item.unit_id].append(item)
        now = timezone.now()
        orders = []
        for unit_items in by_unit.values():
            unit = unit_items[0].unit
            order = WorkOrder.objects.create(
                number=f"tmp-{uuid.uuid4().hex[:12]}",
                unit=unit,
                priority=min(PRIORITY.get(i.status, WorkOrder.Priority.NORMAL) for i in unit_items),
                due_on=max(today, min(i.due_on for i in unit_items)),
                assigned_to=mechanic_for_site(unit.site_id),
                created_by=created_by,
                created_at=now,
            )
            order.number = f"WO-{order.pk:05d}"
            order.save(update_fields=["number"])
            WorkOrderTask.objects.bulk_create(
                WorkOrderTask(
                    work_order=order,
                    kind=TASK_KIND[DueItem.Task(i.task)],
                    component=i.component,
                    description=i.get_task_display(),
                    due_item=i,
                )
                for i in unit_items
            )
            orders.append(order)
        return CreatedOrders(orders=orders, skipped=skipped)
