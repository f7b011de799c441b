"""One date format per depot: every page of the demo, its work-list emails and its printed
record show each date the depot's one way; the CSV and XLSX exports use ISO 8601 dates.

The demo is built once (rolled back afterwards) at a fixed instant; each role signs in and
reads the pages it may see. Dates are found in the visible text (tags and attribute values,
where machine-readable ISO dates belong, are left out) by a pattern that knows every form a
date has been written in here, and each must be the depot's form. The forms: ISO 8601:2019
clause 5.2.2.1 (YYYY-MM-DD); "2 Dec 2026" is Django's en_GB DATE_FORMAT "j M Y"; "Dec 2, 2026"
is the month-first US form (common practice); "02.12.2026" is Django's de SHORT_DATE_FORMAT.
"""

from __future__ import annotations

import csv
import io
import re
from collections.abc import Iterator
from datetime import datetime
from html.parser import HTMLParser
from io import StringIO
from typing import Any
from zoneinfo import ZoneInfo

import openpyxl
import pytest
import time_machine
from django.contrib.auth.models import User
from django.core.management import call_command
from django.db import transaction
from django.test import Client, TestCase
from django.urls import reverse

from fleetfuel.fleet.models import Site, Unit
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.worklists import worklist_message
from fleetfuel.workorders.models import WorkOrder

NOW = datetime.fromisoformat("2026-12-02T02:40:00Z")
MON = r"(?:Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec)[a-z]*\.?"
# Any date, in any form seen on these pages (with or without the year, month named or not).
ANY_DATE = re.compile(
    rf"\b\d{{4}}-\d{{2}}-\d{{2}}(?![\d-])"
    rf"|\b\d{{1,2}}\.\d{{1,2}}\.\d{{2,4}}\b"
    rf"|\b\d{{1,2}} {MON}(?: \d{{2,4}}\b)?"
    rf"|\b{MON} \d{{1,2}}\b(?:, \d{{4}}\b)?"
)
STYLE_FORM = {
    "en-GB": re.compile(r"\d{1,2} (?:Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec) \d{4}"),
    "en-US": re.compile(r"(?:Jan|Feb|Mar|Apr|May|Jun|Jul|Aug|Sep|Oct|Nov|Dec) \d{1,2}, \d{4}"),
    "de-DE": re.compile(r"\d{2}\.\d{2}\.\d{4}"),
    "iso": re.compile(r"\d{4}-\d{2}-\d{2}"),
}
ISO_DATE = STYLE_FORM["iso"]


class _Text(HTMLParser):
    def __init__(self) -> None:
        super().__init__()
        self.parts: list[str] = []
        self.skip = 0

    def handle_starttag(self, tag: str, attrs: Any) -> None:
        self.skip += tag in ("script", "style", "title")

    def handle_endtag(self, tag: str) -> None:
        self.skip -= tag in ("script", "style", "title") and self.skip > 0

    def handle_data(self, data: str) -> None:
        if not self.skip:
            self.parts.append(data)


def visible_text(html: str) -> str:
    parser = _Text()
    parser.feed(html)
    return "\n".join(parser.parts).replace("\u00a0", " ")  # no date across two elements


def dates_in(text: str) -> list[str]:
    return [m.group(0) for m in ANY_DATE.finditer(text.replace("\u00a0", " "))]


def assert_one_form(text: str, style: str, where: str) -> int:
    found = dates_in(text)
    wrong = [d for d in found if not STYLE_FORM[style].fullmatch(d)]
    assert not wrong, f"{where}: dates not in the depot's {style} form: {wrong[:8]}"
    return len(found)


@pytest.fixture(scope="module")
def demo(django_db_setup: Any, django_db_blocker: Any) -> Iterator[None]:
    with django_db_blocker.unblock(), transaction.atomic():
        with TestCase.captureOnCommitCallbacks(), time_machine.travel(NOW, tick=False):
            call_command("seed_demo", "--now", NOW.isoformat(), stdout=StringIO())
            call_command("project_due", "--quiet", stdout=StringIO())
        yield
        transaction.set_rollback(True)


@pytest.fixture
def at_now(demo: None, db: Any) -> Iterator[None]:
    with time_machine.travel(NOW, tick=False):
        yield


def signed_in(username: str) -> Client:
    client = Client()
    client.force_login(User.objects.get(username=username))
    return client


def page(client: Client, url: str) -> str:
    response = client.get(url)
    assert response.status_code == 200, url
    return visible_text(response.content.decode())


