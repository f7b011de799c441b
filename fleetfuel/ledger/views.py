"""Pages of the service history: the auditor's home, exports, the export log, corrections.

Thin: parse, check the role, call one selector or action, render. Exports are POSTs (they are
logged, so CSRF applies) that any reader may make; the only write is a manager's correction.
"""

from __future__ import annotations

import hashlib
import tempfile
from datetime import timedelta
from functools import partial
from pathlib import Path
from typing import Any
from zoneinfo import ZoneInfo

from django.contrib import messages
from django.core.exceptions import ValidationError
from django.db.models import QuerySet
from django.http import (
    FileResponse,
    Http404,
    HttpRequest,
    HttpResponse,
    JsonResponse,
    StreamingHttpResponse,
)
from django.shortcuts import get_object_or_404, redirect, render
from django.template.loader import render_to_string
from django.urls import reverse
from django.utils import timezone
from django.utils.cache import patch_vary_headers
from django.views.decorators.http import require_GET, require_POST

from fleetfuel.accounts.access import role_required, site_ids_for_user, user_role
from fleetfuel.accounts.models import Role
from fleetfuel.fleet.models import Site

from .actions import service_event_correct
from .csv_copy import history_csv_stream
from .exports import export_rows, file_sha256, xlsx_write
from .forms import CorrectionForm, ExportForm, HistoryFilterForm
from .manifest import export_finish, export_start, manifest_bytes
from .models import ExportLog, ServiceEvent
from .printing import PRINT_MAX_ROWS, print_context
from .selectors import exports_for_user, history_page

READERS = (Role.MANAGER, Role.MECHANIC, Role.AUDITOR)
EXPORTERS = (Role.MANAGER, Role.AUDITOR)
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
    form = HistoryFilterForm(request.GET or None, sites=_sites(user))
    form.is_valid()
    scope = form.scope(allowed_site_ids=site_ids_for_user(user))
    page = history_page(
        scope=scope,
        older_than=request.GET.get("older", ""),
        newer_than=request.GET.get("newer", ""),
    )
    if correcting is None and role == Role.MANAGER and request.GET.get("correct", "").isdigit():
        correcting = _event_for_user(user, int(request.GET["correct"]))
        correction_form = CorrectionForm(event=correcting)
    context: dict[str, Any] = {
        "form": form,
        "page": page,
        "can_export": role in EXPORTERS,
        "can_correct": role == Role.MANAGER,
        **(_recent(user) if role in EXPORTERS else {}),
        "correcting": correcting,
        "correction_form": correction_form,
    }
    partial_only = getattr(request, "htmx", False) and correcting is None
    template = "ledger/history.html#history-results" if partial_only else "ledger/history.html"
    response = render(request, template, context, status=status)
    patch_vary_headers(response, ["HX-Request"])
    return response


def _sites(user: Any) -> QuerySet[Site]:
    """The sites a person may see, from the ids cached on the user for this request."""
    return Site.objects.filter(pk__in=site_ids_for_user(user))


def _recent(user: Any) -> dict[str, Any]:
    """One's last few exports, and whether one of them is still being written (the box then
    refreshes itself; an export interrupted long ago stops it asking)."""
    rows = exports_for_user(user=user, see_all=False, before=None, size=RECENT_EXPORTS)
    since = timezone.now() - PENDING_FOR
    pending = any(not r.finished and r.requested_at > since for r in rows)
    return {"recent": rows, "recent_pending": pending}


def _event_for_user(user: Any, pk: int) -> ServiceEvent:
    return get_object_or_404(
        ServiceEvent.objects.select_related("unit", "unit__site", "work_order"),
        pk=pk,
        unit__site_id__in=site_ids_for_user(user),
    )


@role_required(*READERS)
@require_GET
def history(request: HttpRequest) -> HttpResponse:
    """The service history, newest first, filtered; the auditor's home page."""
    return _history_render(request)


