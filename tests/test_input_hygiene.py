"""Input hygiene at one door (accounts/hygiene.py, services/bounds.py): a NUL byte or another
control character in any text field, or an absurd number (1e308) or date (9999-12-31), is a
field error, never a 500, and nothing of it is stored."""

from __future__ import annotations

from datetime import datetime
from typing import Any

import pint
import pytest
from django.urls import URLPattern, URLResolver, get_resolver, reverse

from fleetfuel.fleet.models import FuelSample, FuelSource, MeterReading, Site
from fleetfuel.ledger.models import ExportLog, ServiceEvent
from fleetfuel.workorders import actions
from fleetfuel.workorders.fields import TextField
from fleetfuel.workorders.kinds import KINDS
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from services import bounds
from tests import factories as f
from tests.ledger.conftest import events_add
from tests.workorders.conftest import task_make, work_order_make

HTMX = {"HTTP_HX_REQUEST": "true"}
NUL = "ab\x00cd"
REFUSED = "cannot hold control characters"
U = pint.UnitRegistry()


# ----------------------------------------------------------------- the bounds themselves


def test_a_mass_fraction_ends_at_one_kilogram_per_kilogram() -> None:
    # pint: 1 kg = 1,000,000 mg (SI prefixes).
    top = U.Quantity(1, "kg").to("mg").magnitude
    assert bounds.RANGES["mass_fraction_mg_kg"].high == pytest.approx(top)
    assert bounds.number_problem(value=top, quantity="mass_fraction_mg_kg") == ""
    assert bounds.number_problem(value=top * 1.001, quantity="mass_fraction_mg_kg")


def test_a_gauge_pressure_ends_below_at_minus_one_standard_atmosphere() -> None:
    # pint: 1 atm = 101.325 kPa = 1.01325 bar (ISO 2533 standard atmosphere).
    vacuum = -U.Quantity(1, "atm").to("bar").magnitude
    assert bounds.RANGES["pressure_bar_gauge"].low == pytest.approx(vacuum)
    assert bounds.number_problem(value=vacuum - 0.01, quantity="pressure_bar_gauge")


@pytest.mark.parametrize("quantity", sorted(bounds.RANGES))
def test_1e308_infinity_and_nan_are_refused_for_every_quantity(quantity: str) -> None:
    for value in (1e308, -1e308, float("inf"), float("nan")):
        assert bounds.number_problem(value=value, quantity=quantity), (quantity, value)


@pytest.mark.parametrize("char", ["\x00", "\x07", "\x1b", "\x7f", "\x85", "\x9f"])
def test_control_characters_are_refused_line_breaks_only_in_a_text_area(char: str) -> None:
    # Unicode category Cc (Unicode Standard 15.1, Table 4-4): C0, DEL and C1 controls.
    assert bounds.text_problem(value=f"a{char}b", multiline=True)
    assert bounds.text_problem(value="one\r\ntwo\tthree", multiline=True) == ""
    assert bounds.text_problem(value="one\ntwo", multiline=False)
    assert bounds.text_problem(value="Ölstand 滤清器 🚜 a\u200db", multiline=False) == ""


def test_late_close_notes_are_added_once_and_capped() -> None:
    once = bounds.notes_append(notes="first", text="late entry")
    assert bounds.notes_append(notes=once, text="late entry") == once
    notes = ""
    for i in range(40):
        notes = bounds.notes_append(notes=notes, text=f"{i}: " + "x" * 3_000)
    assert len(notes) <= bounds.NOTES_TOTAL_MAX and notes.startswith("0: ")


# ----------------------------------------------------------------- the tablet


@pytest.fixture
def order(unit: Any, manager: Any, mechanic: Any) -> WorkOrder:
    MeterReading.objects.create(
        unit=unit, taken_at=f.NOW, hours=1_990.0, source=MeterReading.Source.TELEMATICS
    )
    return work_order_make(unit=unit, created_by=manager, assigned_to=mechanic, number="WO-0900")


def text_fields() -> list[tuple[str, str]]:
    """(task kind, field name) for every text field of every task form."""
    return [
        (kind, name)
        for kind, spec in KINDS.items()
        for name, field in spec.form.base_fields.items()
        if isinstance(field, TextField)
    ]


