"""Exports of the service history, from the history page: CSV, XLSX or a printable record,
each with a manifest naming the units' scheduled tasks (pages/manifest.py), and the manifest
itself as a download.

Thin: parse, check the role, call one action, send the file. Exports are POSTs (they are
logged, so CSRF applies) that managers and auditors may make. The history page, corrections
and the export log stay with the ledger (fleetfuel/ledger/views.py).
"""

from __future__ import annotations

import hashlib
import tempfile
from functools import partial
from pathlib import Path
from typing import Any

from django.contrib import messages
from django.http import (
    FileResponse,
    HttpRequest,
    HttpResponse,
    JsonResponse,
    StreamingHttpResponse,
)
from django.shortcuts import redirect
from django.template.loader import render_to_string
from django.views.decorators.http import require_GET, require_POST

from fleetfuel.accounts.access import (
    EXPORTERS,
    export_log_for_user,
    role_required,
    site_ids_for_user,
)
from fleetfuel.dbrouters import history_alias
from fleetfuel.ledger.csv_copy import history_csv_stream
from fleetfuel.ledger.exports import export_rows, file_sha256
from fleetfuel.ledger.forms import ExportForm
from fleetfuel.ledger.manifest import export_finish, manifest_bytes
from fleetfuel.ledger.models import ExportLog
from fleetfuel.ledger.printing import PRINT_MAX_ROWS, print_context
from fleetfuel.ledger.selectors import filter_sites
from fleetfuel.ledger.xlsx import xlsx_write

from .manifest import history_export_start


@role_required(*EXPORTERS)
@require_POST
def export(request: HttpRequest) -> HttpResponse:
    """Send the export (CSV streamed, XLSX built to a temporary file, or a printable record)
    and log it; the manifest is at pages:export_manifest once the file is complete."""
    user = request.user
    form = ExportForm(request.POST, sites=filter_sites(user=user))
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
    log, heads = history_export_start(scope=scope, fmt=fmt, via=ExportLog.Via.WEB, user=user)
    # Read from the replica once it holds every entry up to the heads (dbrouters.py).
    events = scope.events(with_kind=False).using(history_alias(caught_up=True))
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
        count = xlsx_write(path=path, rows=rows, log=log)
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


@role_required(*EXPORTERS)
@require_GET
def export_manifest(request: HttpRequest, pk: int) -> HttpResponse:
    """The manifest of a finished export, as a JSON download."""
    log = export_log_for_user(request.user, pk)
    if not log.finished:
        return JsonResponse(
            {"error": "This export has not finished (or was interrupted): no digest yet."},
            status=409,
        )
    response = HttpResponse(manifest_bytes(log), content_type="application/json")
    response["Content-Disposition"] = f'attachment; filename="{log.file_name}.manifest.json"'
    return response
