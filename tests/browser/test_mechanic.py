"""The mechanic's tablet in a real browser (portrait 768x1024, and the pages at 1024x768)."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.utils import timezone

from fleetfuel.fleet.models import ComponentKind, MeterReading
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem, UnitFlag
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests.browser.conftest import screenshot
from tests.workorders.conftest import limits, task_make, work_order_make  # noqa: F401

pytestmark = pytest.mark.browser
K = WorkOrderTask.Kind


@pytest.fixture
def job(transactional_db: Any, unit: Any, manager: Any, mechanic: Any) -> WorkOrder:
    MeterReading.objects.create(
        unit=unit,
        taken_at=timezone.now() - timedelta(days=2),
        hours=1_990.0,
        source=MeterReading.Source.TELEMATICS,
    )
    due_items_recompute(unit_ids=[unit.pk], now=timezone.now())
    wo = work_order_make(
        unit=unit,
        created_by=manager,
        assigned_to=mechanic,
        number="WO-0300",
        priority=WorkOrder.Priority.HIGH,
    )
    task_make(wo, K.INJECTOR_REPLACE, cylinder=3, description="Replace injector, cylinder 3")
    task_make(
        wo,
        K.FILTER_CHANGE,
        component=unit.components.get(kind=ComponentKind.PRIMARY_FILTER),
        description="Change primary filter",
    )
    return wo


def test_mechanic_closes_after_adding_the_missing_connector(
    login_page: Any, job: WorkOrder, unit: Any, mechanic: Any
) -> None:
    from playwright.sync_api import expect

    injector = job.tasks.get(kind=K.INJECTOR_REPLACE)
    filter_task = job.tasks.get(kind=K.FILTER_CHANGE)
    primary_due = DueItem.objects.get(unit=unit, task=DueItem.Task.PRIMARY_FILTER)
    assert primary_due.status == DueItem.Status.OVERDUE

    page = login_page(mechanic, width=768, height=1024)
    # Home for a mechanic is their work list.
    expect(page.locator("h1")).to_have_text("My work")
    screenshot(page, "mechanic-my-work-768x1024")
    page.click("text=WO-0300")
    expect(page.locator("h1")).to_have_text("Work order WO-0300")
    expect(page.locator(f"#task-{injector.pk} .caution")).to_contain_text("Never feel for leaks")

    page.fill("#hour_meter", "2012")
    page.press("#hour_meter", "Tab")
    expect(page.locator("#job-status .saved-note")).to_contain_text("Saved")

    page.fill(f"#t{injector.pk}-new_serial", "INJ-NEW-3")
    page.press(f"#t{injector.pk}-new_serial", "Tab")
    expect(page.locator(f"#task-{injector.pk}-status .saved-note")).to_contain_text("Saved")

    # A save that cannot reach the server says so, keeps the entry on the tablet, and puts it
    # back (and saves it) when the page is opened again.
    save_url = f"**/work/tasks/{filter_task.pk}/save/"
    page.route(save_url, lambda route: route.abort("internetdisconnected"))
    page.fill(f"#t{filter_task.pk}-part_number", "PF-100")
    page.press(f"#t{filter_task.pk}-part_number", "Tab")
    expect(page.locator(f"#task-{filter_task.pk}-status .saved-note")).to_contain_text(
        "Not saved: no connection"
    )
    filter_task.refresh_from_db()
    assert filter_task.entry.get("part_number") is None
    page.unroute(save_url)
    page.reload()
    expect(page.locator(f"#t{filter_task.pk}-part_number")).to_have_value("PF-100")
    expect(page.locator(f"#task-{filter_task.pk}-status .saved-note")).to_contain_text("Saved")
    filter_task.refresh_from_db()
    assert filter_task.entry["part_number"] == "PF-100"
    screenshot(page, "mechanic-work-order-768x1024")

    page.click("button.close-btn")
    refusal = page.locator("#refusal")
    expect(refusal).to_contain_text(
        "Injector replaced on cylinder 3 without a new high-pressure connector on cylinder 3."
    )
    screenshot(page, "mechanic-close-refused-768x1024")
    assert WorkOrder.objects.get(pk=job.pk).status == WorkOrder.Status.OPEN

    page.select_option("#add-kind", K.CONNECTOR_REPLACE)
    page.select_option("#add-cylinder", "3")
    page.click("button:has-text('Add task')")
    expect(page.locator(".task h3", has_text="connector replaced, cylinder 3")).to_be_visible()
    connector = job.tasks.get(kind=K.CONNECTOR_REPLACE)
    expect(page.locator(f"#task-{connector.pk} .caution")).to_be_visible()

    page.click("button.close-btn")
    expect(page.locator(".closed-box")).to_contain_text(f"Closed by {mechanic.username}")
    due_row = page.locator(".due-table tr.due-primary_filter")
    expect(due_row.locator(".badge")).to_have_text("OK")
    screenshot(page, "mechanic-closed-768x1024")

    job.refresh_from_db()
    assert job.status == WorkOrder.Status.CLOSED and job.hour_meter == 2_012.0
    kinds = set(ServiceEvent.objects.filter(work_order=job).values_list("kind", flat=True))
    assert kinds == {"injector_replaced", "connector_replaced", "filter_changed"}
    primary_due.refresh_from_db()
    assert primary_due.status == DueItem.Status.OK


def test_pages_at_landscape_size(
    login_page: Any,
    job: WorkOrder,
    unit: Any,
    manager: Any,
    limits: Any,  # noqa: F811
) -> None:
    """Screenshots of the manager's view in landscape, with a flag and a measurement."""
    from playwright.sync_api import expect

    UnitFlag.objects.create(
        unit=unit,
        code="relief_valve_repeat",
        title="Rail pressure relief valve opening repeatedly",
        reason="4 relief-valve openings in the last 7 days.",
        checks=[
            "Check the fuel metering actuator's circuit and connector first.",
            "Check the rail pressure sensor, its connector and its circuit.",
        ],
        since=timezone.now(),
        high_pressure=True,
        computed_at=timezone.now(),
    )
    task_make(
        job,
        K.MEASUREMENT,
        description="Supply pressure under load",
        entry={"limit_id": limits["load"].pk, "value": 3.2},
    )
    task_make(job, K.SEPARATOR_DRAIN, description="Drain water separator")
    page = login_page(manager, width=1024, height=768)
    page.goto("/work/")
    screenshot(page, "manager-my-work-1024x768")
    page.goto(f"/work/{job.pk}/")
    expect(page.locator(".verdict")).to_contain_text("Outside limits")
    expect(page.locator("#override_reason")).to_be_visible()
    screenshot(page, "manager-work-order-1024x768")
    page.goto("/work/all/")
    expect(page.locator("table.wo-table")).to_contain_text("WO-0300")
    screenshot(page, "manager-list-1024x768")
    # Every control on the work-order page is at least 44 px tall (touch targets).
    page.goto(f"/work/{job.pk}/")
    controls = "main input:not([type=hidden]), main select, main button, main textarea, main a.btn"
    small = page.evaluate(
        """(sel) => [...document.querySelectorAll(sel)]
              .filter(el => el.offsetParent !== null && el.type !== 'checkbox')
              .filter(el => el.getBoundingClientRect().height < 44)
              .map(el => el.outerHTML.slice(0, 80))""",
        controls,
    )
    assert small == []


