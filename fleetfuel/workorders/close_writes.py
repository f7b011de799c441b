"""What a close writes, inside its transaction (close.py): the hour-meter reading (and a
meter replacement), one service event per task done through the ledger (kind and fields from
the registry, kinds.py), the renewed parts, and the follow-up work order."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import date, datetime, timedelta
from typing import Any

from fleetfuel.fleet.models import Component, MeterReading, MeterReplacement
from fleetfuel.ledger.actions import service_event_append
from fleetfuel.ledger.models import ServiceEvent
from services import rules

from .actions import local_time
from .context import TaskContext
from .kinds import Kind, kind_spec
from .models import WorkOrder, WorkOrderTask
from .task_entries import task_component, task_event_fields


@dataclass
class CloseVisit:
    """What the close reads of an open work order, under its lock."""

    ctx: TaskContext
    tasks: list[WorkOrderTask]  # to record
    not_done: list[WorkOrderTask]  # left out
    settled: list[tuple[WorkOrderTask, WorkOrder]]  # left out: the work order that did it
    last: MeterReading | None
    closed: list[rules.ClosedTask]
    violations: list[rules.RuleViolation]
    problems: list[str]


def records_write(
    *,
    wo: WorkOrder,
    user: Any,
    visit: CloseVisit,
    now: datetime,
) -> WorkOrder | None:
    """Write the readings, the service events, the renewed parts and the follow-up (inside
    the caller's transaction). The planning recompute is enqueued on commit by the ledger's
    signal."""
    common = {
        "unit": wo.unit,
        "performed_at": now,
        "recorded_by": user,
        "recorded_at": now,
        "hour_meter": wo.hour_meter,
        "work_order": wo,
    }
    if wo.hour_meter is not None:  # always, but where another work order did everything
        _meter_write(wo, last=visit.last, now=now, common=common)
    today = local_time(now, wo.unit).date()
    for task in visit.tasks:
        _task_event_write(task, visit.ctx, common=common, today=today)
    # Tasks marked not done stay not done: their due items remain due.
    WorkOrderTask.objects.filter(pk__in=[t.pk for t in visit.tasks]).update(done=True)
    if not rules.follow_ups(tasks=visit.closed):
        return None
    return _follow_up_create(wo=wo, user=user, visit=visit, now=now)


def _meter_write(
    wo: WorkOrder, *, last: MeterReading | None, now: datetime, common: dict[str, Any]
) -> None:
    """The reading at the job, after a meter replacement when one was made."""
    if wo.meter_replaced:
        old_final = (
            wo.meter_old_final if wo.meter_old_final is not None else last.hours if last else 0
        )
        MeterReplacement.objects.create(
            unit=wo.unit,
            replaced_at=now,
            old_meter_final=old_final,
            new_meter_start=wo.meter_new_start or 0.0,
            note=f"Work order {wo.number}",
        )
        service_event_append(
            kind=ServiceEvent.Kind.METER_REPLACED,
            notes=(
                f"Old meter's final reading {old_final:g} h; new meter started at "
                f"{wo.meter_new_start or 0:g} h."
            ),
            **common,
        )
    MeterReading.objects.create(
        unit=wo.unit, taken_at=now, hours=wo.hour_meter, source=MeterReading.Source.WORK_ORDER
    )


def _task_event_write(
    task: WorkOrderTask, ctx: TaskContext, *, common: dict[str, Any], today: date
) -> None:
    """The task's service event, its fields as its kind builds them; a renewed part."""
    spec = kind_spec(task.kind)
    comp = task_component(task, ctx)
    service_event_append(kind=spec.event_kind, **task_event_fields(task, ctx, comp), **common)
    if spec.records is not None:
        spec.records(task, comp, common["performed_at"], common["hour_meter"])
    if comp is not None and spec.renews_component:
        _component_renew(comp, task, today=today, hours=common["hour_meter"])


def _component_renew(
    comp: Component, task: WorkOrderTask, *, today: date, hours: float | None
) -> None:
    """The fitted part is now the new one: its serial, part number and fitting point."""
    entry = task.entry
    comp.installed_on = today
    comp.installed_hours = hours if hours is not None else comp.installed_hours
    update = ["installed_on", "installed_hours"]
    if entry.get("new_serial"):
        comp.serial = str(entry["new_serial"])
        update.append("serial")
    if entry.get("part_number"):
        comp.part_number = str(entry["part_number"])
        update.append("part_number")
    comp.save(update_fields=update)


def _follow_up_number(wo: WorkOrder) -> str:
    number = f"{wo.number}-F"
    if len(number) > 20 or WorkOrder.objects.filter(number=number).exists():
        number = f"FU-{wo.pk}"
    return number


def _follow_up_create(*, wo: WorkOrder, user: Any, visit: CloseVisit, now: datetime) -> WorkOrder:
    follow_up = WorkOrder.objects.create(
        number=_follow_up_number(wo),
        unit=wo.unit,
        priority=WorkOrder.Priority.HIGH,
        due_on=local_time(now, wo.unit).date() + timedelta(days=1),
        assigned_to=wo.assigned_to,
        created_by=user,
        created_at=now,
        follow_up_of=wo,
        notes=f"Created when {wo.number} closed: a measurement was outside its limits.",
    )
    for task, ct in zip(visit.tasks, visit.closed, strict=True):
        (text,) = rules.follow_ups(tasks=[ct]) or (None,)
        if text is None:
            continue
        limit = visit.ctx.limit_for(task)
        WorkOrderTask.objects.create(
            work_order=follow_up,
            kind=Kind.MEASUREMENT,
            cylinder=task.cylinder,
            description=text[:200],
            entry={"limit_id": limit.pk} if limit else {},
        )
    return follow_up
