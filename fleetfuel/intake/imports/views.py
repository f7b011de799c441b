"""The manager's import page: upload, the dry run's result (every refused row with its line,
column and reason), then apply all-or-nothing or the good rows only; the rejects download.
Thin views over runs.py; a run in progress is polled by htmx (the page also refreshes)."""

from __future__ import annotations

from typing import Any

from django import forms
from django.core.cache import cache
from django.http import FileResponse, Http404, HttpRequest, HttpResponse
from django.shortcuts import get_object_or_404, redirect, render
from django.utils import timezone
from django.views.decorators.http import require_http_methods, require_POST
from django.views.decorators.vary import vary_on_headers

from fleetfuel.accounts.access import role_required
from fleetfuel.accounts.models import Role

from ..exports import template_csv, template_xlsx
from ..models import ImportRun
from ..tasks import import_run_enqueue
from .layouts import LAYOUTS, ORDER
from .runs import import_run_apply, import_run_start, progress_key

import_page = role_required(Role.MANAGER)


class UploadForm(forms.Form):
    kind = forms.ChoiceField(choices=[(k, LAYOUTS[k].title) for k in ORDER], label="What it holds")
    file = forms.FileField(label="File (.csv or .xlsx)")


def _run_for(request: HttpRequest, pk: int) -> ImportRun:
    """A run the manager started (404 for anyone else's)."""
    return get_object_or_404(ImportRun, pk=pk, created_by=request.user)


@import_page
@require_http_methods(["GET", "POST"])
def import_upload(request: HttpRequest) -> HttpResponse:
    form = UploadForm(request.POST or None, request.FILES or None)
    if request.method == "POST" and form.is_valid():
        try:
            run = import_run_start(
                user=request.user, kind=form.cleaned_data["kind"],
                upload=form.cleaned_data["file"], now=timezone.now(), enqueue=import_run_enqueue,
            )  # fmt: skip
        except ValueError as exc:
            form.add_error("file", str(exc))
        else:
            return redirect("intake:import_run", pk=run.pk)
    layouts = [LAYOUTS[k] for k in ORDER]
    return render(request, "intake/import_upload.html", {"form": form, "layouts": layouts})


@import_page
@vary_on_headers("HX-Request")
def import_run_page(request: HttpRequest, pk: int) -> HttpResponse:
    run = _run_for(request, pk)
    context: dict[str, Any] = {
        "run": run,
        "rows_read": run.rows_done if run.status == run.Status.DONE
        else cache.get(progress_key(run.pk), 0),
        "modes": [ImportRun.Mode.ALL_OR_NOTHING, ImportRun.Mode.GOOD_ROWS_ONLY],
    }  # fmt: skip
    template = "intake/import_run.html"
    if request.htmx:
        template += "#import-status"
    return render(request, template, context)


@import_page
@require_POST
def import_run_apply_view(request: HttpRequest, pk: int) -> HttpResponse:
    run = _run_for(request, pk)
    if run.mode != ImportRun.Mode.DRY_RUN or run.status != ImportRun.Status.DONE:
        raise Http404("Only a finished dry run is applied.")
    mode = str(request.POST.get("mode", ""))
    try:
        applied = import_run_apply(run=run, mode=mode, now=timezone.now(),
                                   enqueue=import_run_enqueue)  # fmt: skip
    except ValueError:
        raise Http404("No such way to apply.") from None
    return redirect("intake:import_run", pk=applied.pk)


@import_page
def import_rejects(request: HttpRequest, pk: int) -> FileResponse:
    run = _run_for(request, pk)
    if not run.rejects:
        raise Http404("This run refused no row.")
    name = f"{run.original_name.rsplit('.', 1)[0]}-refused.csv"
    return FileResponse(run.rejects.open("rb"), as_attachment=True, filename=name)


@import_page
def import_template(request: HttpRequest, kind: str, fmt: str) -> HttpResponse:
    layout = LAYOUTS.get(kind)
    if layout is None or fmt not in ("csv", "xlsx"):
        raise Http404("No such template.")
    if fmt == "csv":
        body, content_type = template_csv(layout=layout), "text/csv; charset=utf-8"
    else:
        body = template_xlsx(layout=layout)
        content_type = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"
    response = HttpResponse(body, content_type=content_type)
    response["Content-Disposition"] = f'attachment; filename="{kind}.{fmt}"'
    return response