def test_mechanic_marks_a_task_not_done_undoes_it_and_closes_without_it(
    login_page: Any, job: WorkOrder, unit: Any, mechanic: Any
) -> None:
    """The primary filter is not in stock: the mechanic marks that task not done (a reason is
    required), changes their mind once (undo), marks it again and closes. The filter stays
    due; the injector and its connector are recorded."""
    from playwright.sync_api import expect

    injector = job.tasks.get(kind=K.INJECTOR_REPLACE)
    filter_task = job.tasks.get(kind=K.FILTER_CHANGE)
    primary_due = DueItem.objects.get(unit=unit, task=DueItem.Task.PRIMARY_FILTER)
    WorkOrderTask.objects.filter(pk=filter_task.pk).update(due_item=primary_due)
    reason = "Primary filter element not in stock, ordered for Tuesday"

    page = login_page(mechanic, width=768, height=1024)
    page.goto(f"/work/{job.pk}/")
    page.fill("#hour_meter", "2012")
    page.press("#hour_meter", "Tab")
    expect(page.locator("#job-status .saved-note")).to_contain_text("Saved")
    page.fill(f"#t{injector.pk}-new_serial", "INJ-NEW-3")
    page.press(f"#t{injector.pk}-new_serial", "Tab")
    expect(page.locator(f"#task-{injector.pk}-status .saved-note")).to_contain_text("Saved")
    page.select_option("#add-kind", K.CONNECTOR_REPLACE)
    page.select_option("#add-cylinder", "3")
    page.click("button:has-text('Add task')")
    expect(page.locator(".task h3", has_text="connector replaced, cylinder 3")).to_be_visible()

    card = page.locator(f"#task-{filter_task.pk}")
    card.locator("summary.not-done-btn").click()
    page.fill(f"#t{filter_task.pk}-reason", "no stock")
    card.locator("button.not-done-go").click()
    expect(card.locator("p.error")).to_contain_text("(you wrote 8)")
    expect(page.locator(f"#t{filter_task.pk}-reason")).to_have_value("no stock")
    expect(page.locator(f"#t{filter_task.pk}-reason")).to_be_focused()
    screenshot(page, "mechanic-task-not-done-reason-refused-768x1024")
    filter_task.refresh_from_db()
    assert not filter_task.is_not_done

    page.fill(f"#t{filter_task.pk}-reason", reason)
    card.locator("button.not-done-go").click()
    expect(card.locator(".not-done-note")).to_contain_text(reason)
    expect(page.locator("#not-done-summary")).to_contain_text("Change primary filter")
    screenshot(page, "mechanic-task-not-done-768x1024")

    # Undo: the fields come back and save as drafts again.
    card.locator("button.undo-btn").click()
    expect(page.locator(f"#t{filter_task.pk}-part_number")).to_be_visible()
    expect(page.locator("#not-done-summary .not-done-summary")).to_have_count(0)
    page.fill(f"#t{filter_task.pk}-part_number", "PF-100")
    page.press(f"#t{filter_task.pk}-part_number", "Tab")
    expect(page.locator(f"#task-{filter_task.pk}-status .saved-note")).to_contain_text("Saved")

    # Without a connection nothing changes, the reason stays typed, and a second tap sends it.
    card.locator("summary.not-done-btn").click()
    page.fill(f"#t{filter_task.pk}-reason", reason)
    mark_url = f"**/work/tasks/{filter_task.pk}/not-done/"
    page.route(mark_url, lambda route: route.abort("internetdisconnected"))
    card.locator("button.not-done-go").click()
    expect(card.locator(".not-done-status")).to_contain_text("Not sent: no connection")
    expect(page.locator(f"#t{filter_task.pk}-reason")).to_have_value(reason)
    filter_task.refresh_from_db()
    assert not filter_task.is_not_done
    page.unroute(mark_url)
    card.locator("button.not-done-go").click()
    expect(card.locator(".not-done-note")).to_contain_text(reason)
    page.click("button.close-btn")
    closed = page.locator(".closed-box")
    expect(closed).to_contain_text(f"Closed by {mechanic.username}")
    expect(closed.locator(".not-done-list")).to_contain_text(reason)
    due_row = page.locator(".due-table tr.due-primary_filter")
    expect(due_row.locator(".badge")).to_have_text("Overdue")
    screenshot(page, "mechanic-closed-with-task-not-done-768x1024")

    job.refresh_from_db()
    assert job.status == WorkOrder.Status.CLOSED
    assert f"Not done: Change primary filter — {reason}" in job.notes
    kinds = set(ServiceEvent.objects.filter(work_order=job).values_list("kind", flat=True))
    assert kinds == {"injector_replaced", "connector_replaced"}
    primary_due.refresh_from_db()
    assert primary_due.status == DueItem.Status.OVERDUE


