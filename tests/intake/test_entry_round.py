"""The hour-meter round: every active unit of a depot in one form, only the filled rows saved,
each checked against its neighbours; refused rows keep the typed value and say why.

Sources: a day has 24 hours (ISO 8601-1:2019, 3.1.2.21), so a meter gains at most 24 h a day;
an hour meter only counts up unless replaced (common practice).
"""

from __future__ import annotations

from datetime import date, timedelta
from typing import Any

import pytest
import time_machine
from django.urls import reverse

from fleetfuel.fleet.models import MeterReading
from tests import factories as f
from tests.factories import NOW

pytestmark = pytest.mark.usefixtures("clock_at_now")

URL = reverse("intake:hours")
DAY = timedelta(days=1)
AT = "2026-06-15T12:30"  # North Depot is Europe/London: 11:30 UTC, half an hour before NOW


def depot(site: Any, unit_class: Any, n: int) -> list[Any]:
    units = [
        f.unit_make(site=site, unit_class=unit_class, fleet_number=f"R-{i:02d}") for i in range(n)
    ]
    for unit in units:
        MeterReading.objects.create(unit=unit, taken_at=NOW - 2 * DAY, hours=1_000.0)
    return units


def post(client: Any, site: Any, rows: dict[Any, str], at: str = AT, **kw: Any) -> Any:
    data = {"site": site.code, "taken_at": at} | {f"h-{u.pk}": v for u, v in rows.items()}
    return client.post(URL, data, **kw)


def test_every_active_unit_with_its_last_reading(
    as_manager: Any, site: Any, other_site: Any, unit_class: Any
) -> None:
    units = depot(site, unit_class, 3)
    gone = f.unit_make(site=site, unit_class=unit_class, fleet_number="R-GONE")
    gone.disposed_on = date(2026, 6, 1)
    gone.save()
    f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-ELSEWHERE")
    page = as_manager.get(URL, {"site": site.code}).content.decode()
    for unit in units:
        assert f'name="h-{unit.pk}"' in page
    # 12:00 UTC is 13:00 in London summer (BST, IANA tz database), in the depot's style.
    assert "1,000\u00a0h" in page and "13\u00a0Jun\u00a02026, 13:00" in page
    assert "R-GONE" not in page and "S-ELSEWHERE" not in page


def test_only_filled_rows_are_saved_and_refused_rows_keep_their_value(
    as_manager: Any, site: Any, unit_class: Any
) -> None:
    a, b, c = depot(site, unit_class, 3)
    # b: 60 h on a reading 47.5 h earlier, more than the time holds (24 h a day).
    response = post(as_manager, site, {a: "1012,5", b: "1060", c: ""})
    assert response.status_code == 200
    page = response.content.decode()
    assert "47.5 h elapsed" in page and 'value="1060"' in page
    assert MeterReading.objects.filter(unit=a, hours=1_012.5).exists()
    assert MeterReading.objects.filter(unit=b).count() == 1
    assert MeterReading.objects.filter(unit=c).count() == 1


def test_a_clean_round_saves_and_comes_back_blank(
    as_manager: Any, site: Any, unit_class: Any
) -> None:
    a, b = depot(site, unit_class, 2)
    response = post(as_manager, site, {a: "1010", b: "1020"}, follow=True)
    assert response.redirect_chain and "2 readings saved" in response.content.decode()
    assert MeterReading.objects.filter(taken_at__gt=NOW - DAY).count() == 2
    # The same form sent again stores nothing twice.
    post(as_manager, site, {a: "1010", b: "1020"})
    assert MeterReading.objects.filter(taken_at__gt=NOW - DAY).count() == 2


