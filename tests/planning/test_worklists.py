"""Emailed work lists through a real local SMTP server (aiosmtpd)."""

from __future__ import annotations

import email
import shutil
import socket
import subprocess
from collections.abc import Iterator
from datetime import UTC, datetime, timedelta
from email.message import Message
from pathlib import Path
from typing import Any

import pytest
import time_machine
from aiosmtpd.controller import Controller
from django.test import override_settings
from django.urls import reverse

from fleetfuel.fleet.models import EngineEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import WorkListDispatch
from fleetfuel.planning.tasks import worklists_tick
from tests import factories as f
from tests.planning.builders import history_make


class Inbox:
    def __init__(self) -> None:
        self.messages: list[tuple[str, list[str], Message]] = []

    async def handle_DATA(self, server: Any, session: Any, envelope: Any) -> str:  # noqa: N802
        self.messages.append(
            (
                envelope.mail_from,
                list(envelope.rcpt_tos),
                email.message_from_bytes(envelope.content),
            )
        )
        return "250 OK"


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


@pytest.fixture
def smtp() -> Iterator[tuple[Inbox, int]]:
    inbox = Inbox()
    port = free_port()
    controller = Controller(inbox, hostname="127.0.0.1", port=port)
    controller.start()
    try:
        yield inbox, port
    finally:
        controller.stop()


def smtp_mailer(port: int) -> dict[str, Any]:
    # The test runner swaps every mailer for the in-memory one: point at the real server.
    return {
        "default": {
            "BACKEND": "django.core.mail.backends.smtp.EmailBackend",
            "OPTIONS": {"host": "127.0.0.1", "port": port, "use_tls": False, "timeout": 5},
        }
    }


@pytest.fixture
def subscribed(site: Any, unit_class: Any) -> dict[str, Any]:
    manager = f.user_make("manager", username="morgan", sites=[site])
    manager.email = "morgan@depot.example"
    manager.save()
    manager.profile.work_list_subscribed = True
    manager.profile.work_list_hour = 6
    manager.profile.work_list_days_ahead = 7
    manager.profile.save()
    overdue_unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="OV-1")
    history_make(unit=overdue_unit, source=f.source_make(), days=60)  # 600 h > the 500 h plan
    flagged = f.unit_make(site=site, unit_class=unit_class, fleet_number="FL-1")
    history_make(unit=flagged, source=f.source_make(), days=5)
    for d in (1, 2, 3):
        EngineEvent.objects.create(
            unit=flagged,
            occurred_at=f.NOW - timedelta(days=d),
            spn=5571,
            fmi=0,
            kind=EngineEvent.Kind.RELIEF_VALVE_OPENED,
        )
    due_items_recompute(unit_ids=[overdue_unit.pk, flagged.pk], now=f.NOW)
    return {"manager": manager, "site": site}


@pytest.mark.django_db
def test_tick_sends_one_list_per_manager_site_and_day(
    smtp: tuple[Inbox, int], subscribed: dict[str, Any], monkeypatch: Any
) -> None:
    inbox, port = smtp
    site = subscribed["site"]  # Europe/London: 06:00 local in June is 05:00 UTC (BST)
    at = datetime(2026, 6, 15, 5, 10, tzinfo=UTC)
    monkeypatch.setattr("django.utils.timezone.now", lambda: at)
    with override_settings(MAILERS=smtp_mailer(port), SITE_URL="https://ff.example"):
        assert worklists_tick() == 1
        assert worklists_tick() == 1  # a rerun queues again ...
    assert len(inbox.messages) == 1  # ... but the claim lets only one through
    sender, rcpt, msg = inbox.messages[0]
    assert rcpt == ["morgan@depot.example"]
    subject = " ".join(msg["Subject"].split())  # unfolded (RFC 5322 section 2.2.3)
    assert subject.startswith(f"fleetfuel work list, {site.name}, 15 Jun 2026")
    parts = {
        p.get_content_type(): p.get_payload(decode=True).decode()
        for p in msg.walk()
        if not p.is_multipart()
    }
    assert set(parts) == {"text/plain", "text/html"}
    for body in parts.values():
        assert "OV-1" in body and "Overdue" in body.title()
        assert "FL-1" in body and "relief" in body.lower()
        assert f"https://ff.example{reverse('pages:due_list')}?site={site.pk}" in body
    dispatch = WorkListDispatch.objects.get()
    assert dispatch.status == WorkListDispatch.Status.SENT and dispatch.items >= 1


@pytest.mark.django_db
def test_tick_outside_the_chosen_hour_sends_nothing(
    smtp: tuple[Inbox, int], subscribed: dict[str, Any], monkeypatch: Any
) -> None:
    inbox, port = smtp
    monkeypatch.setattr(
        "django.utils.timezone.now", lambda: datetime(2026, 6, 15, 9, 0, tzinfo=UTC)
    )
    with override_settings(MAILERS=smtp_mailer(port)):
        assert worklists_tick() == 0
    assert inbox.messages == []