# ----------------------------------------------------------------- touch targets

# Everything a gloved finger can touch: links, buttons, fields, check boxes, the "cannot be
# done" summaries. 44 x 44 CSS px is the minimum target of WCAG 2.2, success criterion 2.5.5
# (Target Size, Enhanced). A link inside a sentence is exempt there (inline), and so here: a
# plain link whose parent has other text of its own.
SMALL_TARGETS = """() => {
  const sel = 'a[href], button, input:not([type=hidden]), select, textarea, summary';
  const inline = (el) => el.tagName === 'A' && !el.classList.contains('btn') &&
    el.parentElement && el.parentElement.textContent.trim() !== el.textContent.trim() &&
    ['P', 'LI', 'SPAN', 'DD', 'STRONG'].includes(el.parentElement.tagName);
  return [...document.querySelectorAll(sel)]
    .filter(el => el.getClientRects().length && getComputedStyle(el).visibility !== 'hidden')
    .filter(el => !inline(el))
    .map(el => [el, el.getBoundingClientRect()])
    .filter(([el, r]) => r.width < 44 || r.height < 44)
    .map(([el, r]) => `${Math.round(r.width)}x${Math.round(r.height)} ` +
      el.outerHTML.slice(0, 90));
}"""

VIEWPORTS = [(1280, 800), (768, 1024)]


