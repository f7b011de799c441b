"""What the work-order page's views share (views.py, not_done_views.py): the request type, who
may read and write, the page's context, the Vary header and the "not saved" message."""

from __future__ import annotations

import uuid
from typing import Any

from django.http import HttpRequest, HttpResponse
from django.utils.cache import patch_vary_headers

from fleetfuel.accounts.access import WRITERS, user_role
from fleetfuel.fleet.models import MeterReading
from services import hour_meter, rules

from . import actions, selectors
from .close import CloseOutcome
from .kinds import KINDS
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
    role = user_role(request.user)
    editable = wo.status == WorkOrder.Status.OPEN and role in WRITERS
    last = data.last_reading
    return {
        "wo": wo,
        "unit": wo.unit,
        "site": wo.unit.site,
        "site_tz": wo.unit.site.time_zone,
        "system": data.ctx.system,
        "task_views": [task_view(t, data.ctx) for t in data.tasks],
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
        "filters": data.ctx.filters(),
        "limits": list(data.ctx.limits.values()),
        "cylinder_range": rules.cylinder_numbers(cylinders=wo.unit.cylinders),
        "task_keys": [f"fleetfuel:task:{t.pk}" for t in data.tasks],
        "not_done_tasks": [t for t in data.tasks if t.is_not_done],
    }