def depot_pages(client: Client, site: Site, role: str) -> Iterator[tuple[str, str]]:
    """(where, visible text) of each page about this one depot that the role may read."""
    for unit in Unit.objects.filter(site=site).order_by("fleet_number")[:3]:
        url = reverse("pages:unit_detail", args=[unit.pk])
        yield url, page(client, url)
    for wo in WorkOrder.objects.filter(unit__site=site).order_by("pk")[:3]:
        url = reverse("workorders:detail", args=[wo.pk])
        yield url, page(client, url)
    if role == "manager":
        url = reverse("pages:due_list") + f"?site={site.pk}&sort=urgency"
        yield url, page(client, url)
        for item in DueItem.objects.filter(site=site).order_by("urgency", "pk")[:3]:
            url = reverse("pages:due_item_detail", args=[item.pk])
            yield url, page(client, url)
        for name in ("hours", "fuel", "delivery", "sample", "event"):
            url = reverse(f"intake:{name}") + f"?site={site.code}"
            yield url, page(client, url)
    if role in ("manager", "auditor"):
        url = reverse("ledger:history") + f"?site={site.pk}"
        yield url, page(client, url)
        printed = client.post(reverse("pages:export"), {"site": site.pk, "format": "print"})
        assert printed.status_code == 200, printed.status_code
        yield f"print of {site.code}", visible_text(printed.content.decode())


@pytest.mark.parametrize("username, role", [("manager", "manager"), ("auditor", "auditor")])
def test_every_depot_page_shows_dates_the_depots_one_way(
    at_now: None, username: str, role: str
) -> None:
    client = signed_in(username)
    styles = set()
    for site in Site.objects.order_by("name"):
        styles.add(site.display_style)
        counted = sum(
            assert_one_form(text, site.display_style, where)
            for where, text in depot_pages(client, site, role)
        )
        assert counted > 10, f"{site.code}: too few dates found to check ({counted})"
    assert {"en-GB", "en-US"} <= styles  # the demo has both a UK and a US depot


def test_mechanic_pages_show_dates_the_depots_one_way(at_now: None) -> None:
    client = signed_in("mechanic")
    user = User.objects.get(username="mechanic")
    sites = list(user.profile.sites.all())
    counted = 0
    for site in sites:
        counted += sum(
            assert_one_form(text, site.display_style, where)
            for where, text in depot_pages(client, site, "mechanic")
        )
    if len({s.display_style for s in sites}) == 1:
        my_work = page(client, reverse("workorders:my_work"))
        counted += assert_one_form(my_work, sites[0].display_style, "my work")
    assert counted > 0


def test_work_list_emails_show_dates_the_depots_one_way(at_now: None) -> None:
    manager = User.objects.get(username="manager")
    for site in Site.objects.all():
        today = NOW.astimezone(ZoneInfo(site.time_zone)).date()
        message, _ = worklist_message(user=manager, site=site, today=today)
        html = str(message.alternatives[0][0])  # type: ignore[index]
        for where, text in (
            ("subject", message.subject),
            ("text", message.body),
            ("html", visible_text(html)),
        ):
            assert assert_one_form(text, site.display_style, f"{site.code} email {where}") >= 1


def test_lists_across_depots_show_each_date_one_of_their_ways(at_now: None) -> None:
    styles = {s.display_style for s in Site.objects.all()}
    for username, url in (
        ("manager", reverse("pages:unit_list")),
        ("manager", reverse("workorders:list")),
        ("manager", reverse("ledger:history")),
        ("manager", reverse("ledger:exports")),
        ("auditor", reverse("workorders:list")),
    ):
        text = page(signed_in(username), url)
        for found in dates_in(text):
            assert any(STYLE_FORM[s].fullmatch(found) for s in styles), (url, found)


def test_csv_and_xlsx_exports_use_iso_dates(at_now: None) -> None:
    client = signed_in("manager")
    site = Site.objects.get(code="cedar-flats")  # a US depot: its pages say "Dec 2, 2026"
    response = client.post(reverse("pages:export"), {"site": site.pk, "format": "csv"})
    text = b"".join(response.streaming_content).decode("utf-8")  # type: ignore[attr-defined]
    rows = list(csv.reader(io.StringIO(text)))
    cells = [c for row in rows[1:] for c in row]
    found = [d for c in cells for d in dates_in(c)]
    assert found and all(ISO_DATE.fullmatch(d) for d in found), found[:5]
    response = client.post(reverse("pages:export"), {"site": site.pk, "format": "xlsx"})
    book = openpyxl.load_workbook(io.BytesIO(b"".join(response.streaming_content)))  # type: ignore[attr-defined]
    values = [
        v
        for ws in book.worksheets
        for row in ws.iter_rows(min_row=2, values_only=True)
        for v in row
        if isinstance(v, str)
    ]
    found = [d for v in values for d in dates_in(v)]
    assert all(ISO_DATE.fullmatch(d) for d in found), found[:5]


def test_one_spelling_per_depot_on_the_unit_page_and_the_print(at_now: None) -> None:
    # British "tyre", US "tire" (common practice); the demo's haulers carry a tyre size.
    client = signed_in("manager")
    for code, label, other in (
        ("kestrel", "Tyre size", "Tire size"),
        ("cedar-flats", "Tire size", "Tyre size"),
    ):
        unit = Unit.objects.filter(site__code=code).exclude(tire_size="").order_by("pk").first()
        assert unit is not None
        text = page(client, reverse("pages:unit_detail", args=[unit.pk]))
        printed = client.post(
            reverse("pages:export"),
            {"site": unit.site_id, "unit": unit.fleet_number, "format": "print"},
        ).content.decode()
        for shown in (text, printed):
            assert label in shown and other not in shown