def targets_checked(page: Any, where: str) -> None:
    small = list(page.evaluate(SMALL_TARGETS))
    assert small == [], f"{where}: " + " | ".join(small)


@pytest.mark.parametrize(("width", "height"), VIEWPORTS, ids=["1280x800", "768x1024"])
def test_every_touch_target_on_the_mechanics_pages_is_44_px(
    login_page: Any, job: WorkOrder, mechanic: Any, manager: Any, width: int, height: int
) -> None:
    from playwright.sync_api import expect

    task_make(job, K.SEPARATOR_DRAIN, description="Drain water separator")
    page = login_page(mechanic, width=width, height=height)
    expect(page.locator("h1")).to_have_text("My work")
    targets_checked(page, "my work")

    page.goto(f"/work/{job.pk}/")
    # Every form open: the meter replaced, a "cannot be done" reason, the cylinder asked.
    page.check("#meter_replaced")
    page.locator(".not-done-box > summary").first.click()
    page.select_option("#add-kind", K.CONNECTOR_REPLACE)
    expect(page.locator("#add-cylinder")).to_be_visible()
    targets_checked(page, "work order page")
    box = page.locator("#meter_replaced").bounding_box()
    assert box["width"] >= 44 and box["height"] >= 44  # the check box itself, not only its label
    screenshot(page, f"mechanic-targets-{width}x{height}")

    manager_page = login_page(manager, width=width, height=height)
    manager_page.goto("/work/all/")
    expect(manager_page.locator("table.wo-table")).to_contain_text("WO-0300")
    targets_checked(manager_page, "work order list")


# ----------------------------------------------------------------- a refused close, reloaded


@pytest.mark.parametrize(("width", "height"), VIEWPORTS, ids=["1280x800", "768x1024"])
def test_a_refused_close_is_shown_on_the_page_and_a_reload_sends_nothing_again(
    login_page: Any, job: WorkOrder, mechanic: Any, width: int, height: int
) -> None:
    from playwright.sync_api import expect

    job.tasks.filter(kind=K.INJECTOR_REPLACE).update(entry={"new_serial": "INJ-3"})
    job.tasks.filter(kind=K.FILTER_CHANGE).update(entry={"part_number": "PF-1"})
    page = login_page(mechanic, width=width, height=height)
    page.goto(f"/work/{job.pk}/")
    page.fill("#hour_meter", "2012")
    posts: list[str] = []
    page.on("request", lambda r: posts.append(r.url) if r.method == "POST" else None)
    page.click("button.close-btn")
    refusal = page.locator("#refusal")
    expect(refusal).to_contain_text("without a new high-pressure connector on cylinder 3")
    # Post-redirect-get: the page's address is the work order's, not the close's.
    assert page.url.split("#")[0].endswith(f"/work/{job.pk}/")
    screenshot(page, f"mechanic-close-refused-{width}x{height}")

    posts.clear()
    page.reload()
    page.wait_for_load_state("networkidle")
    assert [u for u in posts if "/close/" in u] == []  # nothing re-posted
    expect(page.locator("#refusal")).to_have_count(0)  # shown once
    assert WorkOrder.objects.get(pk=job.pk).status == WorkOrder.Status.OPEN

    # "Add a task" from the refusal starts with the missing connector on cylinder 3.
    page.click("button.close-btn")
    page.click("#refusal a:has-text('Add a task: High-pressure connector replaced, cylinder 3')")
    expect(page.locator("#add-kind")).to_have_value(K.CONNECTOR_REPLACE)
    expect(page.locator("#add-cylinder")).to_have_value("3")
    page.click("button:has-text('Add task')")
    connector = job.tasks.get(kind=K.CONNECTOR_REPLACE)
    assert connector.cylinder == 3
    page.click("button.close-btn")
    expect(page.locator(".closed-box")).to_contain_text(f"Closed by {mechanic.username}")
    assert ServiceEvent.objects.filter(work_order=job).count() == 3


