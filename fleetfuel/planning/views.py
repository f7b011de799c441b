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
from services.display import clock_text, count_noun

from .forms import WorkListSettingsForm
from .models import WorkListDispatch
from .tasks import worklist_send
from .worklists import dispatch_by_hand_latest, dispatch_request

log = logging.getLogger(__name__)
Status = WorkListDispatch.Status
MAX_RESENDS = 50  # a day's resends of one site's list by hand: more is a stuck button


@role_required(Role.MANAGER)
@require_POST
def worklist_send_now(request: HtmxHttpRequest) -> HttpResponse:
    """Email today's work list for each of the manager's sites now (on top of the daily one).

    Once a day by hand: a press after a site's list went asks first, saying when it went, by
    whom and to whom; the question's form posts ``confirm`` with the resends ticked
    (``again`` = "site id:resend number"), each sent once however often it is posted.
    """
    if not request.user.email:
        messages.error(
            request, "Your account has no email address; ask an administrator to add one."
        )
        return redirect("pages:due_list")
    confirming = "confirm" in request.POST
    again = _again_parse(request.POST.getlist("again"))
    if again is None:
        messages.error(request, "The confirmation was not understood: nothing was sent again.")
        return redirect("pages:due_list")
    asks = []
    sites = list(sites_for_user(request.user))
    # Every site is attempted, and each one's outcome said on its own line.
    for site in sites:
        if confirming and site.pk not in again:
            continue
        local = timezone.localtime(timezone.now(), zoneinfo.ZoneInfo(site.time_zone)).date()
        latest = dispatch_by_hand_latest(user_id=request.user.pk, site_id=site.pk, local_date=local)
        if confirming:
            level, text = _site_send_again(request, site, latest, again[site.pk])
        elif latest is not None and latest.status == Status.SENT:
            asks.append({"site": site, "value": f"{site.pk}:{latest.resend + 1}"})
            asks[-1]["text"] = _sent_when(site, latest) + "; send again?"
            continue
        else:
            level, text = _site_send_now(request, site, resend=latest.resend if latest else 0)
        messages.add_message(request, level, f"{site.name}: {text}")
    if confirming and not again.keys() & {site.pk for site in sites}:
        messages.info(request, "Nothing ticked: nothing was sent again.")
    if asks:
        return render(request, "planning/worklist_again.html", {"asks": asks})
    return redirect("pages:due_list")


def _again_parse(values: list[str]) -> dict[int, int] | None:
    """{site id: resend number} from the ticked boxes; None when one is not ours."""
    parsed: dict[int, int] = {}
    for value in values:
        site, _, number = value.partition(":")
        if not (site.isdigit() and number.isdigit() and 1 <= int(number) <= MAX_RESENDS):
            return None
        parsed[int(site)] = int(number)
    return parsed


def _sent_when(site: Site, dispatch: WorkListDispatch) -> str:
    """When (site time), by whom and to whom a by-hand list went."""
    sent = timezone.localtime(dispatch.sent_at, zoneinfo.ZoneInfo(site.time_zone))
    who = dispatch.user.get_full_name() or dispatch.user.get_username()
    what = "sent again" if dispatch.resend else "sent"
    # The depot's own time in its display style, with its zone named: depots differ.
    at = f"{clock_text(sent, site.display_style)} {sent.tzname()}"
    return f"today's work list was {what} at {at} by {who} to {dispatch.user.email}"


def _site_send_again(
    request: HtmxHttpRequest, site: Site, latest: WorkListDispatch | None, resend: int
) -> tuple[int, str]:
    # The resend asked about, once (a second post of the same form sends nothing), or the
    # latest one again while it is unsent; a stale or made-up number sends nothing.
    if latest is not None and resend == latest.resend and latest.status == Status.SENT:
        return messages.INFO, _sent_when(site, latest) + "; not sent a further time."
    if latest is not None and (
        resend == latest.resend or (resend == latest.resend + 1 and latest.status == Status.SENT)
    ):
        return _site_send_now(request, site, resend=resend)
    return messages.ERROR, "not sent again: that question is out of date; press the button."


def _site_send_now(request: HtmxHttpRequest, site: Site, *, resend: int) -> tuple[int, str]:
    local = timezone.localtime(timezone.now(), zoneinfo.ZoneInfo(site.time_zone)).date()
    dispatch = dispatch_request(
        user_id=request.user.pk, site_id=site.pk, local_date=local, resend=resend
    )
    if dispatch.status == Status.SENT:  # a second press that crossed the first
        return messages.INFO, "today's work list was already sent; not sent again."
    if dispatch.status == Status.SENDING:
        return messages.INFO, "today's work list is being sent."
    queued = True
    try:
        worklist_send.delay(request.user.pk, site.pk, local.isoformat(), True, resend)
    except Exception as exc:  # the broker refused, or (in-process) the mail server did
        queued = False
        log.warning("work list for site %s not sent now: %s", site.pk, exc, exc_info=True)
    dispatch.refresh_from_db()
    email = request.user.email
    sent = "sent again" if resend else "sent"
    if dispatch.status == Status.SENT:
        return messages.SUCCESS, f"work list {sent} to {email}."
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