@pytest.mark.parametrize(("kind", "name"), text_fields())
def test_nul_in_each_task_text_field_is_a_field_error_and_nothing_is_saved(
    as_mechanic: Any, order: WorkOrder, kind: str, name: str
) -> None:
    task = task_make(order, kind, cylinder=3 if KINDS[kind].per_cylinder else None)
    url = reverse("workorders:task_save", args=[task.pk])
    response = as_mechanic.post(url, {name: NUL}, **HTMX)
    assert response.status_code == 200 and REFUSED in response.content.decode()
    task.refresh_from_db()
    assert name not in task.entry


def test_job_fields_refuse_nul_and_1e308(as_mechanic: Any, order: WorkOrder) -> None:
    url = reverse("workorders:job_save", args=[order.pk])
    response = as_mechanic.post(url, {"hour_meter": "1e308", "notes": NUL}, **HTMX)
    html = response.content.decode()
    assert response.status_code < 500 and "Hour meter must be from 0 to 200,000 h" in html
    order.refresh_from_db()
    assert (order.hour_meter, order.notes) == (None, "")


def test_a_close_with_hour_meter_1e308_is_refused_and_closes_nothing(
    as_mechanic: Any, order: WorkOrder
) -> None:
    task_make(order, WorkOrderTask.Kind.RELIEF_VALVE_REPLACE, description="Relief valve")
    url = reverse("workorders:close", args=[order.pk])
    response = as_mechanic.post(url, {"token": "big", "hour_meter": "1e308"})
    assert response.status_code == 302  # post-redirect-get: the refusal shows on the page
    page = as_mechanic.get(response["Location"])
    assert "Hour meter must be from 0 to 200,000 h" in page.content.decode()
    order.refresh_from_db()
    assert order.status == WorkOrder.Status.OPEN and not ServiceEvent.objects.exists()
    assert order.hour_meter is None


def test_not_done_reason_and_added_task_refuse_nul(as_mechanic: Any, order: WorkOrder) -> None:
    task = task_make(order, WorkOrderTask.Kind.RELIEF_VALVE_REPLACE, description="Relief valve")
    reason = "Part not in stock\x00, ordered"
    response = as_mechanic.post(
        reverse("workorders:task_not_done", args=[task.pk]), {"reason": reason}, **HTMX
    )
    assert response.status_code == 422 and REFUSED in response.content.decode()
    task.refresh_from_db()
    assert task.not_done_at is None and task.not_done_reason == ""
    added = as_mechanic.post(
        reverse("workorders:task_add", args=[order.pk]),
        {"kind": WorkOrderTask.Kind.INSPECTION, "description": "Look\x00 at it"},
    )
    assert added.status_code == 422 and REFUSED in added.content.decode()
    assert order.tasks.count() == 1


def test_late_close_posts_do_not_grow_the_notes(order: WorkOrder, mechanic: Any) -> None:
    WorkOrder.objects.filter(pk=order.pk).update(
        status=WorkOrder.Status.CLOSED, closed_by=mechanic, closed_at=order.created_at
    )
    order.refresh_from_db()
    for _ in range(20):
        actions.note_append(order, "Close posted by another tablet: " + "entries " * 500)
    order.refresh_from_db()
    assert order.notes.count("Close posted by another tablet") == 1


# ----------------------------------------------------------------- lists and the ledger


@pytest.mark.parametrize(
    ("url_name", "query"),
    [
        ("pages:unit_list", "q=%00"),
        ("pages:due_list", "q=%00"),
        ("ledger:history", "unit=N-001%00"),
        ("ledger:history", "date_from=9999-12-31"),
    ],
)
def test_query_string_filters_with_nul_or_absurd_dates_answer_the_page(
    as_manager: Any, unit: Any, url_name: str, query: str
) -> None:
    response = as_manager.get(f"{reverse(url_name)}?{query}")
    assert response.status_code == 200


def test_unit_search_says_what_is_wrong(as_manager: Any, unit: Any) -> None:
    response = as_manager.get(reverse("pages:unit_list") + "?q=N%00")
    assert REFUSED in response.content.decode() and "N-001" in response.content.decode()


