"""Closing a work order: the rules (services/rules.py, services/hour_meter.py), the manager's
override, idempotency, the race between two tablets, and what a close writes.

Of two tablets closing at once exactly one wins (the row lock); the other is told who closed
it and when, and what it entered is appended to the notes. A retried POST with the same
client token records nothing twice and gets the same outcome back.

A close writes, in one transaction: the hour-meter reading (and a meter replacement), one
service event per task done through the ledger (kind and fields from the registry,
kinds.py), the renewed parts, and the follow-up work order.

Tasks marked not done (with a written reason) are left out: no fields, no rules, no service
event, ``done`` stays False, so their due items stay due. The close notes one line per such
task ("Not done: <task> — <reason> (<who>)"). A work order whose every task is not done still
closes (the visit happened: its hour-meter reading is recorded); one with no task is refused.

Follow-ups: measurements outside their limits create ONE new open work order for the unit
(priority High, due the next day, same assignee, ``follow_up_of`` pointing back) with a
measurement task per out-of-limit value, against the same limit. A new work order rather than
a new task: the closed one stays closed and complete, and the follow-up shows in the lists.
"""

from __future__ import annotations

import uuid
from dataclasses import dataclass, field
from datetime import datetime
from typing import Any
from zoneinfo import ZoneInfo

from django.db import transaction
from django.utils import timezone

from fleetfuel.accounts.access import user_role
from fleetfuel.fleet.checks import meter_reading_refusal
from fleetfuel.ledger.actions import service_event_append
from fleetfuel.ledger.models import ServiceEvent
from services import hour_meter, rules

from .actions import (
    JOB_FIELDS,
    job_apply,
    local_time,
    lost_entry_note,
    note_append,
    person_name,
    work_order_locked,
)
from .close_writes import CloseVisit, records_write
from .forms import JobEntry
from .models import WorkOrder, WorkOrderTask
from .selectors import last_meter_reading, task_context, tasks_settled_elsewhere
from .task_entries import closed_task, task_missing


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


def not_done_note(*, task: WorkOrderTask) -> str:
    """The line a close appends to the work order's notes for a task not done."""
    return (
        f"Not done: {task.description} — {task.not_done_reason} ({person_name(task.not_done_by)})"
    )


