"""The unit list and the unit page: thin views over pages/unit_page.py."""

from __future__ import annotations

from django import forms
from django.core.paginator import Paginator
from django.http import HttpRequest, HttpResponse
from django.shortcuts import render
from django.utils import timezone
from django.views.decorators.http import require_GET

from fleetfuel.accounts.access import READERS, role_required, site_ids_for_user, unit_for_user
from fleetfuel.fleet.models import HIGH_PRESSURE_KINDS

from .charts import chart_svg
from .unit_page import unit_page, units_for_list
from .unit_rows import due_item_rows, event_rows


class UnitSearchForm(forms.Form):
    """The search's query string, checked like any field (accounts/hygiene.py)."""

    q = forms.CharField(required=False, max_length=30)


@role_required(*READERS)
@require_GET
def unit_list(request: HttpRequest) -> HttpResponse:
    search = UnitSearchForm({"q": request.GET.get("q", "")[:30]})
    q = search.cleaned_data["q"] if search.is_valid() else ""
    paginator = Paginator(units_for_list(site_ids=site_ids_for_user(request.user), q=q), 50)
    page = paginator.get_page(request.GET.get("page"))
    error = " ".join(search.errors.get("q", []))
    return render(request, "pages/unit_list.html", {"page": page, "q": q, "q_error": error})


@role_required(*READERS)
@require_GET
def unit_detail(request: HttpRequest, pk: int) -> HttpResponse:
    unit = unit_for_user(request.user, pk)
    page = unit_page(unit=unit, now=timezone.now())
    charts = {name: chart_svg(chart, unit.site) for name, chart in page.charts.items()}
    return render(
        request,
        "pages/unit_detail.html",
        {
            "p": page,
            "unit": unit,
            "charts": charts,
            "due_rows": due_item_rows(page.due_items, unit.site),
            "event_rows": event_rows(page.events, unit.site),
            "hp_kinds": [k.value for k in HIGH_PRESSURE_KINDS],
        },
    )
