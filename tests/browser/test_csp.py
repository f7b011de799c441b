"""Each main page in a real browser (Chromium) under the Content-Security-Policy the server
sends: nothing the page needs is refused. Chromium reports a refused script, style or handler
as a console error naming the policy, and fires ``securitypolicyviolation`` (CSP Level 3,
W3C Working Draft, section 5.3); either fails the test."""

from __future__ import annotations

from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests.ledger.conftest import events_add
from tests.workorders.conftest import task_make, work_order_make

pytestmark = [pytest.mark.browser, pytest.mark.django_db(transaction=True)]

WATCH = """
window.__csp = [];
document.addEventListener("securitypolicyviolation", function (e) {
  window.__csp.push(e.violatedDirective + " " + (e.blockedURI || "inline"));
});
"""


@pytest.fixture
def job(unit: Any, manager: Any, mechanic: Any) -> WorkOrder:
    wo = work_order_make(unit=unit, created_by=manager, assigned_to=mechanic, number="WO-0700")
    task_make(wo, WorkOrderTask.Kind.INJECTOR_REPLACE, cylinder=2, description="Injector 2")
    return wo


def visit(page: Any, path: str) -> list[str]:
    """Load ``path`` and return what the policy refused there (console and events)."""
    refused: list[str] = []

    def listener(msg: Any) -> None:
        if "Content Security Policy" in msg.text:
            refused.append(msg.text)

    page.on("console", listener)
    response = page.goto(path)
    page.wait_for_load_state("networkidle")
    page.remove_listener("console", listener)
    assert response is not None and response.status == 200, (path, response and response.status)
    assert "script-src" in (response.headers.get("content-security-policy") or "")
    return refused + page.evaluate("window.__csp || []")


def test_main_pages_break_no_rule_of_the_policy(
    login_page: Any, job: WorkOrder, unit: Any, manager: Any, mechanic: Any, auditor: Any
) -> None:
    events_add(unit, mechanic, 2)
    event = ServiceEvent.objects.filter(unit=unit).first()
    assert event is not None
    manager.is_staff, manager.is_superuser = True, True
    manager.save()
    pages = {
        manager: [
            reverse("pages:due_list"),
            reverse("workorders:list"),
            reverse("workorders:detail", args=[job.pk]),
            reverse("pages:unit_list"),
            reverse("pages:unit_detail", args=[unit.pk]),
            reverse("ledger:history") + f"?correct={event.pk}",
            reverse("ledger:exports"),
            reverse("accounts:password_change"),
            reverse("accounts:unlock"),
            reverse("admin:index"),
            reverse("admin:fleet_unit_change", args=[unit.pk]),
            reverse("admin:workorders_workorder_change", args=[job.pk]),
        ],
        mechanic: [reverse("workorders:my_work"), reverse("workorders:detail", args=[job.pk])],
        auditor: [reverse("ledger:history")],
    }
    found: dict[str, list[str]] = {}
    for user, paths in pages.items():
        page = login_page(user)
        page.context.add_init_script(WATCH)
        for path in paths:
            if refused := visit(page, path):
                found[path] = refused
    assert found == {}


def test_the_printable_record_prints_from_its_script_not_an_inline_handler(
    login_page: Any, unit: Any, mechanic: Any, auditor: Any
) -> None:
    events_add(unit, mechanic, 2)
    page = login_page(auditor)
    page.context.add_init_script(WATCH)
    assert visit(page, reverse("ledger:history")) == []
    with page.expect_popup() as popup_info:
        page.get_by_role("button", name="Printable record").click()
    record = popup_info.value
    record.wait_for_load_state("networkidle")
    assert record.locator("[onclick]").count() == 0
    record.evaluate("window.print = function () { window.__printed = true; }")
    record.get_by_role("button", name="Print").click()
    assert record.evaluate("window.__printed === true")
    assert record.evaluate("window.__csp") == []
