"""The manager's emailed work lists: send today's now, and the work-list settings.

The due list itself is a page composed across apps: fleetfuel/pages/due_list.py.
"""

from __future__ import annotations

import zoneinfo

from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_POST

from fleetfuel.accounts.access import role_required, sites_for_user
from fleetfuel.accounts.models import Profile, Role
from fleetfuel.accounts.requests import HtmxHttpRequest

from .forms import WorkListSettingsForm
from .tasks import worklist_send


@role_required(Role.MANAGER)
@require_POST
def worklist_send_now(request: HtmxHttpRequest) -> HttpResponse:
    """Email today's work list for each of the manager's sites now (on top of the daily one)."""
    if not request.user.email:
        messages.error(
            request, "Your account has no email address; ask an administrator to add one."
        )
        return redirect("pages:due_list")
    sites = list(sites_for_user(request.user))
    for site in sites:
        local = timezone.localtime(timezone.now(), zoneinfo.ZoneInfo(site.time_zone)).date()
        worklist_send.delay(request.user.pk, site.pk, local.isoformat(), True)
    messages.success(request, f"Work list queued for {len(sites)} site(s) to {request.user.email}.")
    return redirect("pages:due_list")


@role_required(Role.MANAGER)
@require_POST
def worklist_settings(request: HtmxHttpRequest) -> HttpResponse:
    """The manager's own work-list preferences (subscribed, local hour, days ahead)."""
    profile, _ = Profile.objects.get_or_create(user=request.user)
    form = WorkListSettingsForm(request.POST, instance=profile)
    if form.is_valid():
        form.save()
        messages.success(request, "Work-list settings saved.")
    else:
        errors = "; ".join(f"{form.fields[f].label}: {' '.join(e)}" for f, e in form.errors.items())
        messages.error(request, f"Settings not saved. {errors}")
    return redirect(reverse("pages:due_list") + "#work-lists")
