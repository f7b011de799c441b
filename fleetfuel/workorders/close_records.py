"""What a close writes, inside the close's transaction: the hour-meter reading (and a meter
replacement), one service event per task done through the ledger, the renewed components, and
the follow-up work order. Tasks marked not done are never passed in (closing.py).

Follow-ups: a measurement outside its limits creates ONE new open work order for the same
unit (priority High, due the next day, same assignee, ``follow_up_of`` pointing back), with a
measurement task per out-of-limit value so the re-measurement is recorded against the same
limit. A new work order rather than a new task: the closed one stays closed and its record
complete, and the follow-up shows in the mechanic's list and the manager's open list.
"""

from __future__ import annotations

from datetime import datetime, timedelta
from typing import Any

from fleetfuel.fleet.models import Component, ComponentKind, MeterReading, MeterReplacement
from fleetfuel.ledger.actions import service_event_append
from fleetfuel.ledger.models import ServiceEvent
from services import rules

from .actions import local_time
from .forms import EVENT_KIND, TaskContext
from .models import WorkOrder, WorkOrderTask
from .quantities import measurement_passed


def close_records_write(
    *,
    wo: WorkOrder,
    user: Any,
    token: str,
    tasks: list[WorkOrderTask],
    ctx: TaskContext,
    closed: list[rules.ClosedTask],
    last: MeterReading | None,
    now: datetime,
) -> WorkOrder | None:
    """Write the readings, the service events and the follow-up (inside the caller's
    transaction). The planning recompute is enqueued on commit by the ledger's signal."""
    unit = wo.unit
    hours = wo.hour_meter
    today = local_time(now, unit).date()
    common = {
        "unit": unit,
        "performed_at": now,
        "recorded_by": user,
        "recorded_at": now,
        "hour_meter": hours,
        "work_order": wo,
    }
    if wo.meter_replaced:
        old_final = (
            wo.meter_old_final if wo.meter_old_final is not None else last.hours if last else 0
        )
        MeterReplacement.objects.create(
            unit=unit,
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
        unit=unit, taken_at=now, hours=hours, source=MeterReading.Source.WORK_ORDER
    )

    for task in tasks:
        rec = task.record
        kind = WorkOrderTask.Kind(task.kind)
        comp = ctx.component_for(task)
        fields: dict[str, Any] = {
            "parts_used": str(rec.get("parts_used") or ""),
            "notes": str(rec.get("notes") or ""),
        }
        if comp is not None:
            fields["component"] = comp
            fields["component_kind"] = comp.kind
        match kind:
            case WorkOrderTask.Kind.FILTER_CHANGE:
                fields["part_number"] = str(rec.get("part_number") or "")
                fields["dp_before_bar"] = rec.get("dp_before_bar")
            case WorkOrderTask.Kind.SEPARATOR_DRAIN:
                fields["component_kind"] = ComponentKind.PRIMARY_FILTER
                fields["water_ml"] = rec.get("water_ml")
                fields["water_appearance"] = str(rec.get("appearance") or "")
            case WorkOrderTask.Kind.INJECTOR_REPLACE:
                fields["cylinder"] = task.cylinder
                fields["component_kind"] = ComponentKind.INJECTOR
                fields["old_serial"] = str(rec.get("old_serial") or (comp.serial if comp else ""))
                fields["new_serial"] = str(rec.get("new_serial") or "")
                fields["part_number"] = str(rec.get("part_number") or "")
            case WorkOrderTask.Kind.CONNECTOR_REPLACE:
                fields["cylinder"] = task.cylinder
                fields["component_kind"] = ComponentKind.HP_CONNECTOR
                fields["part_number"] = str(rec.get("part_number") or "")
            case WorkOrderTask.Kind.RELIEF_VALVE_REPLACE:
                fields["component_kind"] = ComponentKind.RELIEF_VALVE
                fields["part_number"] = str(rec.get("part_number") or "")
            case WorkOrderTask.Kind.MEASUREMENT:
                limit = ctx.limit_for(task)
                value = rec.get("value")
                fields["cylinder"] = task.cylinder
                fields["measurement_name"] = limit.name if limit else task.description[:80]
                fields["value"] = value
                fields["low_limit"] = limit.low if limit else None
                fields["high_limit"] = limit.high if limit else None
                fields["passed"] = measurement_passed(value, limit)
                if limit is not None and comp is None:
                    fields["component_kind"] = limit.plan.component_kind
            case WorkOrderTask.Kind.INSPECTION:
                findings = str(rec.get("findings") or "")
                fields["notes"] = "\n".join(x for x in (findings, fields["notes"]) if x)
        service_event_append(kind=EVENT_KIND[kind], **fields, **common)
        if comp is not None and kind in COMPONENT_REPLACING:
            _component_renew(comp, task, today=today, hours=hours)

    # Tasks marked not done stay not done: their due items remain due.
    WorkOrderTask.objects.filter(pk__in=[t.pk for t in tasks]).update(done=True)
    descriptions = rules.follow_ups(tasks=closed)
    if not descriptions:
        return None
    return _follow_up_create(wo=wo, user=user, tasks=tasks, closed=closed, ctx=ctx, now=now)


COMPONENT_REPLACING = frozenset(
    {
        WorkOrderTask.Kind.FILTER_CHANGE,
        WorkOrderTask.Kind.INJECTOR_REPLACE,
        WorkOrderTask.Kind.CONNECTOR_REPLACE,
        WorkOrderTask.Kind.RELIEF_VALVE_REPLACE,
    }
)


def _component_renew(
    comp: Component, task: WorkOrderTask, *, today: Any, hours: float | None
) -> None:
    """The fitted part is now the new one: its serial, part number and fitting point."""
    rec = task.record
    comp.installed_on = today
    comp.installed_hours = hours if hours is not None else comp.installed_hours
    update = ["installed_on", "installed_hours"]
    if task.kind == WorkOrderTask.Kind.INJECTOR_REPLACE and rec.get("new_serial"):
        comp.serial = str(rec["new_serial"])
        update.append("serial")
    if rec.get("part_number"):
        comp.part_number = str(rec["part_number"])
        update.append("part_number")
    comp.save(update_fields=update)


def _follow_up_number(wo: WorkOrder) -> str:
    number = f"{wo.number}-F"
    if len(number) > 20 or WorkOrder.objects.filter(number=number).exists():
        number = f"FU-{wo.pk}"
    return number


def _follow_up_create(
    *,
    wo: WorkOrder,
    user: Any,
    tasks: list[WorkOrderTask],
    closed: list[rules.ClosedTask],
    ctx: TaskContext,
    now: datetime,
) -> WorkOrder:
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
    for task, ct in zip(tasks, closed, strict=True):
        (text,) = rules.follow_ups(tasks=[ct]) or (None,)
        if text is None:
            continue
        limit = ctx.limit_for(task)
        WorkOrderTask.objects.create(
            work_order=follow_up,
            kind=WorkOrderTask.Kind.MEASUREMENT,
            cylinder=task.cylinder,
            description=text[:200],
            record={"limit_id": limit.pk} if limit else {},
        )
    return follow_up
