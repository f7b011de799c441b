"""No duplicate work: two managers with the due list open pick the same item; the second is
refused, told which work order holds it, and nothing is made (1280x800 and 768x1024)."""

from __future__ import annotations

from typing import Any

import pytest

from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests import factories as f
from tests.browser.conftest import screenshot
from tests.pages.test_due_list import fleet_make

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]


@pytest.mark.parametrize(
    ("width", "height"), [(1280, 800), (768, 1024)], ids=["1280x800", "768x1024"]
)
def test_a_second_work_order_for_an_item_already_in_one_is_refused(
    login_page: Any, width: int, height: int
) -> None:
    from playwright.sync_api import expect

    north = f.site_make(name="North Pit", code="north-pit")
    fleet_make(site=north, unit_class=f.unit_class_make(name="Hauler"), n=2, prefix="NP")
    f.user_make("mechanic", username="nell", sites=[north])
    first = login_page(f.user_make("manager", username="mara"), width=width, height=height)
    second = login_page(f.user_make("manager", username="milo"), width=width, height=height)
    item = first.locator("#due-results input[name=item]").first.get_attribute("value")
    for page in (first, second):  # both have the list open, the item not yet taken
        page.locator(f"#row-{item} input[name=item]").check()

    first.get_by_role("button", name="Create work orders from selected").click()
    expect(first.get_by_text("Created 1 work order(s)")).to_be_visible()
    (order,) = WorkOrder.objects.all()

    second.get_by_role("button", name="Create work orders from selected").click()
    refusal = second.get_by_text("No work order was made.")
    expect(refusal).to_be_visible()
    expect(refusal).to_contain_text(f"is in open work order {order.number}")
    screenshot(second, f"manager-duplicate-refused-{width}x{height}")
    assert list(WorkOrder.objects.all()) == [order]
    assert WorkOrderTask.objects.filter(due_item_id=int(item)).count() == 1
    # The list, reloaded, offers the item no more.
    expect(second.locator(f"#row-{item} input[name=item]")).to_have_count(0)