@role_required(Role.MANAGER)
@require_POST
def correct(request: HttpRequest, pk: int) -> HttpResponse:
    """Record a correction of one entry (a new entry; the old one stays)."""
    event = _event_for_user(request.user, pk)
    with timezone.override(ZoneInfo(event.unit.site.time_zone)):
        form = CorrectionForm(request.POST, event=event)
        valid = form.is_valid()
    if valid:
        try:
            new = service_event_correct(
                event=event,
                reason=form.cleaned_data["reason"],
                recorded_by=request.user,
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
@require_POST
def export(request: HttpRequest) -> HttpResponse:
    """Send the export (CSV streamed, XLSX built to a temporary file, or a printable record)
    and log it; the manifest is at ledger:export_manifest once the file is complete."""
    user = request.user
    form = ExportForm(request.POST, sites=_sites(user))
    if not form.is_valid():
        messages.error(request, "The export was not started: " + _errors_text(form))
        return redirect("ledger:history")
    scope = form.scope(allowed_site_ids=site_ids_for_user(user))
    fmt = form.cleaned_data["format"]
    if fmt == ExportLog.Format.PRINT and (
        scope.events(with_kind=False)[: PRINT_MAX_ROWS + 1].count() > PRINT_MAX_ROWS
    ):
        messages.error(
            request,
            f"A printable record holds at most {PRINT_MAX_ROWS:,} entries: choose a unit or "
            "a shorter date range, or export CSV or XLSX.",
        )
        return redirect("ledger:history")
    log, heads = export_start(scope=scope, fmt=fmt, via=ExportLog.Via.WEB, user=user)
    events = scope.events(with_kind=False)
    if fmt == ExportLog.Format.CSV:
        response: HttpResponse | StreamingHttpResponse = StreamingHttpResponse(
            history_csv_stream(events=events, heads=heads, on_done=partial(_finish, log.pk)),
            content_type="text/csv; charset=utf-8",
        )
        response["Content-Disposition"] = f'attachment; filename="{log.file_name}"'
    elif fmt == ExportLog.Format.XLSX:
        response = _xlsx_response(log, export_rows(events=events, heads=heads))
    else:
        context = print_context(log, scope, heads)
        data = render_to_string("ledger/print.html", context, request).encode("utf-8")
        export_finish(
            log_id=log.pk, row_count=context["row_count"], sha256=hashlib.sha256(data).hexdigest()
        )
        response = HttpResponse(data, content_type="text/html; charset=utf-8")
    response["X-Fleetfuel-Export"] = str(log.pk)
    return response


def _finish(log_id: int, row_count: int, sha256: str) -> None:
    export_finish(log_id=log_id, row_count=row_count, sha256=sha256)


def _xlsx_response(log: ExportLog, rows: Any) -> FileResponse:
    with tempfile.NamedTemporaryFile(suffix=".xlsx", delete=False) as handle:
        path = Path(handle.name)
    try:
        count = xlsx_write(path=path, rows=rows, units=log.manifest["units"])
        export_finish(log_id=log.pk, row_count=count, sha256=file_sha256(path))
        data = path.open("rb")
    finally:
        path.unlink(missing_ok=True)  # the open handle keeps the data until it is closed
    return FileResponse(
        data,
        as_attachment=True,
        filename=log.file_name,
        content_type="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
    )


def _errors_text(form: ExportForm) -> str:
    return "; ".join(f"{k}: {' '.join(v)}" for k, v in form.errors.items())


def _log_for_user(request: HttpRequest, pk: int) -> ExportLog:
    log = get_object_or_404(ExportLog, pk=pk)
    if user_role(request.user) != Role.MANAGER and log.requested_by_id != request.user.pk:
        raise Http404("No such export.")
    return log


@role_required(*EXPORTERS)
@require_GET
def export_manifest(request: HttpRequest, pk: int) -> HttpResponse:
    """The manifest of a finished export, as a JSON download."""
    log = _log_for_user(request, pk)
    if not log.finished:
        return JsonResponse(
            {"error": "This export has not finished (or was interrupted): no digest yet."},
            status=409,
        )
    response = HttpResponse(manifest_bytes(log), content_type="application/json")
    response["Content-Disposition"] = f'attachment; filename="{log.file_name}.manifest.json"'
    return response


@role_required(*EXPORTERS)
@require_GET
def exports(request: HttpRequest) -> HttpResponse:
    """The export log: every export for a manager, one's own for an auditor."""
    before = request.GET.get("before", "")
    rows = exports_for_user(
        user=request.user,
        see_all=user_role(request.user) == Role.MANAGER,
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
