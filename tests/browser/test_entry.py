"""The manager records a day's readings, fuelings and a lab result on fleetfuel's own pages,
on a desktop (1280x800) and a tablet (768x1024), from the keyboard where it is quicker."""

from __future__ import annotations

from datetime import timedelta
from pathlib import Path
from typing import Any

import pytest
from django.utils import timezone
from playwright.sync_api import expect

from fleetfuel.fleet.models import Fueling, FuelSample, MeterReading
from tests import factories as f

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

SHOTS = Path("/tmp/i1shots")


def shot(page: Any, name: str) -> None:
    SHOTS.mkdir(parents=True, exist_ok=True)
    page.screenshot(path=str(SHOTS / f"{name}.png"), full_page=True)


@pytest.mark.parametrize(("width", "height"), [(1280, 800), (768, 1024)])
def test_manager_enters_a_days_data(login_page: Any, width: int, height: int) -> None:
    site = f.site_make(name="Quarry Depot", code="quarry", time_zone="Europe/London")
    uc = f.unit_class_make(name="Loader", typical_tank_l=400.0)
    units = [f.unit_make(site=site, unit_class=uc, fleet_number=f"QL-{n}") for n in (1, 2, 3)]
    two_days_ago = timezone.now() - timedelta(days=2)
    for n, unit in enumerate(units):
        MeterReading.objects.create(unit=unit, taken_at=two_days_ago, hours=1_000.0 + 100 * n)
    tank = f.source_make(name="Quarry bulk tank", site=site)
    manager = f.user_make("manager", username="mona")
    size = f"{width}x{height}"

    page = login_page(manager, width=width, height=height)
    page.get_by_role("link", name="Enter data").click()
    shot(page, f"home-{size}")
    page.get_by_role("link", name="Hour meters").first.click()
    page.get_by_text("QL-3").wait_for()
    shot(page, f"hours-empty-{size}")

    # The round: QL-1 plausible, QL-2 more hours than two days hold; QL-3 left blank.
    page.fill("#h-" + str(units[0].pk), "1012.5")
    page.fill("#h-" + str(units[1].pk), "1160")
    page.keyboard.press("Enter")
    page.get_by_text("elapsed between them").wait_for()
    shot(page, f"hours-refused-{size}")
    assert list(MeterReading.objects.filter(unit=units[0]).values_list("hours", flat=True)) == [
        1_012.5,
        1_000.0,
    ]
    assert page.input_value("#h-" + str(units[1].pk)) == "1160"  # the typed value is kept
    page.fill("#h-" + str(units[1].pk), "1116")
    page.keyboard.press("Enter")
    page.get_by_text("1 reading saved at Quarry Depot").wait_for()
    assert MeterReading.objects.filter(unit=units[1], hours=1_116.0).exists()
    assert MeterReading.objects.filter(unit=units[2]).count() == 1

    # Two fuelings, one after the other: the source and time stay for the next.
    page.get_by_role("link", name="Fuelings").click()
    page.fill("#id_unit", "QL-1")
    page.select_option("#id_source", label="Quarry bulk tank")
    page.fill("#id_amount", "250")
    page.keyboard.press("Enter")
    page.get_by_text("Fueling saved: QL-1").wait_for()
    # The next blank form has the cursor in the unit (waited for: the page's script puts it
    # there once the form is back): type, Tab to the fuel, type.
    expect(page.locator("#id_unit")).to_be_focused()
    page.keyboard.type("ql-2")
    page.keyboard.press("Tab")
    page.keyboard.type("900")  # more than the 400 L tank holds
    page.keyboard.press("Enter")
    page.get_by_text("more than the tank holds").wait_for()
    shot(page, f"fuel-refused-{size}")
    page.fill("#id_amount", "180")
    page.keyboard.press("Enter")
    page.get_by_text("Fueling saved: QL-2").wait_for()
    shot(page, f"fuel-saved-{size}")
    fuelings = Fueling.objects.filter(unit__site=site, source=tank).order_by("unit__fleet_number")
    assert [(x.unit.fleet_number, x.litres) for x in fuelings] == [("QL-1", 250.0), ("QL-2", 180.0)]

    # A lab result for the bulk tank, the code with the lab's ">=" mark.
    page.get_by_role("link", name="Lab results").click()
    page.select_option("#id_source", label="Quarry bulk tank")
    page.fill("#id_reference", f"LAB-{width}")
    page.fill("#id_iso4406", ">=24/21/18")
    page.fill("#id_water_mg_kg", "180")
    page.fill("#id_total_contamination_mg_kg", "21")
    page.fill("#id_appearance", "clear and bright")
    page.fill("#id_lab", "County Fuel Lab")
    shot(page, f"sample-filled-{size}")
    page.get_by_role("button", name="Save lab result").click()
    page.get_by_text(f"Lab result LAB-{width} saved").wait_for()
    shot(page, f"sample-saved-{size}")
    sample = FuelSample.objects.get(reference=f"LAB-{width}")
    assert (sample.source, sample.unit, sample.code_4, sample.water_mg_kg) == (tank, None, 24, 180)

    # Still on fleetfuel's own pages: its navigation, never the stock admin.
    assert "/admin/" not in page.url
    assert page.locator("header.topbar .brand").inner_text() == "fleetfuel"
    for name in ("delivery", "event"):
        page.goto(f"/intake/{name}/")
        shot(page, f"{name}-{size}")
