"""What the work-order page's views share (views.py, not_done_views.py): the request type, who
may read and write, the page's context, the Vary header and the "not saved" message."""

from __future__ import annotations

import uuid
from dataclasses import asdict
from typing import Any

from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect
from django.urls import reverse
from django.utils.cache import patch_vary_headers

from fleetfuel.accounts.access import WRITERS, user_role
from fleetfuel.fleet.models import MeterReading
from services import hour_meter, rules

from . import actions, selectors
from .close import CloseOutcome
from .kinds import KINDS, Kind
from .models import WorkOrder
from .presenters import task_view


def response_vary(response: HttpResponse) -> HttpResponse:
    """The URL answers htmx with a fragment and a plain request with the page."""
    patch_vary_headers(response, ["HX-Request"])
    return response


def not_saved_text(exc: actions.WorkOrderNotOpen) -> str:
    return f"Not saved: {exc} What you entered was added to its notes."


def meter_backwards(wo: WorkOrder, last: MeterReading | None) -> bool:
    """The job's hour meter is below the last reading with no meter replaced (a warning on
    the page; the close refuses it)."""
    return hour_meter.meter_backwards(
        hours=wo.hour_meter,
        earlier_hours=last.hours if last else None,
        replaced=wo.meter_replaced,
    )


# A closing rule's violation -> the task that would satisfy it (offered by "Add a task").
MISSING_TASK = {"injector_without_connector": Kind.CONNECTOR_REPLACE}

REFUSAL_KEY = "workorders:refusal"


def refusal_redirect(
    request: HttpRequest,
    wo: WorkOrder,
    *,
    token: str,
    outcome: CloseOutcome | None = None,
    server_error: str = "",
) -> HttpResponse:
    """Post-redirect-get for a refused close: the refusal is kept in the session and the
    work order's page shows it once, so a reload asks nothing to be sent again. The form's
    token is kept with it (nothing was recorded under it)."""
    request.session[REFUSAL_KEY] = {
        "wo": wo.pk,
        "token": token,
        "server_error": server_error,
        "message": outcome.message if outcome else "",
        "violations": [asdict(v) for v in outcome.violations] if outcome else [],
        "problems": list(outcome.problems) if outcome else [],
    }
    return redirect(reverse("workorders:detail", args=[wo.pk]) + "#refusal")


def refusal_pop(request: HttpRequest, wo: WorkOrder) -> dict[str, Any]:
    """The refusal kept for this work order's page, once: page_context_build's keywords."""
    kept = request.session.get(REFUSAL_KEY)
    if not isinstance(kept, dict) or kept.get("wo") != wo.pk:
        return {}
    del request.session[REFUSAL_KEY]
    shown: dict[str, Any] = {"token": kept["token"], "server_error": kept["server_error"]}
    if kept["message"]:
        shown["outcome"] = CloseOutcome(
            result="refused",
            work_order=wo,
            violations=[rules.RuleViolation(**v) for v in kept["violations"]],
            problems=kept["problems"],
            message=kept["message"],
        )
    return shown


def missing_tasks(outcome: CloseOutcome | None) -> list[dict[str, Any]]:
    """The tasks a refusal's violations ask for, as "Add a task" links: kind and cylinder."""
    if outcome is None:
        return []
    return [
        {
            "kind": MISSING_TASK[v.code],
            "cylinder": v.cylinder,
            "label": KINDS[MISSING_TASK[v.code]].add_label,
        }
        for v in outcome.violations
        if v.code in MISSING_TASK
    ]


def add_initial(request: HttpRequest) -> dict[str, str]:
    """What "Add a task" starts with, from a refusal's link (?add=<kind>&cylinder=<n>)."""
    kind = request.GET.get("add", "")
    cylinder = request.GET.get("cylinder", "")
    return {
        "kind": kind if kind in KINDS else "",
        "cylinder": cylinder if cylinder.isdigit() else "",
    }


def page_context_build(
    request: HttpRequest,
    wo: WorkOrder,
    *,
    outcome: CloseOutcome | None = None,
    token: str | None = None,
    add_error: str = "",
    server_error: str = "",
) -> dict[str, Any]:
    """Everything the work-order page (workorders/detail.html) shows."""
    data = selectors.work_order_page(wo)
    settled = selectors.tasks_settled_elsewhere(work_order=wo, tasks=data.tasks)
    role = user_role(request.user)
    editable = wo.status == WorkOrder.Status.OPEN and role in WRITERS
    last = data.last_reading
    return {
        "wo": wo,
        "unit": wo.unit,
        "site": wo.unit.site,
        "site_tz": wo.unit.site.time_zone,
        "system": data.ctx.system,
        "task_views": [task_view(t, data.ctx, settled_by=settled.get(t.pk)) for t in data.tasks],
        # Every task's item was done in another work order: nothing is left to do here.
        "settled_by": sorted({w.number: w for w in settled.values()}.values(), key=str)
        if settled and len(settled) == len(data.tasks)
        else [],
        "flags": data.flags,
        "due_items": data.due_items,
        "last_reading": last,
        "meter_backwards": meter_backwards(wo, last),
        "follow_ups": data.follow_ups,
        "editable": editable,
        "can_override": editable and rules.override_permitted(role=role),
        "token": token or uuid.uuid4().hex,
        "outcome": outcome,
        "add_error": add_error,
        "server_error": server_error,
        "add_kinds": list(KINDS.values()),
        "add_initial": add_initial(request),
        "missing_tasks": missing_tasks(outcome),
        "filters": data.ctx.filters(),
        "limits": list(data.ctx.limits.values()),
        "cylinder_range": rules.cylinder_numbers(cylinders=wo.unit.cylinders),
        "task_keys": [f"fleetfuel:task:{t.pk}" for t in data.tasks],
        "not_done_tasks": [t for t in data.tasks if t.is_not_done],
    }
