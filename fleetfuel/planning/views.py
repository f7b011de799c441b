from __future__ import annotations

import zoneinfo

from django.contrib import messages
from django.db.models import Exists, OuterRef
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_GET, require_POST
from django.views.decorators.vary import vary_on_headers
from django_htmx.http import HttpResponseClientRedirect, push_url

from fleetfuel.accounts.access import role_required, site_ids_for_user, sites_for_user
from fleetfuel.accounts.models import Profile, Role
from fleetfuel.fleet.models import Site, UnitClass
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask

from .forms import DueFilterForm, WorkListSettingsForm
from .orders import WorkOrderCreateError, work_orders_from_due_items
from .selectors import due_item_for_user, due_page
from .tasks import worklist_send
from .worklists import recent_dispatches


@role_required(Role.MANAGER)
@require_GET
@vary_on_headers("HX-Request")
def due_list(request) -> HttpResponse:  # type: ignore[no-untyped-def]
    """The manager's home: every due item across their sites, filterable."""
    site_ids = site_ids_for_user(request.user)
    form = DueFilterForm(
        request.GET or None,
        sites=Site.objects.filter(pk__in=site_ids).order_by("name"),
        classes=UnitClass.objects.order_by("name"),
    )
    data = form.cleaned_data if form.is_valid() else {}
    in_open_order = WorkOrderTask.objects.filter(
        due_item_id=OuterRef("pk"), work_order__status=WorkOrder.Status.OPEN
    )
    page = due_page(
        site_ids=site_ids,
        data=data,
        today=timezone.localdate(),
        annotations={"in_work_order": Exists(in_open_order)},
    )
    query = request.GET.copy()
    query.pop("page", None)
    context = {"form": form, "page": page, "query": query.urlencode()}
    if not request.htmx:
        context["dispatches"] = recent_dispatches(user=request.user)
        profile = getattr(request.user, "profile", None)
        context["settings_form"] = WorkListSettingsForm(instance=profile or Profile())
    if request.htmx and not request.htmx.boosted:
        response = render(request, "planning/due_list.html#due-results", context)
        return push_url(response, request.get_full_path())
    return render(request, "planning/due_list.html", context)


@role_required(Role.MANAGER)
@require_GET
def due_item_detail(request, pk: int) -> HttpResponse:  # type: ignore[no-untyped-def]
    """The explanation of one row, expanded in place."""
    item = due_item_for_user(site_ids=site_ids_for_user(request.user), pk=pk)
    template = "planning/_due_detail.html" if request.htmx else "planning/due_item.html"
    return render(request, template, {"item": item})


@role_required(Role.MANAGER)
@require_POST
def work_orders_create(request) -> HttpResponse:  # type: ignore[no-untyped-def]
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
        if created.orders:
            names = ", ".join(f"{o.number} ({o.unit.fleet_number})" for o in created.orders)
            messages.success(request, f"Created {len(created.orders)} work order(s): {names}.")
        if created.skipped:
            messages.warning(
                request, "Already in an open work order: " + "; ".join(created.skipped) + "."
            )
    target = reverse("planning:due_list") + (
        "?" + request.POST["return_query"] if request.POST.get("return_query") else ""
    )
    if request.htmx:
        return HttpResponseClientRedirect(target)
    return redirect(target)


@role_required(Role.MANAGER)
@require_POST
def worklist_send_now(request) -> HttpResponse:  # type: ignore[no-untyped-def]
    """Email today's work list for each of the manager's sites now (on top of the daily one)."""
    if not request.user.email:
        messages.error(
            request, "Your account has no email address; ask an administrator to add one."
        )
        return redirect("planning:due_list")
    sites = list(sites_for_user(request.user))
    for site in sites:
        local = timezone.localtime(timezone.now(), zoneinfo.ZoneInfo(site.time_zone)).date()
        worklist_send.delay(request.user.pk, site.pk, local.isoformat(), True)
    messages.success(request, f"Work list queued for {len(sites)} site(s) to {request.user.email}.")
    return redirect("planning:due_list")


@role_required(Role.MANAGER)
@require_POST
def worklist_settings(request) -> HttpResponse:  # type: ignore[no-untyped-def]
    """The manager's own work-list preferences (subscribed, local hour, days ahead)."""
    profile, _ = Profile.objects.get_or_create(user=request.user)
    form = WorkListSettingsForm(request.POST, instance=profile)
    if form.is_valid():
        form.save()
        messages.success(request, "Work-list settings saved.")
    else:
        errors = "; ".join(f"{form.fields[f].label}: {' '.join(e)}" for f, e in form.errors.items())
        messages.error(request, f"Settings not saved. {errors}")
    return redirect(reverse("planning:due_list") + "#work-lists")
