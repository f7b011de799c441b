"""The tablet's pages: who may see and do what, drafts, adding tasks, cautions, query counts."""

from __future__ import annotations

from datetime import timedelta
from typing import Any
from zoneinfo import ZoneInfo

import pint
import pytest
from django.template.loader import render_to_string
from django.urls import reverse
from django.utils import timezone

from fleetfuel.fleet.models import ComponentKind
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from services.safety import HP_CAUTION
from tests import factories as f
from tests.workorders.conftest import task_make, work_order_make

K = WorkOrderTask.Kind
HTMX = {"HTTP_HX_REQUEST": "true"}


def write_urls(wo: WorkOrder, task: WorkOrderTask) -> list[str]:
    return [
        reverse("workorders:job_save", args=[wo.pk]),
        reverse("workorders:task_add", args=[wo.pk]),
        reverse("workorders:task_save", args=[task.pk]),
        reverse("workorders:close", args=[wo.pk]),
        reverse("workorders:override", args=[wo.pk]),
        reverse("workorders:task_not_done", args=[task.pk]),
        reverse("workorders:task_not_done_undo", args=[task.pk]),
    ]


@pytest.fixture
def task(wo: WorkOrder) -> WorkOrderTask:
    return task_make(wo, K.INJECTOR_REPLACE, cylinder=3, description="Replace injector, cylinder 3")


# ----------------------------------------------------------------- access


def test_anonymous_is_sent_to_login(client: Any, wo: WorkOrder, task: WorkOrderTask) -> None:
    login = reverse("accounts:login")
    for url in [
        reverse("workorders:my_work"),
        reverse("workorders:list"),
        reverse("workorders:detail", args=[wo.pk]),
    ]:
        response = client.get(url)
        assert response.status_code == 302 and response["Location"].startswith(login), url
    for url in write_urls(wo, task):
        response = client.post(url, {"token": "x"})
        assert response.status_code == 302 and response["Location"].startswith(login), url
    assert WorkOrder.objects.get(pk=wo.pk).status == WorkOrder.Status.OPEN


def test_auditor_post_to_every_write_url_is_forbidden(
    as_auditor: Any, wo: WorkOrder, task: WorkOrderTask
) -> None:
    data = {
        "token": "aud",
        "hour_meter": "2000",
        "notes": "auditor was here",
        "kind": K.CONNECTOR_REPLACE,
        "cylinder": "3",
        "new_serial": "X",
        "override_reason": "An auditor trying to override",
        "reason": "An auditor says this was not done",
    }
    for url in write_urls(wo, task):
        assert as_auditor.post(url, data).status_code == 403, url
    wo.refresh_from_db()
    task.refresh_from_db()
    assert (wo.status, wo.hour_meter, wo.notes) == (WorkOrder.Status.OPEN, None, "")
    assert task.entry == {} and wo.tasks.count() == 1
    assert (task.not_done_at, task.not_done_reason) == (None, "")


def test_auditor_reads_without_forms(as_auditor: Any, wo: WorkOrder, task: WorkOrderTask) -> None:
    page = as_auditor.get(reverse("workorders:detail", args=[wo.pk]))
    assert page.status_code == 200
    html = page.content.decode()
    assert "Replace injector, cylinder 3" in html
    assert '<form class="task-form"' not in html and "Close work order" not in html
    assert as_auditor.get(reverse("workorders:list")).status_code == 200
    assert as_auditor.get(reverse("workorders:my_work")).status_code == 403