@pytest.mark.parametrize(
    ("field", "value", "message"),
    [
        ("water_ml", "1e308", "must be from 0 to 100,000 mL"),
        ("hour_meter", "1e308", "must be from 0 to 200,000 h"),
        ("performed_at", "9999-12-31T08:00", "(you entered 9999-12-31)"),
        ("notes", NUL, REFUSED),
        ("part_number", "AB\nCD", "cannot hold control characters (found U+000A)"),
    ],
)
def test_a_correction_with_an_absurd_value_is_a_field_error(
    as_manager: Any, unit: Any, mechanic: Any, field: str, value: str, message: str
) -> None:
    event = events_add(unit, mechanic, 1)[0]
    data = {
        "performed_at": "2026-11-30T08:00",
        "water_ml": "5",
        "reason": "typed in the wrong box",
        field: value,
    }
    response = as_manager.post(reverse("ledger:correct", args=[event.pk]), data)
    assert response.status_code == 400 and message in response.content.decode()
    assert ServiceEvent.objects.count() == 1


# ----------------------------------------------------------------- the admin


@pytest.fixture
def as_admin(client: Any, db: Any) -> Any:
    user = f.user_make("manager", username="root")
    user.is_staff = user.is_superuser = True
    user.save()
    client.force_login(user)
    return client


@pytest.mark.parametrize("name", [NUL, "North\r\nBcc: everyone@example.com"])
def test_admin_refuses_control_characters_in_a_depot_name(as_admin: Any, name: str) -> None:
    response = as_admin.post(
        reverse("admin:fleet_site_add"), {"name": name, "code": "x1", "time_zone": "UTC"}
    )
    assert response.status_code == 200 and "cannot hold control characters" in response.text
    assert not Site.objects.filter(code="x1").exists()


def test_admin_refuses_a_source_name_with_nul(as_admin: Any, site: Site) -> None:
    response = as_admin.post(reverse("admin:fleet_fuelsource_add"), {"name": NUL, "site": site.pk})
    assert response.status_code == 200 and REFUSED in response.text
    assert not FuelSource.objects.exists()


def test_admin_refuses_a_sample_of_1e308_mg_kg(as_admin: Any, unit: Any) -> None:
    url = reverse("admin:fleet_fuelsample_add")
    response = as_admin.post(
        url, {"unit": unit.pk, "sampled_at_0": "2026-11-30", "sampled_at_1": "08:00",
              "water_mg_kg": "1e308"}
    )  # fmt: skip
    assert response.status_code == 200
    assert "must be from 0 to 1,000,000 mg/kg" in response.text
    assert not FuelSample.objects.exists()


def test_datetime_window_is_relative_to_today() -> None:
    today = datetime(2026, 12, 2).date()
    assert bounds.date_problem(value=today, today=today) == ""
    assert bounds.date_problem(value=datetime(9999, 12, 31).date(), today=today)


def test_an_export_with_nul_in_the_unit_filter_is_refused_and_logs_nothing(
    as_manager: Any, unit: Any
) -> None:
    response = as_manager.post(reverse("pages:export"), {"format": "csv", "unit": NUL})
    assert response.status_code == 302 and response["Location"] == reverse("ledger:history")
    page = as_manager.get(response["Location"]).content.decode()
    assert "The export was not started" in page and REFUSED in page
    assert not ExportLog.objects.exists()


def test_a_text_without_its_own_cap_is_capped() -> None:
    assert bounds.length_problem(value="x" * bounds.NOTES_TOTAL_MAX) == ""
    assert bounds.length_problem(value="x" * (bounds.NOTES_TOTAL_MAX + 1))


def pages_without_arguments() -> list[str]:
    """Every page of fleetfuel's URL configuration that takes no argument."""
    found: list[str] = []

    def walk(patterns: list[Any], prefix: str) -> None:
        for p in patterns:
            if isinstance(p, URLResolver):
                if p.namespace != "admin":
                    walk(p.url_patterns, f"{prefix}{p.namespace}:" if p.namespace else prefix)
            elif isinstance(p, URLPattern) and p.name and not p.pattern.converters:
                found.append(f"{prefix}{p.name}")

    walk(get_resolver().url_patterns, "")
    return sorted(set(found) - {"accounts:logout", "accounts:healthz"})


ODD_QUERY = "&".join(
    f"{name}={value}"
    for name in ("q", "unit", "site", "status", "page", "older", "newer", "before", "correct",
                 "within_hours", "within_days", "date_from", "kind", "sort")
    for value in ("%00", "1e308")
)  # fmt: skip


@pytest.mark.parametrize("url_name", pages_without_arguments())
def test_no_page_answers_500_to_nul_or_1e308_in_its_query(
    as_manager: Any, unit: Any, url_name: str
) -> None:
    response = as_manager.get(f"{reverse(url_name)}?{ODD_QUERY}")
    assert response.status_code < 500, (url_name, response.status_code)
