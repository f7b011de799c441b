"""The mechanic's tablet: my work, the work-order list, the work-order page and its writes.

Thin views: parse, check the role (fleetfuel.accounts.access), call one selector or action,
render. Every write answers an auditor with 403 (``role_required`` before ``require_POST``).
"""

from __future__ import annotations

import json
import logging
from collections.abc import Iterable

from django.contrib import messages
from django.core.paginator import Paginator
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_POST

from fleetfuel.accounts.access import (
    READERS,
    WRITERS,
    role_required,
    task_for_user,
    work_order_for_user,
)
from fleetfuel.accounts.hygiene import text_error
from fleetfuel.accounts.models import Role
from fleetfuel.accounts.requests import HtmxHttpRequest

from . import actions, selectors
from .close import work_order_close
from .forms import job_entry_clean
from .page import (
    meter_backwards,
    not_saved_text,
    page_context_build,
    refusal_pop,
    refusal_redirect,
    response_vary,
)
from .presenters import task_view
from .task_entries import new_task_clean, task_draft_clean

log = logging.getLogger(__name__)


# --------------------------------------------------------------------------- lists


@role_required(Role.MANAGER, Role.MECHANIC)
def my_work(request: HtmxHttpRequest) -> HttpResponse:
    work_orders = selectors.my_work_for_user(request.user)
    return render(
        request,
        "workorders/my_work.html",
        {"work_orders": work_orders, "today": timezone.localdate()},
    )


@role_required(Role.MANAGER, Role.AUDITOR)
def work_order_list(request: HtmxHttpRequest) -> HttpResponse:
    status = request.GET.get("status", "open")
    if status not in dict(selectors.LIST_STATUSES):
        status = "open"
    page = Paginator(selectors.work_order_list(request.user, status=status), 50).get_page(
        request.GET.get("page")
    )
    return render(
        request,
        "workorders/list.html",
        {"page": page, "status": status, "statuses": selectors.LIST_STATUSES},
    )


# --------------------------------------------------------------------------- the page


