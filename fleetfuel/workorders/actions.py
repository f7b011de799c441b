"""Writes of the work-order app before the close: work orders made from due items, drafts
saved as the mechanic goes, tasks added on the page and tasks marked not done (and undone).
The close itself is in close.py.

Every write locks the work order row first (``select_for_update``), so a draft save, a task
added and a close on the same work order queue up: nothing lands on a closed work order.
What a refused writer entered is appended to the work order's notes, never thrown away.
"""

from __future__ import annotations

import json
import uuid
from collections import defaultdict
from dataclasses import dataclass
from datetime import date, datetime
from typing import Any
from zoneinfo import ZoneInfo

from django.contrib.auth.models import User
from django.db import transaction
from django.db.models import Count, Q
from django.utils import timezone

from fleetfuel.accounts.models import Role
from fleetfuel.fleet.models import Unit
from fleetfuel.planning.models import DueItem
from services import bounds

from .forms import JobEntry, TaskDraft
from .kinds import Kind, kind_for_due_task
from .models import WorkOrder, WorkOrderTask
from .selectors import open_work_orders_holding
from .task_entries import NewTask


class WorkOrderNotOpen(Exception):
    """A write reached a work order that is no longer open."""

    def __init__(self, work_order: WorkOrder) -> None:
        self.work_order = work_order
        who = work_order.closed_by.get_username() if work_order.closed_by else "someone"
        when = work_order.closed_at
        super().__init__(
            f"Work order {work_order.number} was {work_order.get_status_display().lower()} "
            f"by {who}" + (f" at {when:%Y-%m-%d %H:%M} UTC" if when else "") + "."
        )


def person_name(user: Any) -> str:
    return (user.get_full_name() or user.get_username()) if user else "someone"


def local_time(dt: datetime, unit: Unit) -> datetime:
    return timezone.localtime(dt, ZoneInfo(unit.site.time_zone))


def note_append(work_order: WorkOrder, text: str) -> None:
    """Add ``text`` to the notes once, within their cap (services/bounds.py)."""
    notes = bounds.notes_append(notes=work_order.notes or "", text=text)
    if notes != work_order.notes:
        work_order.notes = notes
        work_order.save(update_fields=["notes"])


def lost_entry_note(
    *, work_order: WorkOrder, user: Any, now: datetime, what: str, entered: str
) -> str:
    unit = work_order.unit
    closed = (
        f"after {person_name(work_order.closed_by)} had closed it at "
        f"{local_time(work_order.closed_at, unit):%Y-%m-%d %H:%M}"
        if work_order.closed_at
        else f"after it was {work_order.get_status_display().lower()}"
    )
    return (
        f"[{local_time(now, unit):%Y-%m-%d %H:%M}] {person_name(user)} tried to {what} {closed}. "
        f"Not recorded; what they entered is kept here: {entered or '(nothing entered)'}"
    )


# --------------------------------------------------------------------------- drafts


def work_order_locked(work_order_id: int) -> WorkOrder:
    """The work order row, locked until the transaction ends, read after the lock is granted.

    Related rows are loaded by separate queries after the lock, never joined into the locking
    query: PostgreSQL re-reads only the locked row when it waited for the lock, so a joined
    user (closed_by) would be the stale one from before the other tablet's commit.
    """
    wo = WorkOrder.objects.select_for_update().get(pk=work_order_id)
    wo.unit = Unit.objects.select_related("site", "unit_class").get(pk=wo.unit_id)
    return wo


def _lock_open(
    work_order_id: int, *, user: Any, now: datetime, what: str, entered: str
) -> WorkOrder | None:
    """Lock the work order; if it is no longer open, note the refused entry and return None.

    Call inside a transaction. The note is written in that transaction, which the caller
    lets commit before raising WorkOrderNotOpen.
    """
    wo = work_order_locked(work_order_id)
    if wo.status == WorkOrder.Status.OPEN:
        return wo
    note_append(wo, lost_entry_note(work_order=wo, user=user, now=now, what=what, entered=entered))
    return None


