""" "Send now" pressed again: it asks before sending a site's list a second time, says when it
went, by whom and to whom, and a confirmed resend is sent once and recorded. Through a real
local SMTP server (aiosmtpd), as the other work-list tests."""

from __future__ import annotations

import re
import zoneinfo
from collections.abc import Iterator
from typing import Any

import pytest
from django.test import override_settings
from django.urls import reverse

from fleetfuel.planning.models import WorkListDispatch
from tests import factories as f
from tests.planning.test_worklists import Inbox, smtp, smtp_mailer, subscribed, texts

__all__ = ["smtp", "subscribed"]  # fixtures shared with the work-list tests

pytestmark = [pytest.mark.django_db, pytest.mark.usefixtures("clock_at_now")]
SEND = "planning:worklist_send_now"
Sent = WorkListDispatch.Status.SENT


@pytest.fixture
def inbox(smtp: tuple[Inbox, int]) -> Iterator[Inbox]:
    """The local SMTP server's inbox, with the mailer pointed at it for the whole test."""
    box, port = smtp
    with override_settings(MAILERS=smtp_mailer(port)):
        yield box


def ticked(response: Any) -> list[str]:
    """The boxes the question ticks: what its form posts when sent as it is."""
    return re.findall(r'name="again" value="([^"]+)" checked', response.content.decode())


@pytest.fixture
def two_depots(subscribed: dict[str, Any], client: Any) -> dict[str, Any]:
    manager = subscribed["manager"]
    manager.first_name, manager.last_name = "Morgan", "Hale"
    manager.save()
    quarry = f.site_make(name="Quarry Depot", time_zone="Europe/Berlin", display_style="en-US")
    depots = [subscribed["site"], quarry]
    manager.profile.sites.set(depots)
    client.force_login(manager)
    return {"manager": manager, "depots": depots}


def test_two_presses_send_one_email_per_depot_and_the_second_asks(
    inbox: Inbox, two_depots: dict[str, Any], client: Any
) -> None:
    client.post(reverse(SEND), follow=True)
    second = client.post(reverse(SEND))
    assert len(inbox.messages) == 2  # one per depot, not two
    assert second.status_code == 200
    html = second.content.decode()
    for depot in two_depots["depots"]:
        went = WorkListDispatch.objects.get(site=depot, manual=True).sent_at
        # When it went, in the depot's own time (Europe/Berlin is an hour ahead of London)
        # and its display style (the US depot's clock has 12 hours).
        at = went.astimezone(zoneinfo.ZoneInfo(depot.time_zone))
        clock = (
            f"{at.hour % 12 or 12}:{at:%M}\u00a0{at:%p}"
            if depot.display_style == "en-US"
            else f"{at:%H:%M}"
        )
        assert (
            f"{depot.name}</strong>: today&#x27;s work list was sent at {clock} {at:%Z} by "
            "Morgan Hale to morgan@depot.example; send again?"
        ) in html
    assert len(ticked(second)) == 2


def test_a_confirmed_resend_is_sent_once_and_recorded(
    inbox: Inbox, two_depots: dict[str, Any], client: Any
) -> None:
    client.post(reverse(SEND), follow=True)
    question = client.post(reverse(SEND))
    form = {"confirm": "1", "again": ticked(question)}
    confirmed = client.post(reverse(SEND), form, follow=True)
    twice = client.post(reverse(SEND), form, follow=True)  # the form sent twice
    asked_again = client.post(reverse(SEND))
    assert len(inbox.messages) == 4  # the day's list and one resend, per depot
    again = [m["Subject"] for _, _, m in inbox.messages if "(sent again)" in m["Subject"]]
    assert len(again) == 2 and all(
        s.startswith("fleetfuel work list (sent again), ") for s in again
    )
    assert sorted(texts(confirmed)) == sorted(
        ("success", f"{d.name}: work list sent again to morgan@depot.example.")
        for d in two_depots["depots"]
    )
    assert {level for level, _ in texts(twice)} == {"info"}
    assert all("sent again at" in m and "not sent a further time" in m for _, m in texts(twice))
    rows = WorkListDispatch.objects.filter(manual=True)
    assert sorted((r.site_id, r.resend, r.status) for r in rows) == sorted(
        (d.pk, n, Sent) for d in two_depots["depots"] for n in (0, 1)
    )
    assert "was sent again at" in asked_again.content.decode()
    assert sorted(ticked(asked_again)) == sorted(f"{d.pk}:2" for d in two_depots["depots"])


def test_only_the_ticked_depot_is_sent_again(
    inbox: Inbox, two_depots: dict[str, Any], client: Any
) -> None:
    first, second = two_depots["depots"]
    client.post(reverse(SEND), follow=True)
    client.post(reverse(SEND), {"confirm": "1", "again": [f"{first.pk}:1"]}, follow=True)
    nothing = client.post(reverse(SEND), {"confirm": "1"}, follow=True)
    not_ours = client.post(reverse(SEND), {"confirm": "1", "again": "999999:1"}, follow=True)
    assert len(inbox.messages) == 3
    assert WorkListDispatch.objects.get(site=second, resend=0).status == Sent
    assert not WorkListDispatch.objects.filter(site=second, resend=1).exists()
    assert texts(nothing) == [("info", "Nothing ticked: nothing was sent again.")]
    assert texts(not_ours) == texts(nothing)  # a depot not theirs is not theirs to send


@pytest.mark.parametrize("value", ["{pk}:7", "{pk}:0", "{pk}", "x:1", "{pk}:-1", "{pk}:99"])
def test_a_stale_or_made_up_confirmation_sends_nothing(
    inbox: Inbox, two_depots: dict[str, Any], client: Any, value: str
) -> None:
    depot = two_depots["depots"][0]
    client.post(reverse(SEND), follow=True)
    response = client.post(
        reverse(SEND), {"confirm": "1", "again": value.format(pk=depot.pk)}, follow=True
    )
    assert len(inbox.messages) == 2
    assert [level for level, _ in texts(response)] == ["error"]
    assert WorkListDispatch.objects.filter(resend__gt=0).count() == 0


def test_a_resend_before_the_first_went_is_refused(
    inbox: Inbox, two_depots: dict[str, Any], client: Any
) -> None:
    depot = two_depots["depots"][0]
    response = client.post(reverse(SEND), {"confirm": "1", "again": f"{depot.pk}:1"}, follow=True)
    assert inbox.messages == []
    assert texts(response) == [
        ("error", f"{depot.name}: not sent again: that question is out of date; press the button.")
    ]