@pytest.mark.django_db
def test_smtp_failure_is_retried_then_shown_on_the_managers_page(
    subscribed: dict[str, Any], client: Any, monkeypatch: Any
) -> None:
    at = datetime(2026, 6, 15, 5, 10, tzinfo=UTC)
    monkeypatch.setattr("django.utils.timezone.now", lambda: at)
    dead = free_port()  # nothing listens here: connection refused
    # In-process (eager) Celery runs the retries at once, without waiting out the backoff;
    # with propagation off it runs the whole chain, as a worker would.
    from fleetfuel.celery import app

    monkeypatch.setitem(app.conf, "task_eager_propagates", False)
    with override_settings(MAILERS=smtp_mailer(dead)):
        worklists_tick()
    dispatch = WorkListDispatch.objects.get()
    assert dispatch.status == WorkListDispatch.Status.FAILED
    assert dispatch.attempts == 4  # first try + 3 retries
    assert "Connection refused" in dispatch.last_error or "Errno" in dispatch.last_error
    client.force_login(subscribed["manager"])
    page = client.get(reverse("pages:due_list")).content.decode()
    assert "Failed after retries" in page and "attempts" in page


def texts(response: Any) -> list[tuple[str, str]]:
    return [(m.level_tag, m.message) for m in response.context["messages"]]


@pytest.mark.django_db
def test_send_now_button_sends_once_then_asks(
    smtp: tuple[Inbox, int], subscribed: dict[str, Any], client: Any
) -> None:
    inbox, port = smtp
    client.force_login(subscribed["manager"])
    name = subscribed["site"].name
    with override_settings(MAILERS=smtp_mailer(port)):
        first = client.post(reverse("planning:worklist_send_now"), follow=True)
        second = client.post(reverse("planning:worklist_send_now"), follow=True)
    assert texts(first) == [("success", f"{name}: work list sent to morgan@depot.example.")]
    assert texts(second) == [] and "send again?" in second.content.decode()
    assert len(inbox.messages) == 1  # the second press asks, and sends nothing
    dispatch = WorkListDispatch.objects.get(manual=True)
    assert (dispatch.status, dispatch.attempts) == (WorkListDispatch.Status.SENT, 1)


@pytest.mark.usefixtures("clock_at_now")  # 13:00 in London: not the lists' chosen hour
@pytest.mark.django_db
def test_send_now_with_smtp_refusing_tries_every_depot_and_the_schedule_retries(
    subscribed: dict[str, Any], client: Any, smtp: tuple[Inbox, int]
) -> None:
    """The mail server refuses (nothing listens on its port): each of four depots is tried
    and named with its error; the hourly tick sends each list once the server is back, and
    a later press sends nothing twice."""
    manager = subscribed["manager"]
    depots = [subscribed["site"]] + [f.site_make(name=f"Depot {c}") for c in "BCD"]
    manager.profile.sites.set(depots)
    client.force_login(manager)
    with override_settings(MAILERS=smtp_mailer(free_port())):
        response = client.post(reverse("planning:worklist_send_now"), follow=True)
    assert response.status_code == 200
    said = texts(response)
    assert sorted(m.split(":")[0] for _, m in said) == sorted(d.name for d in depots)
    assert {level for level, _ in said} == {"error"}
    assert all("not sent" in m and "Connection refused" in m for _, m in said)
    dispatches = WorkListDispatch.objects.filter(manual=True)
    assert sorted(d.site_id for d in dispatches) == sorted(d.pk for d in depots)
    assert {d.status for d in dispatches} == {WorkListDispatch.Status.RETRYING}
    page = client.get(reverse("pages:due_list")).content.decode()
    assert page.count("Failed, will retry") == 4

    inbox, port = smtp
    with (
        time_machine.travel(f.NOW + timedelta(minutes=20), tick=True),
        override_settings(MAILERS=smtp_mailer(port)),
    ):
        worklists_tick()
        again = client.post(reverse("planning:worklist_send_now"), follow=True)
    assert sorted(rcpt for _, rcpt, _ in inbox.messages) == [["morgan@depot.example"]] * 4
    assert {d.status for d in dispatches.all()} == {WorkListDispatch.Status.SENT}
    assert again.content.decode().count("send again?") == 4  # already sent: it asks first
    assert len(inbox.messages) == 4