def task_draft_save(
    *, task_id: int, user: Any, draft: TaskDraft, entered: str, now: datetime | None = None
) -> WorkOrderTask:
    """Save what the mechanic has entered so far on one task (a draft, not yet a record).

    Raises WorkOrderNotOpen when the work order closed meanwhile; the entry is then appended
    to the work order's notes.
    """
    now = now or timezone.now()
    task = WorkOrderTask.objects.get(pk=task_id)
    with transaction.atomic():
        wo = _lock_open(
            task.work_order_id,
            user=user,
            now=now,
            what=f"save task “{task.description}”",
            entered=entered,
        )
        if wo is not None:
            task.entry = draft.entry
            task.cylinder = draft.cylinder
            task.component_id = draft.component_id
            task.description = draft.description or task.description
            task.draft_saved_at = now
            task.save(
                update_fields=["entry", "cylinder", "component", "description", "draft_saved_at"]
            )
            return task
    raise WorkOrderNotOpen(WorkOrder.objects.select_related("closed_by").get(pk=task.work_order_id))


def job_draft_save(
    *, work_order_id: int, user: Any, job: JobEntry, entered: str, now: datetime | None = None
) -> WorkOrder:
    """Save the work order's own fields (hour meter, meter replacement, notes) as a draft."""
    now = now or timezone.now()
    with transaction.atomic():
        wo = _lock_open(
            work_order_id, user=user, now=now, what="save the job fields", entered=entered
        )
        if wo is not None:
            job_apply(wo, job, now)
            wo.save(update_fields=JOB_FIELDS)
            return wo
    raise WorkOrderNotOpen(WorkOrder.objects.select_related("closed_by").get(pk=work_order_id))


JOB_FIELDS = [
    "hour_meter",
    "meter_replaced",
    "meter_old_final",
    "meter_new_start",
    "notes",
    "job_saved_at",
]


def job_apply(wo: WorkOrder, job: JobEntry, now: datetime) -> None:
    if "hour_meter" not in job.errors:
        wo.hour_meter = job.hour_meter
    wo.meter_replaced = job.meter_replaced
    if "meter_old_final" not in job.errors:
        wo.meter_old_final = job.meter_old_final
    if "meter_new_start" not in job.errors:
        wo.meter_new_start = job.meter_new_start
    if job.notes is not None:
        wo.notes = job.notes
    wo.job_saved_at = now


def task_add(
    *, work_order_id: int, user: Any, new: NewTask, now: datetime | None = None
) -> WorkOrderTask:
    """Add a task the mechanic found necessary (e.g. a connector on cylinder 3)."""
    with transaction.atomic():
        wo = _lock_open(
            work_order_id,
            user=user,
            now=now or timezone.now(),
            what="add a task",
            entered=new.description,
        )
        if wo is not None:
            entry: dict[str, Any] = {"added_by": user.get_username()}
            if new.limit_id is not None:
                entry["limit_id"] = new.limit_id
            return WorkOrderTask.objects.create(
                work_order=wo,
                kind=new.kind,
                cylinder=new.cylinder,
                component_id=new.component_id,
                description=new.description,
                entry=entry,
            )
    raise WorkOrderNotOpen(WorkOrder.objects.select_related("closed_by").get(pk=work_order_id))


# --------------------------------------------------------------------------- not done


def task_not_done_mark(
    *, task_id: int, user: Any, reason: str, now: datetime | None = None
) -> WorkOrderTask:
    """Mark a task as not done at this job, with the written reason (already cleaned by
    ``forms.not_done_reason_clean``). Its draft entries are kept, for an undo.

    Raises WorkOrderNotOpen when the work order closed meanwhile; the reason is then appended
    to the work order's notes.
    """
    now = now or timezone.now()
    task = WorkOrderTask.objects.get(pk=task_id)
    with transaction.atomic():
        wo = _lock_open(
            task.work_order_id,
            user=user,
            now=now,
            what=f"mark task “{task.description}” not done",
            entered=f"reason: {reason}",
        )
        if wo is not None:
            task.not_done_reason = reason
            task.not_done_by = user
            task.not_done_at = now
            task.save(update_fields=NOT_DONE_FIELDS)
            return task
    raise WorkOrderNotOpen(WorkOrder.objects.select_related("closed_by").get(pk=task.work_order_id))


