"""The manager's emailed work lists: send today's now, and the work-list settings.

The due list itself is a page composed across apps: fleetfuel/pages/due_list.py.
"""

from __future__ import annotations

import logging
import zoneinfo

from django.contrib import messages
from django.http import HttpResponse
from django.shortcuts import redirect, render
from django.urls import reverse
from django.utils import timezone
from django.views.decorators.http import require_POST

from fleetfuel.accounts.access import role_required, sites_for_user
from fleetfuel.accounts.models import Profile, Role
from fleetfuel.accounts.requests import HtmxHttpRequest
from fleetfuel.fleet.models import Site
from services.display import count_noun

from .forms import WorkListSettingsForm
from .models import WorkListDispatch
from .tasks import worklist_send
from .worklists import dispatch_request

log = logging.getLogger(__name__)
Status = WorkListDispatch.Status


@role_required(Role.MANAGER)
@require_POST
def worklist_send_now(request: HtmxHttpRequest) -> HttpResponse:
    """Email today's work list for each of the manager's sites now (on top of the daily one;
    once a day by hand: a second press sends nothing twice)."""
    if not request.user.email:
        messages.error(
            request, "Your account has no email address; ask an administrator to add one."
        )
        return redirect("pages:due_list")
    # Every site is attempted, and each one's outcome said on its own line.
    for site in sites_for_user(request.user):
        level, text = _site_send_now(request, site)
        messages.add_message(request, level, f"{site.name}: {text}")
    return redirect("pages:due_list")


def _site_send_now(request: HtmxHttpRequest, site: Site) -> tuple[int, str]:
    local = timezone.localtime(timezone.now(), zoneinfo.ZoneInfo(site.time_zone)).date()
    dispatch = dispatch_request(user_id=request.user.pk, site_id=site.pk, local_date=local)
    if dispatch.status == Status.SENT:
        return messages.INFO, "today's work list was already sent; not sent again."
    if dispatch.status == Status.SENDING:
        return messages.INFO, "today's work list is being sent."
    queued = True
    try:
        worklist_send.delay(request.user.pk, site.pk, local.isoformat(), True)
    except Exception as exc:  # the broker refused, or (in-process) the mail server did
        queued = False
        log.warning("work list for site %s not sent now: %s", site.pk, exc, exc_info=True)
    dispatch.refresh_from_db()
    email = request.user.email
    if dispatch.status == Status.SENT:
        return messages.SUCCESS, f"work list sent to {email}."
    if dispatch.status == Status.SENDING or (dispatch.status == Status.PENDING and queued):
        return messages.SUCCESS, f"work list queued for {email}."
    if dispatch.status == Status.PENDING:
        return messages.ERROR, (
            "not sent: the task queue could not be reached. The hourly schedule queues it "
            "again, or press the button again."
        )
    if dispatch.status == Status.RETRYING:
        return messages.ERROR, (
            f"not sent ({dispatch.last_error}). It is retried automatically, or press the "
            "button again."
        )
    return messages.ERROR, (
        f"not sent after {count_noun(dispatch.attempts, 'attempt')} ({dispatch.last_error}). "
        "Press the button to try again."
    )


@role_required(Role.MANAGER)
@require_POST
def worklist_settings(request: HtmxHttpRequest) -> HttpResponse:
    """The manager's own work-list preferences (subscribed, local hour, days ahead). A bad
    value comes back on the form with its error beside its field, nothing saved."""
    profile, _ = Profile.objects.get_or_create(user=request.user)
    form = WorkListSettingsForm(request.POST, instance=profile)
    if not form.is_valid():
        return render(request, "planning/worklist_settings.html", {"form": form}, status=400)
    form.save()
    messages.success(request, "Work-list settings saved.")
    return redirect(reverse("pages:due_list") + "#work-lists")
