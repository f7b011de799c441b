"""The fleet manager's day in a real browser (Chromium, desktop viewport)."""

from __future__ import annotations

import re
from typing import Any

import pytest
from django.contrib.auth.models import Group, User
from django.urls import reverse
from django.utils import timezone

from fleetfuel.accounts.models import Role
from fleetfuel.demo.actions import demo_seed
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders.models import WorkOrder
from tests import factories as f
from tests.browser.conftest import screenshot
from tests.factories import PASSWORD
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


@pytest.fixture
def demo_manager(db: Any) -> Any:
    """The demo fleet, built for now, and its manager (signed in with the tests' password)."""
    for role in Role:  # a transactional test flushes the roles the migration made
        Group.objects.get_or_create(name=role.value)
    demo_seed(now=timezone.now())
    manager = User.objects.get(username="manager")
    manager.set_password(PASSWORD)
    manager.save(update_fields=["password"])
    return manager


def test_the_first_screen_shows_twenty_items_the_water_alarm_drain_first(
    login_page: Any, demo_manager: Any
) -> None:
    page = login_page(demo_manager, width=1280, height=800)
    rows = page.locator("#due-results tr.due-row")
    tops = rows.evaluate_all("rs => rs.map(r => r.getBoundingClientRect().bottom)")
    assert sum(1 for bottom in tops if bottom <= 800) >= 20
    first = rows.first.inner_text()
    assert "Drain separator" in first and "Water alarm" in first
    # Each row on the screen says how far past or ahead it is, in days and engine hours.
    for text in rows.all_inner_texts()[:20]:
        assert re.search(r"(overdue by|due in) \d+\s+d · [\d,]+\s+h|due now", text), text
    # One line per item: every row of the first screen is as tall as the first.
    heights = rows.evaluate_all("rs => rs.slice(0, 20).map(r => r.getBoundingClientRect().height)")
    assert max(heights) - min(heights) < 1 and max(heights) < 32
    screenshot(page, "manager-due-list-demo-1280")


def test_at_768_the_due_list_is_cards_without_sideways_scroll(
    login_page: Any, demo_manager: Any
) -> None:
    page = login_page(demo_manager, width=768, height=1024)
    width = page.evaluate("() => [document.scrollingElement.scrollWidth, window.innerWidth]")
    assert width[0] <= width[1]
    # The navigation on one row.
    tops = page.locator(".topbar nav a").evaluate_all(
        "as => as.map(a => Math.round(a.getBoundingClientRect().top))"
    )
    assert len(set(tops)) == 1
    # "Why?" and the explanation are on the screen, not cut on the left.
    row = page.locator("#due-results tr.due-row").first
    why = row.get_by_role("link", name="Why?")
    box = why.bounding_box()
    assert box is not None and box["x"] >= 0 and box["x"] + box["width"] <= 768
    row_id = row.get_attribute("id").removeprefix("row-")
    why.click()
    detail = page.locator(f"#detail-{row_id}")
    # The line that says when it was projected (an explanation may say "projected" too).
    detail.get_by_text(re.compile(r"^Projected \d")).wait_for()
    explained = detail.bounding_box()
    assert explained is not None and explained["x"] >= 0
    assert explained["x"] + explained["width"] <= 768
    # Touch targets at least 44 px (WCAG 2.1 2.5.5): checkboxes, links and buttons of the rows.
    sizes = page.locator(
        "#due-results tr.due-row input, #due-results tr.due-row a,"
        " #due-results .decision-head > a, #due-results .decision-head summary"
    ).evaluate_all(
        "es => es.filter(e => e.offsetParent).map(e => { const r = e.getBoundingClientRect();"
        " return [e.outerHTML.slice(0, 60), r.width, r.height]; })"
    )
    small = [s for s in sizes if s[1] < 44 or s[2] < 44]
    assert sizes and not small, small
    # The same filters as at desktop widths.
    for name in ("site", "unit_class", "task", "status", "q", "within_days", "within_hours"):
        assert page.locator(f"#id_{name}").count() == 1
    screenshot(page, "manager-due-list-demo-768")