def settled_note(*, task: WorkOrderTask, by: WorkOrder) -> str:
    """The line a close appends for a task whose item another work order did."""
    return f"Done in work order {by.number}: {task.description} (not recorded again here)"


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

    if job is not None:  # kept as the draft first: a failure further on loses none of it
        job_draft_keep(work_order_id=work_order_id, job=job, now=now)

    with transaction.atomic():
        wo = work_order_locked(work_order_id)
        if wo.status != WorkOrder.Status.OPEN:
            if wo.close_token == token:
                return _replay(wo)
            entered = entered_text(
                work_order=wo, job=job, override_reason=override_reason, snapshot=snapshot
            )
            return _closed_by_other(wo, user=user, now=now, entered=entered)
        visit = _visit_read(wo, now=now)
        if visit.violations or visit.problems:
            refusal = _refusal(wo, visit, user=user, override=override, reason=override_reason)
            if refusal is not None:
                return refusal  # else every violation is overridden
        follow_up = records_write(wo=wo, user=user, visit=visit, now=now)
        _close_mark(wo, user=user, token=token, visit=visit, reason=override_reason, now=now)
        return CloseOutcome(
            result="closed",
            work_order=wo,
            violations=visit.violations,
            message=f"Work order {wo.number} closed.",
            follow_up=follow_up,
            not_done=visit.not_done,
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


def _closed_by_other(wo: WorkOrder, *, user: Any, now: datetime, entered: str) -> CloseOutcome:
    """Another tablet closed it first: keep this one's entry in the notes and say who."""
    note_append(
        wo, lost_entry_note(work_order=wo, user=user, now=now, what="close it", entered=entered)
    )
    who = person_name(wo.closed_by)
    when = local_time(wo.closed_at, wo.unit) if wo.closed_at else None
    return CloseOutcome(
        result="closed_by_other",
        work_order=wo,
        message=(
            f"{who} closed this work order"
            + (f" at {when:%H:%M} on {when:%Y-%m-%d}" if when else "")
            + ". Nothing you entered was lost: it has been added to the work order's notes."
        ),
    )


def _visit_read(wo: WorkOrder, *, now: datetime) -> CloseVisit:
    """The tasks, the last reading, what is missing and what the rules say. A task whose
    due item another work order has done since is left out, like a task not done; a work
    order with nothing else left records no visit (no hour meter asked)."""
    ctx = task_context(wo)
    every = list(wo.tasks.select_related("component", "due_item", "not_done_by").order_by("id"))
    settled = tasks_settled_elsewhere(work_order=wo, tasks=every)
    tasks = [t for t in every if not t.is_not_done and t.pk not in settled]
    settled_pairs = [(t, settled[t.pk]) for t in every if t.pk in settled]
    not_done = [t for t in every if t.is_not_done]
    last = last_meter_reading(wo.unit_id)
    problems = [m for t in tasks for m in task_missing(t, ctx)]
    if tasks or not_done:
        problems += hour_meter.meter_entry_problems(
            hour_meter=wo.hour_meter,
            meter_replaced=wo.meter_replaced,
            meter_old_final=wo.meter_old_final,
            meter_new_start=wo.meter_new_start,
            last_hours=last.hours if last else None,
        )
    if not every:
        problems.append("There is nothing recorded on this work order: add a task first.")
    closed = [closed_task(t, ctx) for t in tasks]
    violations = rules.close_violations(
        tasks=closed,
        hour_meter=wo.hour_meter,
        last_hour_meter=last.hours if last else None,
        meter_replaced=wo.meter_replaced,
        cylinders=wo.unit.cylinders,
    )
    problems += _meter_implausible(wo, violations=violations, now=now)
    return CloseVisit(
        ctx=ctx,
        tasks=tasks,
        not_done=not_done,
        settled=settled_pairs,
        last=last,
        closed=closed,
        violations=violations,
        problems=problems,
    )


def _meter_implausible(
    wo: WorkOrder, *, violations: list[rules.RuleViolation], now: datetime
) -> list[str]:
    """The plausibility rule every intake path shares (``fleet.checks``), for the reading the
    close records at ``now``. A meter replaced at this job starts again (its own checks are in
    ``meter_entry_problems``); a reading below the last is the closing rule's violation."""
    if wo.meter_replaced or wo.hour_meter is None:
        return []
    if any(v.code == "hour_meter_backwards" for v in violations):
        return []
    zone = ZoneInfo(wo.unit.site.time_zone)
    refusal = meter_reading_refusal(unit=wo.unit, at=now, hours=wo.hour_meter, now=now, zone=zone)
    return [refusal] if refusal else []


def _refusal(
    wo: WorkOrder, visit: CloseVisit, *, user: Any, override: bool, reason: str
) -> CloseOutcome | None:
    """Why the close is refused, or None when a permitted override lets it through."""
    refused = CloseOutcome(
        result="refused",
        work_order=wo,
        violations=visit.violations,
        problems=visit.problems,
        message="The work order cannot close yet.",
    )
    if not override:
        return refused
    role = user_role(user)
    ok, message = rules.override_allowed(violations=visit.violations, role=role, reason=reason)
    if ok and not visit.problems:
        return None
    refused.message = message if not ok else "Fill in what is missing first."
    refused.forbidden = not rules.override_permitted(role=role)
    return refused


def _close_mark(
    wo: WorkOrder,
    *,
    user: Any,
    token: str,
    visit: CloseVisit,
    reason: str,
    now: datetime,
) -> None:
    """The work order is closed, by whom and when; tasks not done are noted, an override (of
    the violations a close still has) is recorded in the ledger."""
    overridden = visit.violations
    lines = [settled_note(task=t, by=by) for t, by in visit.settled]
    lines += [not_done_note(task=t) for t in visit.not_done]
    if lines:
        note_append(wo, "\n".join(lines))
    if overridden:
        wo.override_reason = reason.strip()
        wo.override_by = user
        service_event_append(
            unit=wo.unit,
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
    fields = ["status", "closed_at", "closed_by", "close_token", "override_reason", "override_by"]
    wo.save(update_fields=fields)


def job_draft_keep(*, work_order_id: int, job: JobEntry, now: datetime) -> None:
    """Keep the job fields posted with a close as the draft, in their own transaction (a work
    order no longer open is left as it is: the close says why)."""
    with transaction.atomic():
        wo = work_order_locked(work_order_id)
        if wo.status == WorkOrder.Status.OPEN:
            job_apply(wo, job, now)
            wo.save(update_fields=JOB_FIELDS)


def entered_text(
    *, work_order: WorkOrder, job: JobEntry | None, override_reason: str, snapshot: str
) -> str:
    """What a refused close had entered, as one line for the notes."""
    parts = []
    if job is not None:
        if job.hour_meter is not None:
            parts.append(f"hour meter {job.hour_meter:g} h")
        if job.meter_replaced:
            parts.append(
                f"meter replaced (old final {job.meter_old_final}, new start {job.meter_new_start})"
            )
        if job.notes and job.notes.strip() != work_order.notes.strip():
            parts.append(f"notes: {job.notes.strip()}")
    if override_reason.strip():
        parts.append(f"override reason: {override_reason.strip()}")
    if snapshot.strip():
        parts.append(f"task entries on the tablet: {snapshot.strip()}")
    return "; ".join(parts)
