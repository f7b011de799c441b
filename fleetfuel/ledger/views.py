"""Pages of the service history: the auditor's home, the export log, corrections.

Thin: parse, check the role, call one selector or action, render. The only write is a
manager's correction. The exports themselves, whose manifests name planning's scheduled tasks,
are composed above the ledger (fleetfuel/pages/exports.py).
"""

from __future__ import annotations

from datetime import timedelta
from types import SimpleNamespace
from typing import Any
from zoneinfo import ZoneInfo

from django.contrib import messages
from django.core.exceptions import ValidationError
from django.http import HttpRequest, HttpResponse
from django.shortcuts import redirect, render
from django.template.defaulttags import querystring
from django.urls import reverse
from django.utils import timezone
from django.utils.cache import patch_vary_headers
from django.views.decorators.http import require_GET, require_POST

from fleetfuel.accounts.access import (
    EXPORTERS,
    READERS,
    role_required,
    service_event_for_user,
    site_ids_for_user,
    user_role,
)
from fleetfuel.accounts.models import Role

from .actions import service_event_correct
from .forms import CorrectionForm, HistoryFilterForm
from .history_rows import PK_MARK, history_rows
from .models import ServiceEvent
from .selectors import exports_for_user, filter_sites, history_page

RECENT_EXPORTS = 3
LOG_PAGE = 50
PENDING_FOR = timedelta(minutes=15)


def _history_render(
    request: HttpRequest,
    *,
    correcting: ServiceEvent | None = None,
    correction_form: CorrectionForm | None = None,
    status: int = 200,
) -> HttpResponse:
    user = request.user
    role = user_role(user)
    form = HistoryFilterForm(request.GET or None, sites=filter_sites(user=user))
    form.is_valid()
    scope = form.scope(allowed_site_ids=site_ids_for_user(user))
    page = history_page(
        scope=scope,
        older_than=request.GET.get("older", ""),
        newer_than=request.GET.get("newer", ""),
    )
    if correcting is None and role == Role.MANAGER and request.GET.get("correct", "").isdigit():
        correcting = service_event_for_user(user, int(request.GET["correct"]))
        correction_form = CorrectionForm(event=correcting)
    can_correct = role == Role.MANAGER
    context: dict[str, Any] = {
        "form": form,
        "page": page,
        "rows": history_rows(
            page.events, correct_href=_correct_href(request) if can_correct else None
        ),
        "can_export": role in EXPORTERS,
        "can_correct": can_correct,
        **(_recent(user) if role in EXPORTERS else {}),
        "correcting": correcting,
        "correction_form": correction_form,
    }
    partial_only = getattr(request, "htmx", False) and correcting is None
    template = "ledger/history.html#history-results" if partial_only else "ledger/history.html"
    response = render(request, template, context, status=status)
    patch_vary_headers(response, ["HX-Request"])
    return response


def _correct_href(request: HttpRequest) -> str:
    """The "Correct…" link of the history's rows, as ``{% querystring correct=pk %}`` gives
    it, with ``PK_MARK`` for the entry's id."""
    return querystring(SimpleNamespace(request=request), correct=PK_MARK)


def _recent(user: Any) -> dict[str, Any]:
    """One's last few exports, and whether one of them is still being written (the box then
    refreshes itself; an export interrupted long ago stops it asking)."""
    rows = exports_for_user(
        user=user,
        see_all=False,
        site_ids=site_ids_for_user(user),
        before=None,
        size=RECENT_EXPORTS,
    )
    since = timezone.now() - PENDING_FOR
    pending = any(not r.finished and r.requested_at > since for r in rows)
    return {"recent": rows, "recent_pending": pending}


@role_required(*READERS)
@require_GET
def history(request: HttpRequest) -> HttpResponse:
    """The service history, newest first, filtered; the auditor's home page."""
    return _history_render(request)


@role_required(Role.MANAGER)
@require_POST
def correct(request: HttpRequest, pk: int) -> HttpResponse:
    """Record a correction of one entry (a new entry; the old one stays)."""
    event = service_event_for_user(request.user, pk)
    with timezone.override(ZoneInfo(event.unit.site.time_zone)):
        form = CorrectionForm(request.POST, event=event)
        valid = form.is_valid()
    if valid:
        try:
            new = service_event_correct(
                event=event,
                reason=form.cleaned_data["reason"],
                recorded_by=request.user,
                kind=form.cleaned_data["kind"],
                **form.changed_fields(),
            )
        except ValidationError as exc:
            form.add_error(None, exc)
        else:
            messages.success(
                request,
                f"Correction recorded as entry {new.seq} of {event.unit.fleet_number}; "
                f"entry {event.seq} stays in the history.",
            )
            return redirect(f"{reverse('ledger:history')}?unit={event.unit.fleet_number}")
    return _history_render(request, correcting=event, correction_form=form, status=400)


@role_required(*EXPORTERS)
@require_GET
def exports(request: HttpRequest) -> HttpResponse:
    """The export log: every export for a manager, one's own for an auditor; only exports
    wholly within the sites the person may see."""
    before = request.GET.get("before", "")
    rows = exports_for_user(
        user=request.user,
        see_all=user_role(request.user) == Role.MANAGER,
        site_ids=site_ids_for_user(request.user),
        before=int(before) if before.isdigit() else None,
        size=LOG_PAGE + 1,
    )
    context = {
        "rows": rows[:LOG_PAGE],
        "older": rows[LOG_PAGE - 1].pk if len(rows) > LOG_PAGE else None,
        "see_all": user_role(request.user) == Role.MANAGER,
    }
    return render(request, "ledger/exports.html", context)


@role_required(*EXPORTERS)
@require_GET
def exports_recent(request: HttpRequest) -> HttpResponse:
    """The history page's "your recent exports" box (refreshed while one is unfinished)."""
    return render(request, "ledger/history.html#recent-exports", _recent(request.user))
