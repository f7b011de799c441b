"""Closing a work order: the rules (services/rules.py), the manager's override, idempotency
and the race between two tablets. What a close writes is in close_records.py.

Of two tablets closing at once exactly one wins (the row lock); the other is told who closed
it and when, and what it entered is appended to the notes. A retried POST with the same
client token records nothing twice and gets the same outcome back.

Tasks marked not done (``WorkOrderTask.not_done_at``, with a written reason) are left out of
the close: they need no fields, take no part in the rules, write no service event and keep
``done`` False, so their due items stay due and can go on a later work order. The close
appends one line per such task to the work order's notes ("Not done: <task> — <reason>
(<who>)"); the task keeps its reason, who and when. A work order whose every task is marked
not done still closes: the visit happened, so its hour-meter reading is recorded (nothing
else is). Only a work order with no task at all is refused.
"""

from __future__ import annotations

import uuid
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any

from django.db import transaction
from django.utils import timezone

from fleetfuel.accounts.access import user_role
from fleetfuel.fleet.models import MeasurementLimit, MeterReading
from fleetfuel.ledger.actions import service_event_append
from fleetfuel.ledger.models import ServiceEvent
from services import rules

from .actions import (
    JOB_FIELDS,
    job_apply,
    local_time,
    lost_entry_note,
    not_done_note,
    note_append,
    person_name,
    work_order_locked,
)
from .close_records import close_records_write
from .forms import RULE_KIND, JobEntry, TaskContext, task_missing
from .models import WorkOrder, WorkOrderTask
from .selectors import last_meter_reading, task_context


@dataclass
class CloseOutcome:
    """What a close attempt came to.

    ``result``: "closed" (now, or earlier with the same token: ``replay``), "refused"
    (rules or missing entries; nothing recorded), or "closed_by_other" (another tablet won;
    this one's entry went into the notes).
    """

    result: str
    work_order: WorkOrder
    violations: list[rules.RuleViolation] = field(default_factory=list)
    problems: list[str] = field(default_factory=list)
    message: str = ""
    replay: bool = False
    forbidden: bool = False  # an override asked for by someone who may not override
    follow_up: WorkOrder | None = None
    not_done: list[WorkOrderTask] = field(default_factory=list)  # left out, still due


def closed_task(task: WorkOrderTask, ctx: TaskContext) -> rules.ClosedTask:
    limit = ctx.limit_for(task)
    value = task.record.get("value")
    is_measurement = task.kind == WorkOrderTask.Kind.MEASUREMENT
    return rules.ClosedTask(
        kind=RULE_KIND[WorkOrderTask.Kind(task.kind)],
        cylinder=task.cylinder,
        value=float(value) if is_measurement and isinstance(value, int | float) else None,
        low_limit=limit.low if is_measurement and limit else None,
        high_limit=limit.high if is_measurement and limit else None,
        label=_measurement_label(limit) if is_measurement and limit else task.description,
    )


UNIT_WORDS = {"pressure_bar_gauge": "bar gauge", "volume_ml": "mL", "flow_l_per_h": "L/h"}


def _measurement_label(limit: MeasurementLimit) -> str:
    return f"{limit.name} ({UNIT_WORDS.get(limit.quantity, limit.quantity)})"


def _meter_problems(wo: WorkOrder, last: MeterReading | None) -> list[str]:
    problems = []
    if wo.hour_meter is None:
        problems.append("Enter the hour meter reading at the job.")
    if wo.meter_replaced:
        if wo.meter_new_start is None:
            problems.append("Meter replaced: enter the new meter's reading when it was fitted.")
        elif wo.hour_meter is not None and wo.hour_meter < wo.meter_new_start:
            problems.append(
                f"The hour meter ({wo.hour_meter:,.1f} h) is below the new meter's starting "
                f"reading ({wo.meter_new_start:,.1f} h)."
            )
        if wo.meter_old_final is not None and last is not None and wo.meter_old_final < last.hours:
            problems.append(
                f"The old meter's final reading ({wo.meter_old_final:,.1f} h) is below its last "
                f"recorded reading ({last.hours:,.1f} h)."
            )
    return problems


def _entered_text(wo: WorkOrder, job: JobEntry | None, override_reason: str, snapshot: str) -> str:
    parts = []
    if job is not None:
        if job.hour_meter is not None:
            parts.append(f"hour meter {job.hour_meter:g} h")
        if job.meter_replaced:
            parts.append(
                f"meter replaced (old final {job.meter_old_final}, new start {job.meter_new_start})"
            )
        if job.notes and job.notes.strip() != wo.notes.strip():
            parts.append(f"notes: {job.notes.strip()}")
    if override_reason.strip():
        parts.append(f"override reason: {override_reason.strip()}")
    if snapshot.strip():
        parts.append(f"task entries on the tablet: {snapshot.strip()}")
    return "; ".join(parts)