def test_bad_rows_and_a_future_time_are_field_errors(
    as_manager: Any, site: Any, unit_class: Any
) -> None:
    a, b, c = depot(site, unit_class, 3)
    page = post(as_manager, site, {a: "12\x0034", b: "-5", c: "lots"}).content.decode()
    assert "Null characters are not allowed." in page
    assert "cannot be below 0" in page and "is not a number" in page
    page = post(as_manager, site, {a: "1010"}, at="2027-01-15T12:00").content.decode()
    assert "in the future" in page
    assert MeterReading.objects.count() == 3  # nothing saved


def test_htmx_gets_the_form_fragment(as_manager: Any, site: Any, unit_class: Any) -> None:
    (a,) = depot(site, unit_class, 1)
    response = post(as_manager, site, {a: "5000"}, HTTP_HX_REQUEST="true")
    page = response.content.decode()
    assert page.lstrip().startswith("<form") and "<html" not in page
    assert "HX-Request" in response["Vary"]


def test_managers_only_and_only_their_sites(
    client: Any, as_manager: Any, mechanic: Any, site: Any, other_site: Any, manager: Any
) -> None:
    manager.profile.sites.set([site])
    assert as_manager.get(URL, {"site": other_site.code}).status_code == 404
    assert as_manager.get(URL, {"site": "north\x00"}).status_code == 200  # NUL stripped
    client.force_login(mechanic)
    assert client.get(URL).status_code == 403


@pytest.mark.parametrize("n", [3, 12])
def test_round_queries_do_not_grow_with_the_depot(
    as_manager: Any, site: Any, unit_class: Any, django_assert_num_queries: Any, n: int
) -> None:
    units = depot(site, unit_class, n)
    # GET: 1 session, 2 user, 3 role (groups), 4 the manager's sites (named ones, else all:
    # one query), 5 the units with their latest reading (subqueries).
    with django_assert_num_queries(5):
        as_manager.get(URL, {"site": site.code})
    # POST: 1-5 as above, 6 the units' neighbours, 7 replacements between, 8 savepoint,
    # 9 one insert of every reading, 10 release; 11 the rows again, with the new readings
    # (a row was refused, so the form comes back).
    rows = dict.fromkeys(units[:-1], "1010") | {units[-1]: "9999"}
    with django_assert_num_queries(11):
        post(as_manager, site, rows)
    assert MeterReading.objects.filter(hours=1_010.0).count() == n - 1


def test_the_round_reads_the_time_in_the_depots_zone(
    as_manager: Any, site: Any, unit_class: Any
) -> None:
    (a,) = depot(site, unit_class, 1)
    with time_machine.travel(NOW, tick=False):
        post(as_manager, site, {a: "1001"}, at="2026-06-15T12:30")
    reading = MeterReading.objects.latest()
    assert reading.taken_at == NOW - timedelta(minutes=30)  # BST is UTC+1 in June


def test_a_bad_time_keeps_every_typed_row(as_manager: Any, site: Any, unit_class: Any) -> None:
    a, b = depot(site, unit_class, 2)
    page = post(as_manager, site, {a: "1010", b: "1020"}, at="yesterday").content.decode()
    assert "Enter a valid date/time." in page
    assert 'value="1010"' in page and 'value="1020"' in page
    assert MeterReading.objects.count() == 2


def test_the_hour_the_clocks_go_back_and_forward(
    as_manager: Any, site: Any, unit_class: Any
) -> None:
    # Europe/London: BST ends 2025-10-26 02:00 BST (01:30 happens twice), and begins
    # 2026-03-29 01:00 GMT (01:30 never happens) (the UK Summer Time Act 1972 as amended;
    # the tz database).
    (a,) = depot(site, unit_class, 1)
    MeterReading.objects.all().delete()
    post(as_manager, site, {a: "900"}, at="2025-10-26T01:30")
    assert MeterReading.objects.get().taken_at.isoformat() == "2025-10-26T00:30:00+00:00"
    page = post(as_manager, site, {a: "905"}, at="2026-03-29T01:30").content.decode()
    assert "2026-03-29 01:30 does not occur in Europe/London" in page