def test_mechanic_cannot_see_another_sites_work_order(
    as_mechanic: Any, other_unit: Any, manager: Any
) -> None:
    elsewhere = work_order_make(unit=other_unit, created_by=manager, number="S-WO-1")
    other_task = task_make(elsewhere, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    assert as_mechanic.get(reverse("workorders:detail", args=[elsewhere.pk])).status_code == 404
    for url in write_urls(elsewhere, other_task):
        assert as_mechanic.post(url, {"token": "m", "hour_meter": "1"}).status_code == 404, url
    my_work = as_mechanic.get(reverse("workorders:my_work")).content.decode()
    assert "S-WO-1" not in my_work


def test_list_is_for_managers_and_auditors(as_mechanic: Any, wo: WorkOrder) -> None:
    assert as_mechanic.get(reverse("workorders:list")).status_code == 403


def test_list_filters_by_status(as_manager: Any, unit: Any, manager: Any) -> None:
    work_order_make(unit=unit, created_by=manager, number="OPEN-1")
    work_order_make(
        unit=unit,
        created_by=manager,
        number="DONE-1",
        status=WorkOrder.Status.CLOSED,
        closed_at=timezone.now(),
        closed_by=manager,
    )
    url = reverse("workorders:list")
    open_page = as_manager.get(url).content.decode()
    closed_page = as_manager.get(url, {"status": "closed"}).content.decode()
    every = as_manager.get(url, {"status": ""}).content.decode()
    assert "OPEN-1" in open_page and "DONE-1" not in open_page
    assert "DONE-1" in closed_page and "OPEN-1" not in closed_page
    assert "DONE-1" in every and "OPEN-1" in every


# ----------------------------------------------------------------- my work


def test_my_work_orders_by_priority_then_due_date(
    as_mechanic: Any, unit: Any, manager: Any, mechanic: Any
) -> None:
    today = timezone.localdate()
    for number, assignee, priority, days in [
        ("N-LATE", mechanic, WorkOrder.Priority.NORMAL, 9),
        ("N-SOON", mechanic, WorkOrder.Priority.NORMAL, 1),
        ("U-FREE", None, WorkOrder.Priority.URGENT, 5),  # unassigned: any mechanic's
    ]:
        work_order_make(unit=unit, created_by=manager, assigned_to=assignee, number=number,
                        priority=priority, due_on=today + timedelta(days=days))  # fmt: skip
    someone_else = f.user_make("mechanic", sites=[unit.site])
    work_order_make(unit=unit, created_by=manager, assigned_to=someone_else, number="THEIRS")
    html = as_mechanic.get(reverse("workorders:my_work")).content.decode()
    order = [html.index(n) for n in ("U-FREE", "N-SOON", "N-LATE")]
    assert order == sorted(order)
    assert "THEIRS" not in html


def test_manager_sees_my_work_too(as_manager: Any, unit: Any, manager: Any) -> None:
    someone = f.user_make("mechanic", sites=[unit.site])
    work_order_make(unit=unit, created_by=manager, assigned_to=someone, number="ASSIGNED-X")
    response = as_manager.get(reverse("workorders:my_work"))
    assert response.status_code == 200 and "ASSIGNED-X" in response.content.decode()


def _work_orders(n: int, unit: Any, manager: Any, mechanic: Any) -> None:
    for i in range(n):
        wo = work_order_make(unit=unit, created_by=manager, assigned_to=mechanic, number=f"Q-{i}")
        task_make(wo, K.INJECTOR_REPLACE, cylinder=1, description="Injector 1")
        task_make(wo, K.SEPARATOR_DRAIN, description="Drain")


@pytest.mark.parametrize("count", [2, 10])
def test_my_work_query_count_is_constant(
    count: int,
    as_mechanic: Any,
    unit: Any,
    manager: Any,
    mechanic: Any,
    django_assert_num_queries: Any,
) -> None:
    _work_orders(count, unit, manager, mechanic)
    # 1 session, 2 user, 3 the user's groups (role), 4 the user's sites,
    # 5 open work orders with unit, site, assignee, task counts and flag counts.
    with django_assert_num_queries(5):
        response = as_mechanic.get(reverse("workorders:my_work"))
    assert response.content.decode().count('class="wo-card ') == count


# ----------------------------------------------------------------- drafts


def test_task_draft_round_trip(as_mechanic: Any, wo: WorkOrder, task: WorkOrderTask) -> None:
    url = reverse("workorders:task_save", args=[task.pk])
    response = as_mechanic.post(
        url,
        {
            "cylinder": "3",
            "old_serial": "OLD-3",
            "new_serial": "new-777",
            "part_number": "IN-5",
            "parts_used": "1 injector, 1 seal",
            "notes": "Seat cleaned",
        },
        **HTMX,
    )
    assert response.status_code == 200
    assert "HX-Request" in response["Vary"]
    task.refresh_from_db()
    assert task.draft_saved_at is not None
    local = timezone.localtime(task.draft_saved_at, ZoneInfo(wo.unit.site.time_zone))
    assert f"Saved {local:%H:%M}" in response.content.decode()
    assert task.entry["new_serial"] == "new-777" and task.entry["notes"] == "Seat cleaned"
    assert task.cylinder == 3
    assert task.component == wo.unit.components.get(kind=ComponentKind.INJECTOR, position=3)
    page = as_mechanic.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert 'value="new-777"' in page and "Seat cleaned" in page and 'value="IN-5"' in page


def test_task_draft_reports_a_bad_number_and_keeps_the_rest(
    as_mechanic: Any, wo: WorkOrder, limits: Any
) -> None:
    m = task_make(wo, K.MEASUREMENT, description="Supply pressure under load", entry={"value": 5.0})
    response = as_mechanic.post(
        reverse("workorders:task_save", args=[m.pk]),
        {"limit": str(limits["load"].pk), "value": "five", "notes": "gauge B"},
        **HTMX,
    )
    html = response.content.decode()
    assert response.status_code == 200
    assert "Measured value: “five” is not a number." in html
    m.refresh_from_db()
    assert m.entry["value"] == 5.0 and m.entry["notes"] == "gauge B"


@pytest.fixture
def us_wo(client: Any, unit_class: Any, manager: Any) -> WorkOrder:
    """A work order at a site that types US customary units; its mechanic is logged in."""
    us_site = f.site_make(name="Desert Yard", code="desert", unit_system="us")
    us_unit = f.unit_make(site=us_site, unit_class=unit_class, fleet_number="D-001")
    tech = f.user_make("mechanic", sites=[us_site])
    client.force_login(tech)
    return work_order_make(unit=us_unit, created_by=manager, assigned_to=tech)


def test_pressure_typed_in_psi_is_stored_in_bar(client: Any, us_wo: WorkOrder, limits: Any) -> None:
    wo = us_wo
    m = task_make(wo, K.MEASUREMENT, description="Supply pressure under load")
    response = client.post(
        reverse("workorders:task_save", args=[m.pk]),
        {"limit": str(limits["load"].pk), "value": "58"},
        **HTMX,
    )
    assert response.status_code == 200
    m.refresh_from_db()
    # Independent check with pint: 58 psi in bar (gauge stays gauge).
    expected = pint.UnitRegistry().Quantity(58, "psi").to("bar").magnitude
    assert m.entry["value"] == pytest.approx(expected, rel=1e-9)
    assert m.entry["value"] == pytest.approx(3.99896, abs=1e-5)
    html = response.content.decode()
    assert "Outside limits" in html  # 58 psi is just under 4.0 bar(g)
    page = client.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert 'value="58"' in page and "(psig)" in page


def test_water_typed_in_us_fluid_ounces_is_stored_in_ml(client: Any, us_wo: WorkOrder) -> None:
    wo = us_wo
    drain = task_make(wo, K.SEPARATOR_DRAIN, description="Drain separator")
    response = client.post(
        reverse("workorders:task_save", args=[drain.pk]),
        {"water_ml": "1.5", "appearance": "cloudy"},
        **HTMX,
    )
    assert response.status_code == 200
    drain.refresh_from_db()
    # Independent check with pint: 1.5 US fl oz in mL.
    expected = pint.UnitRegistry().Quantity(1.5, "US_fluid_ounce").to("mL").magnitude
    assert drain.entry["water_ml"] == pytest.approx(expected, rel=1e-9)
    page = client.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert 'value="1.5"' in page and "(US fl oz)" in page


def test_job_draft_warns_when_the_meter_goes_backwards(as_mechanic: Any, wo: WorkOrder) -> None:
    url = reverse("workorders:job_save", args=[wo.pk])
    backwards = as_mechanic.post(url, {"hour_meter": "1980", "notes": "Cold start"}, **HTMX)
    assert "below the last reading (1,990\u00a0h)" in backwards.content.decode()
    wo.refresh_from_db()
    assert (wo.hour_meter, wo.notes) == (1_980.0, "Cold start") and wo.job_saved_at
    replaced = as_mechanic.post(
        url, {"hour_meter": "12", "meter_replaced": "on", "meter_new_start": "0"}, **HTMX
    )
    assert "below the last reading" not in replaced.content.decode()
    wo.refresh_from_db()
    assert (wo.meter_replaced, wo.meter_new_start, wo.hour_meter) == (True, 0.0, 12.0)


def test_a_refused_entry_does_not_say_saved(as_mechanic: Any, wo: WorkOrder, limits: Any) -> None:
    # An entry the form refuses is kept as typed (nothing is lost), but the status line must
    # not read "Saved" beside the error: on a tablet that reads as "done" (common practice).
    job = as_mechanic.post(
        reverse("workorders:job_save", args=[wo.pk]), {"hour_meter": "99999999"}, **HTMX
    ).content.decode()
    assert "Hour meter must be from 0 to 200,000" in job
    assert "Kept as typed" in job and "Saved " not in job
    m = task_make(wo, K.MEASUREMENT, description="Supply pressure under load")
    url = reverse("workorders:task_save", args=[m.pk])
    bad = as_mechanic.post(url, {"limit": str(limits["load"].pk), "value": "five"}, **HTMX)
    assert "Kept as typed" in bad.content.decode() and "Saved " not in bad.content.decode()
    good = as_mechanic.post(url, {"limit": str(limits["load"].pk), "value": "5"}, **HTMX)
    assert "Saved " in good.content.decode() and "Kept as typed" not in good.content.decode()


def test_draft_on_a_closed_work_order_is_refused_and_kept_in_notes(
    as_mechanic: Any, wo: WorkOrder, task: WorkOrderTask, manager: Any
) -> None:
    WorkOrder.objects.filter(pk=wo.pk).update(
        status=WorkOrder.Status.CLOSED, closed_at=timezone.now(), closed_by=manager
    )
    response = as_mechanic.post(
        reverse("workorders:task_save", args=[task.pk]), {"new_serial": "LATE-1"}, **HTMX
    )
    assert response.status_code == 409
    assert f"by {manager.username}" in response.content.decode()
    wo.refresh_from_db()
    task.refresh_from_db()
    assert "LATE-1" in wo.notes and task.entry == {}


def test_plain_form_save_without_javascript(
    as_mechanic: Any, wo: WorkOrder, task: WorkOrderTask
) -> None:
    response = as_mechanic.post(
        reverse("workorders:task_save", args=[task.pk]), {"new_serial": "NOJS-1"}
    )
    assert response.status_code == 302
    assert response["Location"].endswith(f"#task-{task.pk}")
    task.refresh_from_db()
    assert task.entry["new_serial"] == "NOJS-1"


# ----------------------------------------------------------------- adding tasks


def test_mechanic_adds_a_connector_task(as_mechanic: Any, wo: WorkOrder, mechanic: Any) -> None:
    response = as_mechanic.post(
        reverse("workorders:task_add", args=[wo.pk]),
        {"kind": K.CONNECTOR_REPLACE, "cylinder": "3"},
    )
    assert response.status_code == 302
    added = wo.tasks.get(kind=K.CONNECTOR_REPLACE)
    assert added.cylinder == 3
    assert added.description == "High-pressure connector replaced, cylinder 3"
    assert added.component == wo.unit.components.get(kind=ComponentKind.HP_CONNECTOR, position=3)
    assert added.entry["added_by"] == mechanic.username


def test_adding_a_task_on_a_cylinder_that_does_not_exist_is_refused(
    as_mechanic: Any, wo: WorkOrder
) -> None:
    response = as_mechanic.post(
        reverse("workorders:task_add", args=[wo.pk]),
        {"kind": K.INJECTOR_REPLACE, "cylinder": "7"},
    )
    assert response.status_code == 422
    assert "Say which cylinder (1 to 6)." in response.content.decode()
    assert not wo.tasks.exists()


# ----------------------------------------------------------------- cautions


def test_high_pressure_tasks_show_the_cautions(as_mechanic: Any, wo: WorkOrder) -> None:
    for kind in (K.INJECTOR_REPLACE, K.CONNECTOR_REPLACE, K.RELIEF_VALVE_REPLACE):
        task_make(
            wo,
            kind,
            cylinder=2 if kind != K.RELIEF_VALVE_REPLACE else None,
            description=f"HP {kind}",
        )
    html = as_mechanic.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert html.count('class="caution"') == 3
    for line in (
        "Never feel for leaks by hand.",
        "Let rail pressure fall before opening any fitting.",
        "Wear eye protection.",
        "surgical emergency",
        "HSE RR976, 2013",
        "FOD 4-2014",
        "about 7 bar upward",
        "manufacturer&#x27;s service documentation",
    ):
        assert line in html, line
    assert len(HP_CAUTION.lines) == 5


def test_the_caution_include_needs_nothing_from_the_page() -> None:
    # The unit page and the work-order page include it as it is: one text, one include.
    html = render_to_string("includes/_hp_caution.html", {})
    assert html.count('class="caution"') == 1 and HP_CAUTION.title in html
    for line in HP_CAUTION.lines:
        assert line.replace("'", "&#x27;") in html, line


def test_low_pressure_tasks_show_no_caution(as_mechanic: Any, wo: WorkOrder) -> None:
    task_make(wo, K.SEPARATOR_DRAIN, description="Drain separator")
    html = as_mechanic.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert 'class="caution"' not in html


def test_page_shows_unit_flags_and_limits(as_mechanic: Any, wo: WorkOrder, limits: Any) -> None:
    from fleetfuel.planning.models import UnitFlag

    UnitFlag.objects.create(
        unit=wo.unit,
        code="relief_valve_repeat",
        title="Relief valve opening repeatedly",
        reason="4 openings in 7 days",
        checks=["Check the metering actuator first"],
        since=timezone.now(),
        high_pressure=True,
        computed_at=timezone.now(),
    )
    task_make(wo, K.MEASUREMENT, description="Supply pressure under load")
    html = as_mechanic.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert "Relief valve opening repeatedly" in html and "Check the metering actuator first" in html
    assert html.count('class="caution"') == 1  # the flag touches the high-pressure side
    assert "pass 4.0 – 7.0 bar(g)" in html
    assert "N-001" in html and "Testmake TM-1" in html and "North Depot" in html


def test_admin_lists_and_shows_work_orders(client: Any, wo: WorkOrder, task: WorkOrderTask) -> None:
    from django.contrib.auth.models import User

    admin = User.objects.create_superuser("root-admin", "root@example.test", "x-admin-pass-1")
    client.force_login(admin)
    listing = client.get(reverse("admin:workorders_workorder_changelist"), {"q": "WO-0100"})
    assert listing.status_code == 200 and "WO-0100" in listing.content.decode()
    change = client.get(reverse("admin:workorders_workorder_change", args=[wo.pk]))
    assert change.status_code == 200
    assert "Replace injector, cylinder 3" in change.content.decode()  # the inline task


# ----------------------------------------------------------------- the title follows the cylinder


@pytest.mark.parametrize(
    ("title", "cylinder", "expected"),
    [
        (
            "High-pressure connector replaced, cylinder 3",
            4,
            "High-pressure connector replaced, cylinder 4",
        ),
        ("Connector leaking at Cylinder 3, weeping", 5, "Connector leaking at Cylinder 5, weeping"),
        ("High-pressure connector replaced, cylinder 3", None, "High-pressure connector replaced"),
        ("Replace high-pressure connector", 2, "Replace high-pressure connector, cylinder 2"),
        ("Cylinder 13 connector", 4, "Cylinder 13 connector"),  # names another cylinder
    ],
)
def test_the_title_follows_the_cylinder(
    as_mechanic: Any, wo: WorkOrder, title: str, cylinder: int | None, expected: str
) -> None:
    task = task_make(wo, K.CONNECTOR_REPLACE, cylinder=3, description=title)
    url = reverse("workorders:task_save", args=[task.pk])
    response = as_mechanic.post(url, {"cylinder": str(cylinder or "")}, **HTMX)
    task.refresh_from_db()
    assert task.cylinder == cylinder and task.description == expected
    connector = wo.unit.components.filter(kind=ComponentKind.HP_CONNECTOR, position=cylinder)
    assert task.component == connector.first()  # the part follows too
    # The page's title is swapped in place with the save's answer.
    html = response.content.decode()
    assert f'<h3 id="task-{task.pk}-title" hx-swap-oob="true">{expected}</h3>' in html


def test_a_save_that_keeps_the_cylinder_keeps_the_title(as_mechanic: Any, wo: WorkOrder) -> None:
    task = task_make(wo, K.CONNECTOR_REPLACE, cylinder=3, description="Cylinder 3: my words")
    url = reverse("workorders:task_save", args=[task.pk])
    as_mechanic.post(url, {"cylinder": "3", "part_number": "HPC-1"}, **HTMX)
    task.refresh_from_db()
    assert task.description == "Cylinder 3: my words" and task.entry["part_number"] == "HPC-1"
