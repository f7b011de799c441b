"""Marking a task "not done" from the tablet, with a written reason, and undoing it.

A planned task that cannot be done at this job (part not in stock, unit needed back on shift,
the due item did not apply) would otherwise block the close for ever. Marked not done, it
needs no fields and the close leaves it out (close.py); its due item stays due.

Both views answer htmx with the task's card (``detail.html#task-card``) plus the close box's
list of tasks not done, swapped out of band; a plain form post is answered with a redirect
to the task, or the whole page with the error (422). Every write answers an auditor with 403
(``role_required`` before ``require_POST``) and a closed work order with 409.
"""

from __future__ import annotations

from django.contrib import messages
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.template.loader import render_to_string
from django.urls import reverse
from django.views.decorators.http import require_POST

from fleetfuel.accounts.access import (
    WRITERS,
    role_required,
    task_for_user,
    work_order_for_user,
)
from fleetfuel.accounts.requests import HtmxHttpRequest

from . import actions, selectors
from .forms import not_done_reason_clean
from .models import WorkOrder, WorkOrderTask
from .page import not_saved_text, page_context_build, response_vary
from .presenters import task_view


def task_card_render(
    *,
    request: HttpRequest,
    wo: WorkOrder,
    task: WorkOrderTask,
    editable: bool = True,
    error: str = "",
    typed: str = "",
    status: int = 200,
) -> HttpResponse:
    """The task's card for htmx, with the close box's not-done list out of band."""
    tv = task_view(task, selectors.task_context(wo))
    tv.not_done_error, tv.not_done_typed = error, typed
    context = {
        "tv": tv,
        "wo": wo,
        "editable": editable,
        "site": wo.unit.site,
        "site_tz": wo.unit.site.time_zone,
        "not_done_tasks": selectors.tasks_not_done(work_order=wo),
        "oob": True,
    }
    html = render_to_string("workorders/detail.html#task-card", context, request)
    if editable:
        html += render_to_string("workorders/detail.html#not-done-summary", context, request)
    return response_vary(HttpResponse(html, status=status))


def _task_page(
    request: HttpRequest, wo: WorkOrder, task_id: int, error: str, typed: str
) -> HttpResponse:
    """The whole page (no JavaScript) with the refusal shown on the task, 422."""
    context = page_context_build(request, wo)
    for tv in context["task_views"]:
        if tv.task.pk == task_id:
            tv.not_done_error, tv.not_done_typed = error, typed
    return render(request, "workorders/detail.html", context, status=422)


def _to_task(wo: WorkOrder, task: WorkOrderTask) -> HttpResponse:
    return redirect(reverse("workorders:detail", args=[wo.pk]) + f"#task-{task.pk}")


@role_required(*WRITERS)
@require_POST
def task_not_done(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    task = task_for_user(request.user, pk, write=True)
    wo = work_order_for_user(request.user, task.work_order_id, write=True)
    typed = str(request.POST.get("reason", ""))[:2000]
    reason, error = not_done_reason_clean(raw=typed)
    if error:
        if request.htmx:
            return task_card_render(
                request=request, wo=wo, task=task, error=error, typed=typed, status=422
            )
        return _task_page(request, wo, task.pk, error, typed)
    try:
        actions.task_not_done_mark(task_id=task.pk, user=request.user, reason=reason)
    except actions.WorkOrderNotOpen as exc:
        return _refused(request, exc, task)
    task = task_for_user(request.user, pk, write=True)
    if not request.htmx:
        messages.success(
            request,
            f"“{task.description}” marked not done. It will not be recorded at close and stays "
            "due on the unit.",
        )
        return _to_task(wo, task)
    return task_card_render(request=request, wo=wo, task=task)


@role_required(*WRITERS)
@require_POST
def task_not_done_undo(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    task = task_for_user(request.user, pk, write=True)
    wo = work_order_for_user(request.user, task.work_order_id, write=True)
    try:
        actions.task_not_done_undo(task_id=task.pk, user=request.user)
    except actions.WorkOrderNotOpen as exc:
        return _refused(request, exc, task)
    task = task_for_user(request.user, pk, write=True)
    if not request.htmx:
        messages.success(request, f"“{task.description}” is to be done again: fill in its fields.")
        return _to_task(wo, task)
    return task_card_render(request=request, wo=wo, task=task)


def _refused(
    request: HtmxHttpRequest, exc: actions.WorkOrderNotOpen, task: WorkOrderTask
) -> HttpResponse:
    """The work order closed meanwhile: 409 for htmx (the card, read-only, says so)."""
    wo = work_order_for_user(request.user, exc.work_order.pk, write=True)
    task = task_for_user(request.user, task.pk, write=True)
    if not request.htmx:
        messages.error(request, not_saved_text(exc))
        return _to_task(wo, task)
    return task_card_render(
        request=request, wo=wo, task=task, editable=False, error=not_saved_text(exc), status=409
    )
