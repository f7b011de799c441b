"""Emailed work lists: what each manager should see before the shift starts.

One email per manager, site and local day: overdue items, items due within the manager's
chosen days, and flagged units, grouped by unit, most urgent unit first (as the due list
orders), with links back to the due list.
"""

from __future__ import annotations

import zoneinfo
from dataclasses import dataclass
from datetime import date, datetime, timedelta
from typing import Any
from urllib.parse import urlencode

from django.conf import settings
from django.contrib.auth.models import User
from django.core.mail import EmailMultiAlternatives
from django.db import IntegrityError, transaction
from django.db.models import F, Q
from django.template.loader import render_to_string
from django.urls import reverse
from django.utils import timezone

from fleetfuel.accounts.access import site_ids_for_user
from fleetfuel.accounts.models import Profile, Role
from fleetfuel.accounts.templatetags import fmt
from fleetfuel.fleet.models import Site
from services.display import NBSP

from .models import DueItem, UnitFlag, WorkListDispatch

MAX_ATTEMPTS = 4


@dataclass
class UnitSection:
    fleet_number: str
    unit_id: int
    items: list[DueItem]
    flags: list[UnitFlag]


def item_urgency(item: DueItem) -> tuple[int, date, float, str]:
    """The due list's order of urgency (services.urgency, stored on the item at recompute):
    its tier (a water-in-fuel alarm first), then the longest overdue, then the most hours
    past; the one place the email's order is decided."""
    return (item.urgency, item.late_from or date.max, -(item.late_hours or 0.0), item.task)


def section_urgency(section: UnitSection) -> tuple[int, tuple[int, date, float, str], str]:
    """A unit's place in the email: flagged units first (a flag says stop and check), then by
    its most urgent item; fleet number breaks ties."""
    first = min((item_urgency(item) for item in section.items), default=None)
    last = (len(DueItem.Status) + 8, date.max, 0.0, "")
    return (0 if section.flags else 1, first or last, section.fleet_number)


def worklist_content(*, user: User, site: Site, today: date) -> dict[str, Any]:
    """What the email lists (three queries)."""
    days = user.profile.work_list_days_ahead
    items = list(
        DueItem.objects.filter(site=site)
        .filter(Q(status=DueItem.Status.OVERDUE) | Q(due_on__lte=today + timedelta(days=days)))
        .select_related("unit")
        .order_by("urgency", "late_from", "-late_hours", "task")
    )
    flags = list(
        UnitFlag.objects.filter(unit__site=site, unit__disposed_on__isnull=True)
        .select_related("unit")
        .order_by("unit__fleet_number", "code")
    )
    sections: dict[int, UnitSection] = {}
    for item in items:
        sections.setdefault(item.unit_id, UnitSection(item.unit.fleet_number, item.unit_id, [], []))
        sections[item.unit_id].items.append(item)
    for flag in flags:
        sections.setdefault(flag.unit_id, UnitSection(flag.unit.fleet_number, flag.unit_id, [], []))
        sections[flag.unit_id].flags.append(flag)
    base = settings.SITE_URL + reverse("pages:due_list")
    overdue = sum(1 for i in items if i.status == DueItem.Status.OVERDUE)
    check = sum(1 for i in items if i.status == DueItem.Status.CHECK)  # dP reading first
    return {
        "user": user,
        "site": site,
        "today": today,
        "days": days,
        "sections": sorted(sections.values(), key=section_urgency),
        "overdue": overdue,
        "check": check,
        "upcoming": len(items) - overdue - check,
        "flagged": len({f.unit_id for f in flags}),
        "link_overdue": f"{base}?{urlencode({'site': site.pk, 'status': 'overdue'})}",
        "link_upcoming": f"{base}?{urlencode({'site': site.pk, 'within_days': days})}",
        "link_flagged": f"{base}?{urlencode({'site': site.pk, 'flagged': 'on'})}",
        "site_url": settings.SITE_URL,
        "item_count": len(items),
    }


def worklist_message(
    *, user: User, site: Site, today: date, again: bool = False
) -> tuple[EmailMultiAlternatives, int]:
    ctx = worklist_content(user=user, site=site, today=today)
    subject = (
        f"fleetfuel work list{' (sent again)' if again else ''}, {site.name}, "
        f"{fmt.day(today, site).replace(NBSP, ' ')}: "
        f"{ctx['overdue']} overdue, "
        + (f"{ctx['check']} to check, " if ctx["check"] else "")
        + f"{ctx['upcoming']} due within {ctx['days']} days"
    )
    message = EmailMultiAlternatives(
        subject=subject,
        body=render_to_string("planning/email/work_list.txt", ctx),
        to=[user.email],
    )
    message.attach_alternative(render_to_string("planning/email/work_list.html", ctx), "text/html")
    return message, ctx["item_count"]


def dispatch_get_or_create(
    *, user_id: int, site_id: int, local_date: date, manual: bool, resend: int = 0
) -> WorkListDispatch:
    """The one dispatch of a manager, site and local day: scheduled, or sent by hand (or the
    manager's ``resend``-th confirmed resend of it)."""
    key = {
        "user_id": user_id,
        "site_id": site_id,
        "local_date": local_date,
        "manual": manual,
        "resend": resend,
    }
    try:
        with transaction.atomic():
            dispatch, _ = WorkListDispatch.objects.get_or_create(**key)
    except IntegrityError:  # a concurrent tick or press created it first
        dispatch = WorkListDispatch.objects.get(**key)
    return dispatch