@pytest.mark.parametrize(("width", "height"), VIEWPORTS, ids=["1280x800", "768x1024"])
def test_the_title_follows_the_cylinder_on_the_page(
    login_page: Any, job: WorkOrder, mechanic: Any, width: int, height: int
) -> None:
    from playwright.sync_api import expect

    task = task_make(
        job,
        K.CONNECTOR_REPLACE,
        cylinder=3,
        description="High-pressure connector replaced, cylinder 3",
    )
    page = login_page(mechanic, width=width, height=height)
    page.goto(f"/work/{job.pk}/")
    page.select_option(f"#t{task.pk}-cylinder", "4")
    title = page.locator(f"#task-{task.pk}-title")
    expect(title).to_have_text("High-pressure connector replaced, cylinder 4")
    task.refresh_from_db()
    assert task.cylinder == 4 and task.description.endswith("cylinder 4")


# ----------------------------------------------------------------- the due item's filter


@pytest.mark.parametrize(("width", "height"), VIEWPORTS, ids=["1280x800", "768x1024"])
def test_a_filter_task_from_the_due_list_cannot_be_closed_on_another_filter(
    login_page: Any, job: WorkOrder, unit: Any, mechanic: Any, width: int, height: int
) -> None:
    from playwright.sync_api import expect

    primary_due = DueItem.objects.get(unit=unit, task=DueItem.Task.PRIMARY_FILTER)
    task = job.tasks.get(kind=K.FILTER_CHANGE)
    WorkOrderTask.objects.filter(pk=task.pk).update(due_item=primary_due)
    job.tasks.exclude(pk=task.pk).delete()
    fine = unit.components.get(kind=ComponentKind.FINE_FILTER)
    page = login_page(mechanic, width=width, height=height)
    page.goto(f"/work/{job.pk}/")
    picker = page.locator(f"#t{task.pk}-filter")
    expect(picker).to_be_disabled()
    expect(picker.locator("option:checked")).to_have_text("Primary filter / water separator")
    expect(picker.locator(f'option[value="{fine.pk}"]')).to_have_count(0)

    # A post made by hand with the fine filter is refused and changes nothing.
    token = page.locator(
        f"#task-{task.pk} .task-form input[name=csrfmiddlewaretoken]"
    ).input_value()
    answer = page.request.post(
        f"/work/tasks/{task.pk}/save/",
        form={"csrfmiddlewaretoken": token, "filter": str(fine.pk), "part_number": "PF-9"},
        headers={"HX-Request": "true", "Referer": page.url},
    )
    assert "cannot be switched to another" in answer.text()
    task.refresh_from_db()
    assert task.component_id == primary_due.component_id

    page.fill("#hour_meter", "2012")
    page.fill(f"#t{task.pk}-part_number", "PF-9")
    page.press(f"#t{task.pk}-part_number", "Tab")
    expect(page.locator(f"#task-{task.pk}-status .saved-note")).to_contain_text("Saved")
    page.click("button.close-btn")
    expect(page.locator(".closed-box")).to_be_visible()
    (event,) = ServiceEvent.objects.filter(work_order=job)
    assert event.component_kind == ComponentKind.PRIMARY_FILTER
    primary_due.refresh_from_db()
    assert primary_due.status == DueItem.Status.OK
