"""The fleet manager's day in a real browser (Chromium, desktop viewport)."""

from __future__ import annotations

import re
from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.models import WorkOrder
from tests import factories as f
from tests.browser.conftest import screenshot
from tests.pages.test_due_list import fleet_make

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


def test_manager_filters_expands_and_creates_a_work_order(login_page: Any) -> None:
    north = f.site_make(name="North Pit", code="north-pit")
    south = f.site_make(name="South Yard", code="south-yard")
    uc = f.unit_class_make(name="Hauler")
    fleet_make(site=north, unit_class=uc, n=3, prefix="NP")
    fleet_make(site=south, unit_class=uc, n=3, prefix="SY")
    f.user_make("mechanic", username="nell", sites=[north])
    manager = f.user_make("manager", username="mara")

    page = login_page(manager)
    assert page.url.endswith(reverse("pages:due_list"))
    # Filter to overdue at one site: the table updates in place and the URL follows.
    page.select_option("#id_site", label="North Pit")
    page.wait_for_load_state("networkidle")
    page.select_option("#id_status", value="overdue")
    page.wait_for_url(lambda url: "status=overdue" in url)  # no eval: the CSP refuses it
    page.wait_for_load_state("networkidle")
    rows = page.locator("#due-results tbody tr[id^=row-]")
    assert rows.count() >= 2
    for text in rows.all_inner_texts():
        assert "North Pit" in text and "Overdue" in text

    # Expand a row: the explanation appears below it.
    first_id = rows.first.get_attribute("id").removeprefix("row-")
    rows.first.get_by_role("link", name="Why?").click()
    page.locator(f"#detail-{first_id}").get_by_text("Explained").wait_for()

    # Select two items (on one unit or two) and create work orders.
    boxes = page.locator("#due-results input[name=item]")
    picked = [boxes.nth(0).get_attribute("value"), boxes.nth(1).get_attribute("value")]
    boxes.nth(0).check()
    boxes.nth(1).check()
    screenshot(page, "manager-due-list-1280")
    page.get_by_role("button", name="Create work orders from selected").click()
    page.get_by_text(re.compile(r"Created \d work order")).wait_for()
    units = set(DueItem.objects.filter(pk__in=picked).values_list("unit_id", flat=True))
    orders = WorkOrder.objects.filter(unit_id__in=units)
    assert orders.count() == len(units)
    assert sum(o.tasks.count() for o in orders) == 2

    # Find it among the work orders.
    page.goto(reverse("workorders:list"))
    for order in orders:
        page.get_by_text(order.number).first.wait_for()
    screenshot(page, "manager-work-orders-1280")
