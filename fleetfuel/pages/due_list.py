"""The manager's due list: planning's due items, marked where workorders already holds them,
with work orders made from the ones picked. Composed here because it reads both apps."""

from __future__ import annotations

from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST
from django.views.decorators.vary import vary_on_headers
from django_htmx.http import HttpResponseClientRedirect, push_url

from fleetfuel.accounts.access import (
    due_item_for_user,
    role_required,
    site_ids_for_user,
    sites_are_every_site,
)
from fleetfuel.accounts.models import Profile, Role
from fleetfuel.accounts.requests import HtmxHttpRequest
from fleetfuel.fleet.models import Site, UnitClass
from fleetfuel.planning.due_selectors import due_page
from fleetfuel.planning.forms import DueFilterForm, WorkListSettingsForm
from fleetfuel.planning.source_selectors import source_decisions_open
from fleetfuel.planning.worklists import recent_dispatches
from fleetfuel.workorders import selectors
from fleetfuel.workorders.actions import WorkOrderCreateError, work_orders_from_due_items

from .due_rows import count_chips, due_groups


@role_required(Role.MANAGER)
@require_GET
@vary_on_headers("HX-Request")
def due_list(request: HtmxHttpRequest) -> HttpResponse:
    """The manager's home: every due item across their sites, filterable."""
    site_ids = site_ids_for_user(request.user)
    form = DueFilterForm(
        request.GET or None,
        sites=Site.objects.filter(pk__in=site_ids).order_by("name"),
        classes=UnitClass.objects.order_by("name"),
    )
    data = form.cleaned_data if form.is_valid() else {}
    today = timezone.localdate()
    page = due_page(
        site_ids=site_ids,
        data=data,
        today=today,
        annotations=selectors.due_item_open_work_order(),
        every_site=sites_are_every_site(request.user),
    )
    groups, decisions_elsewhere = due_groups(
        items=page.items,
        flags_by_unit=page.flags_by_unit,
        # The decisions reaching the depot the list is narrowed to, else every depot's.
        decisions=source_decisions_open(
            site_ids=[data["site"].pk] if data.get("site") else site_ids
        ),
        today=today,
    )
    query = request.GET.copy()
    query.pop("page", None)
    context = {
        "form": form,
        "page": page,
        "groups": groups,
        "counts": count_chips(page.counts),
        "source_decisions": decisions_elsewhere,
        "query": query.urlencode(),
    }
    if not request.htmx:
        context["dispatches"] = recent_dispatches(user=request.user)
        profile = getattr(request.user, "profile", None)
        context["settings_form"] = WorkListSettingsForm(instance=profile or Profile())
    if request.htmx and not request.htmx.boosted:
        response = render(request, "pages/due_list.html#due-results", context)
        return push_url(response, request.get_full_path())
    return render(request, "pages/due_list.html", context)


@role_required(Role.MANAGER)
@require_GET
def due_item_detail(request: HtmxHttpRequest, pk: int) -> HttpResponse:
    """The explanation of one row, expanded in place."""
    item = due_item_for_user(request.user, pk)
    template = "pages/_due_detail.html" if request.htmx else "pages/due_item.html"
    return render(request, template, {"item": item})


@role_required(Role.MANAGER)
@require_POST
def work_orders_create(request: HtmxHttpRequest) -> HttpResponse:
    ids = [int(v) for v in request.POST.getlist("item") if v.isdigit()]
    try:
        created = work_orders_from_due_items(
            item_ids=ids,
            site_ids=site_ids_for_user(request.user),
            created_by=request.user,
            today=timezone.localdate(),
        )
    except WorkOrderCreateError as exc:
        messages.error(request, str(exc))
    else:
        names = ", ".join(f"{o.number} ({o.unit.fleet_number})" for o in created.orders)
        messages.success(request, f"Created {len(created.orders)} work order(s): {names}.")
    target = reverse("pages:due_list") + (
        "?" + request.POST["return_query"] if request.POST.get("return_query") else ""
    )
    if request.htmx:
        return HttpResponseClientRedirect(target)
    return redirect(target)