def dispatch_claim(
    *, user_id: int, site_id: int, local_date: date, manual: bool, resend: int = 0
) -> WorkListDispatch | None:
    """Claim the right to send (None: already sent, or another worker is sending it)."""
    dispatch = dispatch_get_or_create(
        user_id=user_id, site_id=site_id, local_date=local_date, manual=manual, resend=resend
    )
    claimed = WorkListDispatch.objects.filter(
        pk=dispatch.pk,
        status__in=[WorkListDispatch.Status.PENDING, WorkListDispatch.Status.RETRYING],
    ).update(status=WorkListDispatch.Status.SENDING, attempts=F("attempts") + 1)
    if claimed != 1:
        return None
    dispatch.refresh_from_db()
    return dispatch


def dispatch_request(
    *, user_id: int, site_id: int, local_date: date, resend: int = 0
) -> WorkListDispatch:
    """A by-hand dispatch for "send now": the day's (``resend`` 0) or a confirmed resend of
    it, each sent once however often it is asked for. A press after a final failure starts
    it again."""
    dispatch = dispatch_get_or_create(
        user_id=user_id, site_id=site_id, local_date=local_date, manual=True, resend=resend
    )
    if WorkListDispatch.objects.filter(
        pk=dispatch.pk, status=WorkListDispatch.Status.FAILED
    ).update(status=WorkListDispatch.Status.PENDING, attempts=0):
        dispatch.refresh_from_db()
    return dispatch


def dispatch_send(*, dispatch: WorkListDispatch) -> None:
    """Send a claimed dispatch. Errors (building the message or SMTP) propagate to the caller
    after being recorded, so the dispatch never stays claimed by a send that failed."""
    try:
        message, count = worklist_message(
            user=dispatch.user,
            site=dispatch.site,
            today=dispatch.local_date,
            again=dispatch.resend > 0,
        )
        message.send()
    except Exception as exc:
        final = dispatch.attempts >= MAX_ATTEMPTS
        WorkListDispatch.objects.filter(pk=dispatch.pk).update(
            status=WorkListDispatch.Status.FAILED if final else WorkListDispatch.Status.RETRYING,
            last_error=f"{type(exc).__name__}: {exc}"[:1000],
        )
        raise
    WorkListDispatch.objects.filter(pk=dispatch.pk).update(
        status=WorkListDispatch.Status.SENT, sent_at=timezone.now(), items=count, last_error=""
    )


def worklists_due_now(*, now: datetime) -> list[tuple[int, int, date]]:
    """(user, site, local day) for every subscribed manager whose site's chosen hour is now."""
    due: list[tuple[int, int, date]] = []
    profiles = Profile.objects.filter(
        work_list_subscribed=True, user__is_active=True, user__groups__name=Role.MANAGER
    ).select_related("user")
    sites = {s.pk: s for s in Site.objects.all()}
    for profile in profiles:
        # The same access rule as every page (a few queries per manager, once an hour).
        for site_id in site_ids_for_user(profile.user):
            site = sites[site_id]
            local = now.astimezone(zoneinfo.ZoneInfo(site.time_zone))
            if local.hour == profile.work_list_hour:
                due.append((profile.user_id, site.pk, local.date()))
    return due


# A dispatch still unsent this long after it was made was lost: the broker was down when it
# was queued, its worker died, or it ran in-process with no worker to retry it (the retries'
# own backoff, 30 s, 2 and 8 min, is over by then). The hourly tick queues it again; the
# claim keeps a late retry of its own from sending it twice.
DISPATCH_STUCK_AFTER = timedelta(minutes=15)


def dispatches_stuck(*, now: datetime) -> list[tuple[int, int, date, bool, int]]:
    """(user, site, local day, by hand, resend) of the last two days' dispatches unsent."""
    return list(
        WorkListDispatch.objects.filter(
            status__in=[WorkListDispatch.Status.PENDING, WorkListDispatch.Status.RETRYING],
            created_at__lt=now - DISPATCH_STUCK_AFTER,
            local_date__gte=(now - timedelta(days=2)).date(),
        ).values_list("user_id", "site_id", "local_date", "manual", "resend")
    )


def dispatch_by_hand_latest(
    *, user_id: int, site_id: int, local_date: date
) -> WorkListDispatch | None:
    """The manager's latest by-hand dispatch of a site's list for a local day (the day's own,
    or its last resend), with who it went to."""
    return (
        WorkListDispatch.objects.filter(
            user_id=user_id, site_id=site_id, local_date=local_date, manual=True
        )
        .select_related("user")
        .order_by("-resend")
        .first()
    )


def recent_dispatches(*, user: Any, limit: int = 8) -> list[WorkListDispatch]:
    return list(
        WorkListDispatch.objects.filter(user=user)
        .select_related("site")
        .order_by("-created_at")[:limit]
    )