def work_order_close(
    *,
    work_order_id: int,
    user: Any,
    token: str,
    job: JobEntry | None = None,
    override: bool = False,
    override_reason: str = "",
    snapshot: str = "",
    now: datetime | None = None,
) -> CloseOutcome:
    """Close a work order: check the rules, then write everything in one transaction.

    ``token`` comes from the close form (made when the page rendered). A retried POST with
    the same token records nothing twice and gets the same outcome back. ``job`` carries the
    hour meter and notes as posted with the close (they replace the draft). ``override``
    asks to close despite overridable rule violations, with ``override_reason``; only a
    manager may. ``snapshot`` is what the tablet had on screen, kept in the notes if another
    tablet closed the work order first.
    """
    now = now or timezone.now()
    token = (token or "").strip()[:64] or uuid.uuid4().hex
    prior = (
        WorkOrder.objects.filter(close_token=token)
        .select_related("unit__site", "closed_by", "override_by")
        .first()
    )
    if prior is not None:
        if prior.pk != work_order_id:
            raise ValueError("This close form belongs to another work order.")
        return _replay(prior)

    if job is not None:
        # Keep what came with the close as the draft first, in its own transaction, so a
        # failure further on loses none of it.
        with transaction.atomic():
            draft = work_order_locked(work_order_id)
            if draft.status == WorkOrder.Status.OPEN:
                job_apply(draft, job, now)
                draft.save(update_fields=JOB_FIELDS)

    with transaction.atomic():
        wo = work_order_locked(work_order_id)
        if wo.status != WorkOrder.Status.OPEN:
            if wo.close_token == token:
                return _replay(wo)
            entered = _entered_text(wo, job, override_reason, snapshot)
            note_append(
                wo,
                lost_entry_note(
                    work_order=wo, user=user, now=now, what="close it", entered=entered
                ),
            )
            who = person_name(wo.closed_by)
            when = local_time(wo.closed_at, wo.unit) if wo.closed_at else None
            return CloseOutcome(
                result="closed_by_other",
                work_order=wo,
                message=(
                    f"{who} closed this work order"
                    + (f" at {when:%H:%M} on {when:%Y-%m-%d}" if when else "")
                    + ". Nothing you entered was lost: it has been added to the work order's "
                    "notes."
                ),
            )

        unit = wo.unit
        ctx = task_context(wo)
        every = list(wo.tasks.select_related("component", "not_done_by").order_by("id"))
        tasks = [t for t in every if not t.is_not_done]
        not_done = [t for t in every if t.is_not_done]
        last = last_meter_reading(unit.pk)
        problems = [m for t in tasks for m in task_missing(t, ctx)]
        problems += _meter_problems(wo, last)
        if not every:
            problems.append("There is nothing recorded on this work order: add a task first.")
        closed = [closed_task(t, ctx) for t in tasks]
        violations = rules.close_violations(
            tasks=closed,
            hour_meter=wo.hour_meter,
            last_hour_meter=last.hours if last else None,
            meter_replaced=wo.meter_replaced,
            cylinders=unit.cylinders,
        )
        overridden: list[rules.RuleViolation] = []
        if violations or problems:
            if not override:
                return CloseOutcome(
                    result="refused",
                    work_order=wo,
                    violations=violations,
                    problems=problems,
                    message="The work order cannot close yet.",
                )
            ok, message = rules.override_allowed(
                violations=violations, role=user_role(user) or "", reason=override_reason
            )
            if not ok or problems:
                return CloseOutcome(
                    result="refused",
                    work_order=wo,
                    violations=violations,
                    problems=problems,
                    message=message if not ok else "Fill in what is missing first.",
                    forbidden=user_role(user) != "manager",
                )
            overridden = violations

        follow_up = close_records_write(
            wo=wo, user=user, token=token, tasks=tasks, ctx=ctx, closed=closed, last=last, now=now
        )
        if not_done:
            note_append(wo, "\n".join(not_done_note(task=t) for t in not_done))
        if overridden:
            wo.override_reason = override_reason.strip()
            wo.override_by = user
            service_event_append(
                unit=unit,
                kind=ServiceEvent.Kind.RULE_OVERRIDE,
                performed_at=now,
                recorded_by=user,
                recorded_at=now,
                hour_meter=wo.hour_meter,
                cylinder=overridden[0].cylinder if len(overridden) == 1 else None,
                notes=" ".join(v.message for v in overridden),
                reason=wo.override_reason,
                work_order=wo,
            )
        wo.status = WorkOrder.Status.CLOSED
        wo.closed_at = now
        wo.closed_by = user
        wo.close_token = token
        wo.save(
            update_fields=[
                "status",
                "closed_at",
                "closed_by",
                "close_token",
                "override_reason",
                "override_by",
            ]
        )
        return CloseOutcome(
            result="closed",
            work_order=wo,
            violations=overridden,
            message=f"Work order {wo.number} closed.",
            follow_up=follow_up,
            not_done=not_done,
        )


def _replay(wo: WorkOrder) -> CloseOutcome:
    return CloseOutcome(
        result="closed",
        work_order=wo,
        message=f"Work order {wo.number} closed.",
        replay=True,
        follow_up=wo.follow_ups.order_by("pk").first(),
        not_done=list(wo.tasks.filter(not_done_at__isnull=False).order_by("id")),
    )