@pytest.mark.django_db
def test_manager_sets_their_own_work_list_preferences(
    client: Any, subscribed: dict[str, Any]
) -> None:
    manager = subscribed["manager"]
    client.force_login(manager)
    url = reverse("planning:worklist_settings")
    ok = client.post(
        url, {"work_list_subscribed": "on", "work_list_hour": "5", "work_list_days_ahead": "3"}
    )
    assert ok.status_code == 302
    manager.profile.refresh_from_db()
    assert (manager.profile.work_list_hour, manager.profile.work_list_days_ahead) == (5, 3)
    bad = client.post(url, {"work_list_hour": "25", "work_list_days_ahead": "3"})
    assert bad.status_code == 400
    # The error stands beside its field (inside the field's label), not at the top of the page.
    html = bad.content.decode()
    field = html[html.index('name="work_list_hour"') :]
    assert "from 0 to 23" in field[: field.index("</label>")]
    assert 'aria-invalid="true"' in html
    manager.profile.refresh_from_db()
    assert manager.profile.work_list_hour == 5 and manager.profile.work_list_subscribed


@pytest.mark.django_db
def test_auditor_cannot_change_work_list_settings(as_auditor: Any) -> None:
    assert (
        as_auditor.post(reverse("planning:worklist_settings"), {"work_list_hour": "5"}).status_code
        == 403
    )


@pytest.mark.django_db
def test_a_depot_whose_list_cannot_be_built_is_reported_and_the_others_sent(
    smtp: tuple[Inbox, int], subscribed: dict[str, Any], client: Any
) -> None:
    """A depot name with a line break cannot go in an email subject (a header injection,
    refused by the email package): that depot's error is shown, the other depot's list is
    sent, and the refused one is left to retry rather than claimed for ever."""
    inbox, port = smtp
    manager = subscribed["manager"]
    broken = f.site_make(name="Depot\r\nBcc: someone@example.test")
    manager.profile.sites.add(broken)
    client.force_login(manager)
    with override_settings(MAILERS=smtp_mailer(port)):
        response = client.post(reverse("planning:worklist_send_now"), follow=True)
    levels = {m.message.split(":")[0]: m.level_tag for m in response.context["messages"]}
    assert levels[subscribed["site"].name] == "success"
    assert [level for name, level in levels.items() if name.startswith("Depot")] == ["error"]
    assert len(inbox.messages) == 1
    failed = WorkListDispatch.objects.get(site=broken)
    assert failed.status == WorkListDispatch.Status.RETRYING and "linefeed" in failed.last_error


@pytest.mark.django_db
def test_the_email_lists_units_most_urgent_first(
    smtp: tuple[Inbox, int], subscribed: dict[str, Any], unit_class: Any, monkeypatch: Any
) -> None:
    """Flagged units, then overdue ones (longest overdue first), then the rest, whatever their
    fleet numbers say; the same units in the same order in both parts of the email. Which
    unit is overdue or due comes from the engine, not from the test: OV-1 has run 600 h on a
    500 h filter (tests.factories.plans_make); AA-1 and AB-1 have run 50 h and 450 h."""
    inbox, port = smtp
    site = subscribed["site"]
    for number, days in (("AA-1", 5), ("AB-1", 45)):
        unit = f.unit_make(site=site, unit_class=unit_class, fleet_number=number)
        history_make(unit=unit, source=f.source_make(), days=days)
        due_items_recompute(unit_ids=[unit.pk], now=f.NOW)
    at = datetime(2026, 6, 15, 5, 10, tzinfo=UTC)
    monkeypatch.setattr("django.utils.timezone.now", lambda: at)
    with override_settings(MAILERS=smtp_mailer(port)):
        worklists_tick()
    (_, _, msg), *_ = inbox.messages
    for part in msg.walk():
        if part.is_multipart():
            continue
        body = part.get_payload(decode=True).decode()
        places = {n: body.index(n) for n in ("FL-1", "OV-1", "AA-1", "AB-1") if n in body}
        assert sorted(places, key=places.__getitem__)[:2] == ["FL-1", "OV-1"], (
            part.get_content_type()
        )
        assert len(places) >= 3  # at least one of the A units is due within the 7 days


@pytest.mark.skipif(shutil.which("make") is None, reason="make is not installed")
def test_make_demo_links_emails_to_the_address_it_serves() -> None:
    """`make demo` on another host and port: the server and the emails' SITE_URL move with it
    (make -n prints the commands without running them)."""
    root = Path(__file__).resolve().parents[2]
    shown = subprocess.run(
        ["make", "-n", "-C", str(root), "demo", "HOST=127.0.0.2", "PORT=8123"],
        capture_output=True,
        text=True,
        check=True,
    ).stdout
    serve = next(line for line in shown.splitlines() if "runserver" in line)
    assert "SITE_URL=http://127.0.0.2:8123 " in serve and serve.endswith("127.0.0.2:8123")
    seed = next(line for line in shown.splitlines() if "seed_demo" in line)
    assert "SITE_URL=http://127.0.0.2:8123 " in seed