@role_required(*READERS)
def detail(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    wo = work_order_for_user(request.user, pk)
    context = page_context_build(request, wo, **refusal_pop(request, wo))
    return render(request, "workorders/detail.html", context)


# --------------------------------------------------------------------------- drafts


def _flash(request: HttpRequest, save_error: str, errors: Iterable[str], success: str) -> None:
    """Messages for a plain (no-JavaScript) form post."""
    problems = [save_error] if save_error else []
    problems += list(errors)
    for problem in problems:
        messages.error(request, problem)
    if not problems:
        messages.success(request, success)


def _posted(request: HttpRequest) -> dict[str, str]:
    return {k: v for k, v in request.POST.items() if k not in {"csrfmiddlewaretoken", "snapshot"}}


@role_required(*WRITERS)
@require_POST
def task_save(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    task = task_for_user(request.user, pk, write=True)
    wo = work_order_for_user(request.user, task.work_order_id, write=True)
    ctx = selectors.task_context(wo)
    draft = task_draft_clean(task, request.POST, ctx)
    status = 200
    save_error = ""
    try:
        task = actions.task_draft_save(
            task_id=task.pk,
            user=request.user,
            draft=draft,
            entered=actions.snapshot_text(_posted(request)),
        )
    except actions.WorkOrderNotOpen as exc:
        status, save_error = 409, not_saved_text(exc)
    if not request.htmx:
        _flash(request, save_error, draft.errors.values(), f"Saved “{task.description}”.")
        return redirect(reverse("workorders:detail", args=[wo.pk]) + f"#task-{task.pk}")
    tv = task_view(task, ctx, draft.errors)
    response = render(
        request,
        "workorders/detail.html#task-status",
        {
            "tv": tv,
            "site": wo.unit.site,
            "site_tz": wo.unit.site.time_zone,
            "save_error": save_error,
            "oob": True,
        },
        status=status,
    )
    return response_vary(response)


@role_required(*WRITERS)
@require_POST
def job_save(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    wo = work_order_for_user(request.user, pk, write=True)
    job = job_entry_clean(request.POST)
    status = 200
    save_error = ""
    try:
        wo = actions.job_draft_save(
            work_order_id=wo.pk,
            user=request.user,
            job=job,
            entered=actions.snapshot_text(_posted(request)),
        )
    except actions.WorkOrderNotOpen as exc:
        status, save_error = 409, not_saved_text(exc)
    wo = work_order_for_user(request.user, pk, write=True)
    if not request.htmx:
        _flash(request, save_error, job.errors.values(), "Saved the job fields.")
        return redirect(reverse("workorders:detail", args=[wo.pk]) + "#job")
    last = selectors.last_meter_reading(wo.unit_id)
    response = render(
        request,
        "workorders/detail.html#job-status",
        {
            "wo": wo,
            "site": wo.unit.site,
            "site_tz": wo.unit.site.time_zone,
            "save_error": save_error,
            "job_errors": list(job.errors.values()),
            "last_reading": last,
            "meter_backwards": meter_backwards(wo, last),
        },
        status=status,
    )
    return response_vary(response)


@role_required(*WRITERS)
@require_POST
def task_add(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    wo = work_order_for_user(request.user, pk, write=True)
    new, error = new_task_clean(request.POST, selectors.task_context(wo))
    if new is None:
        context = page_context_build(request, wo, add_error=error)
        return render(request, "workorders/detail.html", context, status=422)
    try:
        task = actions.task_add(work_order_id=wo.pk, user=request.user, new=new)
    except actions.WorkOrderNotOpen as exc:
        messages.error(request, f"Task not added: {exc} It was noted on the work order.")
        return redirect("workorders:detail", pk=wo.pk)
    messages.success(request, f"Task added: {task.description}.")
    return redirect(reverse("workorders:detail", args=[wo.pk]) + f"#task-{task.pk}")


# --------------------------------------------------------------------------- close


def _snapshot(request: HttpRequest) -> str:
    raw = request.POST.get("snapshot", "")
    try:
        data = json.loads(raw) if raw else {}
    except ValueError:
        return json.dumps(raw[:4000], ensure_ascii=False)  # escapes control characters
    return actions.snapshot_text(data) if data else ""


def _close(request: HttpRequest, pk: int, *, override: bool) -> HttpResponse:
    wo = work_order_for_user(request.user, pk, write=True)
    token = request.POST.get("token", "")
    job = job_entry_clean(request.POST)
    reason = request.POST.get("override_reason", "")
    problems = [*job.errors.values(), text_error(reason, label="The override's reason")]
    if any(problems):  # nothing is closed with a value the form would refuse
        text = " ".join(p for p in problems if p)
        return refusal_redirect(request, wo, token=token, server_error=text)
    try:
        outcome = work_order_close(
            work_order_id=wo.pk,
            user=request.user,
            token=token,
            job=job,
            override=override,
            override_reason=reason,
            snapshot=_snapshot(request),
        )
    except ValueError as exc:  # a token of another work order's form: a new one is made
        return refusal_redirect(request, wo, token="", server_error=str(exc))
    except Exception:
        # Nothing was closed (the transaction rolled back); the drafts are on the server.
        log.exception("closing work order %s failed", wo.pk)
        wo = work_order_for_user(request.user, pk)
        context = page_context_build(
            request,
            wo,
            token=token,
            server_error=(
                "The server could not close the work order: an error occurred on our side and "
                "nothing was recorded. Your entries are saved as drafts on the server. Tap "
                "“Close work order” again to retry; it is safe to retry."
            ),
        )
        return render(request, "workorders/detail.html", context, status=500)

    if outcome.result == "closed":
        if not outcome.replay:
            text = outcome.message
            if outcome.follow_up is not None:
                text += (
                    f" A measurement was outside its limits: follow-up work order "
                    f"{outcome.follow_up.number} was created."
                )
            if outcome.not_done:
                names = "; ".join(t.description for t in outcome.not_done)
                text += f" Not done, so still due on the unit: {names}."
            messages.success(request, text)
        return redirect("workorders:detail", pk=wo.pk)
    wo = work_order_for_user(request.user, pk, write=True)
    if outcome.result == "closed_by_other":
        messages.warning(request, outcome.message)
        return redirect("workorders:detail", pk=wo.pk)
    if outcome.forbidden:  # only a crafted post gets here: mechanics have no override button
        context = page_context_build(request, wo, outcome=outcome, token=token)
        return render(request, "workorders/detail.html", context, status=403)
    return refusal_redirect(request, wo, token=token, outcome=outcome)


@role_required(*WRITERS)
@require_POST
def close(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    return _close(request, pk, override=False)


@role_required(*WRITERS)
@require_POST
def override(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    """Close despite overridable rules, with a written reason. Only a manager may: the close
    refuses anyone else's override (``services.rules.override_permitted``), answered 403."""
    return _close(request, pk, override=True)