def task_not_done_undo(*, task_id: int, user: Any, now: datetime | None = None) -> WorkOrderTask:
    """The task is to be done after all: clear its reason; its fields are required again."""
    now = now or timezone.now()
    task = WorkOrderTask.objects.get(pk=task_id)
    with transaction.atomic():
        wo = _lock_open(
            task.work_order_id,
            user=user,
            now=now,
            what=f"undo “not done” on task “{task.description}”",
            entered="",
        )
        if wo is not None:
            task.not_done_reason = ""
            task.not_done_by = None
            task.not_done_at = None
            task.save(update_fields=NOT_DONE_FIELDS)
            return task
    raise WorkOrderNotOpen(WorkOrder.objects.select_related("closed_by").get(pk=task.work_order_id))


NOT_DONE_FIELDS = ["not_done_reason", "not_done_by", "not_done_at"]


def snapshot_text(data: dict[str, Any]) -> str:
    """A tablet's entries (field: value) as one line for the notes."""
    try:
        return json.dumps(data, ensure_ascii=False, sort_keys=True)[:4000]
    except (TypeError, ValueError):
        return ""


# --------------------------------------------------------------------------- from due items

PRIORITY = {
    DueItem.Status.OVERDUE: WorkOrder.Priority.URGENT,
    DueItem.Status.CHECK: WorkOrder.Priority.HIGH,  # a dP reading first, then maybe the change
    DueItem.Status.DUE: WorkOrder.Priority.HIGH,
}


class WorkOrderCreateError(Exception):
    pass


@dataclass(frozen=True)
class CreatedOrders:
    orders: list[WorkOrder]


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
    *,
    item_ids: list[int],
    site_ids: list[int],
    created_by: Any,
    today: date,
    now: datetime | None = None,
) -> CreatedOrders:
    """One work order per unit with one task per selected item, assigned to a mechanic of the
    unit's site, due on the earliest item's date (today for overdue items).

    An item already in an open work order is never put in another: the whole selection is
    refused, naming the item and the work order that holds it. The items' rows are locked
    first (``select_for_update``), so of two managers picking the same item at once the second
    waits, then sees the first one's work order and is refused. All or nothing.
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
        # Read after the locks are granted: a work order committed meanwhile is seen.
        held = open_work_orders_holding(item_ids=item_ids)
        if held:
            raise WorkOrderCreateError(held_refusal(items, held))
        by_unit: dict[int, list[DueItem]] = defaultdict(list)
        for item in items:
            by_unit[item.unit_id].append(item)
        now = now or timezone.now()
        orders = [
            _work_order_from_items(unit_items, created_by=created_by, today=today, now=now)
            for unit_items in by_unit.values()
        ]
        return CreatedOrders(orders=orders)


def held_refusal(items: list[DueItem], held: dict[int, WorkOrder]) -> str:
    """Why a selection was refused: each item already in an open work order, and which."""
    named = "; ".join(
        f"{i.unit.fleet_number}: {i.get_task_display()} is in open work order {held[i.pk].number}"
        for i in items
        if i.pk in held
    )
    return (
        f"No work order was made. An item already in an open work order cannot be put in "
        f"another: {named}. Untick it, or add to that work order."
    )


def _work_order_from_items(
    unit_items: list[DueItem], *, created_by: Any, today: date, now: datetime
) -> WorkOrder:
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
            # An item waiting on a check gets the check, which then confirms or re-bases it.
            kind=Kind.FILTER_CHECK
            if i.status == DueItem.Status.CHECK
            else kind_for_due_task(i.task),
            component=i.component,
            description=(
                f"Check dP first: {i.get_task_display()}"
                if i.status == DueItem.Status.CHECK
                else i.get_task_display()
            ),
            due_item=i,
        )
        for i in unit_items
    )
    return order
