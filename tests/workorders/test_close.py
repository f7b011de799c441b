"""Closing a work order: the rules, the override, the hour meter, follow-ups, idempotency and
what is written (readings, service events, components, due items)."""

from __future__ import annotations

from typing import Any

import pytest
from django.urls import reverse

from fleetfuel.fleet.models import Component, ComponentKind, MeterReading, MeterReplacement
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.workorders import close_writes
from fleetfuel.workorders.close import CloseOutcome, work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests.workorders.conftest import task_make

K = WorkOrderTask.Kind
MISSING_3 = "Injector replaced on cylinder 3 without a new high-pressure connector on cylinder 3."


def job(hours: float | None = 2_000.0, **kw: Any) -> JobEntry:
    return JobEntry(
        hour_meter=hours,
        meter_replaced=kw.get("meter_replaced", False),
        meter_old_final=kw.get("meter_old_final"),
        meter_new_start=kw.get("meter_new_start"),
        notes=kw.get("notes"),
    )


def injectors_on_1_3_5(wo: WorkOrder) -> None:
    """Injectors on cylinders 1, 3 and 5; connectors only on 1 and 5."""
    for cyl in (1, 3, 5):
        task_make(
            wo,
            K.INJECTOR_REPLACE,
            cylinder=cyl,
            description=f"Replace injector, cylinder {cyl}",
            entry={"new_serial": f"NEW-{cyl}", "old_serial": f"OLD-{cyl}"},
        )
    for cyl in (1, 5):
        task_make(wo, K.CONNECTOR_REPLACE, cylinder=cyl, description=f"Connector {cyl}")


def close(wo: WorkOrder, user: Any, token: str = "tok-1", **kw: Any) -> CloseOutcome:
    kw.setdefault("job", job())
    return work_order_close(work_order_id=wo.pk, user=user, token=token, **kw)


# ----------------------------------------------------------------- injector / connector rule


def test_refusal_names_the_cylinder_missing_its_connector(wo: Any, mechanic: Any) -> None:
    injectors_on_1_3_5(wo)
    outcome = close(wo, mechanic)
    assert outcome.result == "refused"
    assert [v.message for v in outcome.violations] == [MISSING_3]
    assert outcome.violations[0].cylinder == 3
    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.OPEN and wo.close_token is None
    assert not ServiceEvent.objects.filter(work_order=wo).exists()
    assert not MeterReading.objects.filter(source=MeterReading.Source.WORK_ORDER).exists()


def test_refusal_page_names_the_cylinder(as_mechanic: Any, wo: Any) -> None:
    injectors_on_1_3_5(wo)
    url = reverse("workorders:close", args=[wo.pk])
    response = as_mechanic.post(url, {"token": "t-view", "hour_meter": "2000"})
    # Post-redirect-get: the refusal is shown on the work order's own page.
    assert response.status_code == 302
    assert response["Location"] == reverse("workorders:detail", args=[wo.pk]) + "#refusal"
    page = as_mechanic.get(response["Location"])
    html = page.content.decode()
    assert MISSING_3 in html
    assert "cylinder 1 without" not in html and "cylinder 5 without" not in html
    assert 'value="t-view"' in html  # the same token stays in the form for the retry
    # "Add a task" offers the missing connector on cylinder 3.
    link = f"?add={K.CONNECTOR_REPLACE}&amp;cylinder=3#add-task"
    assert f'href="{link}"' in html
    assert "Add a task: High-pressure connector replaced, cylinder 3" in html
    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.OPEN
    assert wo.hour_meter == 2_000.0  # what was entered with the close is kept as a draft
    # A reload is a GET of the page: nothing re-posted, the refusal shown once.
    again = as_mechanic.get(response["Location"]).content.decode()
    assert MISSING_3 not in again
    assert wo.tasks.count() == 5


def test_add_a_task_link_preselects_the_kind_and_the_cylinder(as_mechanic: Any, wo: Any) -> None:
    detail = reverse("workorders:detail", args=[wo.pk])
    html = as_mechanic.get(detail, {"add": K.CONNECTOR_REPLACE, "cylinder": "3"}).content.decode()
    assert f'<option value="{K.CONNECTOR_REPLACE}" data-asks="cylinder" selected>' in html
    assert '<option value="3" selected>Cylinder 3</option>' in html
    # Nothing chosen without the link; a made-up kind preselects nothing.
    for query in ({}, {"add": "made_up", "cylinder": "x"}):
        html = as_mechanic.get(detail, query).content.decode()
        assert " selected>" not in html.split('id="add-kind"')[1].split("</form>")[0]


def test_a_bad_value_with_the_close_is_refused_on_the_page_not_at_the_post_url(
    as_mechanic: Any, wo: Any
) -> None:
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    url = reverse("workorders:close", args=[wo.pk])
    response = as_mechanic.post(url, {"token": "t-bad", "hour_meter": "two thousand"})
    assert response.status_code == 302
    html = as_mechanic.get(response["Location"]).content.decode()
    assert "Hour meter: “two thousand” is not a number." in html and 'value="t-bad"' in html
    assert WorkOrder.objects.get(pk=wo.pk).status == WorkOrder.Status.OPEN


def test_connector_on_every_injector_cylinder_closes(wo: Any, mechanic: Any) -> None:
    injectors_on_1_3_5(wo)
    task_make(wo, K.CONNECTOR_REPLACE, cylinder=3, description="Connector 3")
    assert close(wo, mechanic).result == "closed"


def test_manager_override_is_recorded_with_name_and_reason(
    as_manager: Any, wo: Any, manager: Any
) -> None:
    injectors_on_1_3_5(wo)
    reason = "Connector for cylinder 3 on back order; fitted on the next visit"
    response = as_manager.post(
        reverse("workorders:override", args=[wo.pk]),
        {"token": "t-ovr", "hour_meter": "2000", "override_reason": reason},
    )
    assert response.status_code == 302
    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.CLOSED
    assert wo.override_by == manager and wo.override_reason == reason
    (event,) = ServiceEvent.objects.filter(work_order=wo, kind=ServiceEvent.Kind.RULE_OVERRIDE)
    assert event.recorded_by == manager
    assert event.reason == reason
    assert event.cylinder == 3
    assert MISSING_3 in event.notes
    page = as_manager.get(reverse("workorders:detail", args=[wo.pk])).content.decode()
    assert "Closing rule overridden" in page and reason in page and manager.username in page


def test_manager_override_needs_a_written_reason(wo: Any, manager: Any) -> None:
    injectors_on_1_3_5(wo)
    outcome = close(wo, manager, override=True, override_reason="  ok  ")
    assert outcome.result == "refused"
    assert "written reason" in outcome.message
    assert WorkOrder.objects.get(pk=wo.pk).status == WorkOrder.Status.OPEN


def test_mechanic_override_is_refused(as_mechanic: Any, wo: Any, mechanic: Any) -> None:
    injectors_on_1_3_5(wo)
    reason = "I am sure the old connector is fine this time"
    response = as_mechanic.post(
        reverse("workorders:override", args=[wo.pk]),
        {"token": "t-m", "hour_meter": "2000", "override_reason": reason},
    )
    assert response.status_code == 403
    assert "Only a manager may override" in response.content.decode()
    # The action refuses it too, whatever door it is called through.
    outcome = close(wo, mechanic, override=True, override_reason=reason)
    assert outcome.result == "refused" and outcome.forbidden
    assert outcome.message == "Only a manager may override a closing rule."
    wo.refresh_from_db()
    assert wo.status == WorkOrder.Status.OPEN and wo.override_by is None
    assert not ServiceEvent.objects.filter(work_order=wo).exists()


def test_override_cannot_skip_a_backwards_meter(wo: Any, manager: Any) -> None:
    injectors_on_1_3_5(wo)
    outcome = close(
        wo, manager, job=job(1_500.0), override=True, override_reason="Long enough reason here"
    )
    assert outcome.result == "refused"
    assert "cannot be overridden" in outcome.message


# ----------------------------------------------------------------- hour meter


def test_hour_meter_backwards_is_refused(wo: Any, mechanic: Any) -> None:
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Replace relief valve")
    outcome = close(wo, mechanic, job=job(1_980.0))
    assert outcome.result == "refused"
    (v,) = outcome.violations
    assert v.code == "hour_meter_backwards"
    assert "1,980.0 h, below the last reading of 1,990.0 h" in v.message
    assert not MeterReplacement.objects.exists()
    assert not MeterReading.objects.filter(source=MeterReading.Source.WORK_ORDER).exists()


def test_hour_meter_backwards_with_meter_replaced_is_accepted(wo: Any, mechanic: Any) -> None:
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Replace relief valve")
    outcome = close(
        wo,
        mechanic,
        job=job(3.5, meter_replaced=True, meter_old_final=1_995.0, meter_new_start=0.0),
    )
    assert outcome.result == "closed"
    (rep,) = MeterReplacement.objects.filter(unit=wo.unit)
    assert (rep.old_meter_final, rep.new_meter_start) == (1_995.0, 0.0)
    assert rep.offset == 1_995.0
    reading = MeterReading.objects.get(source=MeterReading.Source.WORK_ORDER)
    assert reading.hours == 3.5
    assert (
        ServiceEvent.objects.filter(work_order=wo, kind=ServiceEvent.Kind.METER_REPLACED).count()
        == 1
    )


def test_meter_replaced_needs_the_new_meters_start(wo: Any, mechanic: Any) -> None:
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Replace relief valve")
    outcome = close(wo, mechanic, job=job(3.5, meter_replaced=True))
    assert outcome.result == "refused"
    assert any("new meter's reading" in p for p in outcome.problems)


def test_hour_meter_is_required(wo: Any, mechanic: Any) -> None:
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Replace relief valve")
    outcome = close(wo, mechanic, job=job(None))
    assert outcome.result == "refused"
    assert "Enter the hour meter reading at the job." in outcome.problems


# ----------------------------------------------------------------- measurements and follow-ups


def test_measurement_outside_limits_creates_a_follow_up(
    wo: Any, mechanic: Any, limits: Any
) -> None:
    task_make(
        wo,
        K.MEASUREMENT,
        description="Supply pressure under load",
        entry={"limit_id": limits["load"].pk, "value": 3.2},
    )
    task_make(
        wo,
        K.MEASUREMENT,
        description="Drain-line back pressure",
        entry={"limit_id": limits["drain"].pk, "value": 0.1},
    )
    outcome = close(wo, mechanic)
    assert outcome.result == "closed"
    events = {
        e.measurement_name: e
        for e in ServiceEvent.objects.filter(work_order=wo, kind=ServiceEvent.Kind.MEASUREMENT)
    }
    low = events["Supply pressure under load"]
    assert (low.value, low.low_limit, low.high_limit, low.passed) == (3.2, 4.0, 7.0, False)
    assert events["Drain-line back pressure"].passed is True
    follow_up = outcome.follow_up
    assert follow_up is not None
    assert follow_up.status == WorkOrder.Status.OPEN
    assert follow_up.unit_id == wo.unit_id and follow_up.follow_up_of_id == wo.pk
    assert follow_up.assigned_to == mechanic
    (task,) = follow_up.tasks.all()
    assert task.kind == K.MEASUREMENT
    assert task.entry["limit_id"] == limits["load"].pk
    assert task.description == (
        "Follow up Supply pressure under load (bar gauge): measured 3.2, below the low limit 4."
    )


def test_measurements_within_limits_create_no_follow_up(
    wo: Any, mechanic: Any, limits: Any
) -> None:
    task_make(
        wo,
        K.MEASUREMENT,
        description="Supply pressure under load",
        entry={"limit_id": limits["load"].pk, "value": 7.0},  # the high edge passes
    )
    outcome = close(wo, mechanic)
    assert outcome.result == "closed" and outcome.follow_up is None
    assert WorkOrder.objects.count() == 1


def test_measurement_without_a_value_cannot_close(wo: Any, mechanic: Any, limits: Any) -> None:
    task_make(wo, K.MEASUREMENT, description="Supply pressure under load")
    outcome = close(wo, mechanic)
    assert outcome.result == "refused"
    assert outcome.problems == ["Supply pressure under load: fill in “Measured value”."]


# ----------------------------------------------------------------- what a close writes


def test_close_writes_readings_events_and_components(
    wo: Any, mechanic: Any, django_capture_on_commit_callbacks: Any
) -> None:
    unit = wo.unit
    primary = unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    fine = unit.components.get(kind=ComponentKind.FINE_FILTER)
    injector = unit.components.get(kind=ComponentKind.INJECTOR, position=2)
    old_serial = injector.serial
    task_make(
        wo,
        K.FILTER_CHANGE,
        component=fine,
        description="Change fine filter",
        entry={"part_number": "FF-4410", "dp_before_bar": 0.82, "parts_used": "1 x FF-4410"},
    )
    task_make(
        wo,
        K.SEPARATOR_DRAIN,
        description="Drain separator",
        entry={"water_ml": 45.0, "appearance": "cloudy"},
    )
    task_make(
        wo,
        K.INJECTOR_REPLACE,
        cylinder=2,
        description="Injector 2",
        entry={"old_serial": old_serial, "new_serial": "INJ-NEW-2", "part_number": "IN-77"},
    )
    task_make(wo, K.CONNECTOR_REPLACE, cylinder=2, description="Connector 2")
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    task_make(wo, K.INSPECTION, description="Look at the lines", entry={"findings": "All dry"})
    due_items_recompute(unit_ids=[unit.pk], now=wo.created_at)
    before = DueItem.objects.get(unit=unit, task=DueItem.Task.FINE_FILTER)

    with django_capture_on_commit_callbacks(execute=True):
        outcome = close(wo, mechanic, job=job(2_010.0))
    assert outcome.result == "closed"

    wo.refresh_from_db()
    assert (wo.status, wo.closed_by, wo.close_token) == ("closed", mechanic, "tok-1")
    assert wo.closed_at is not None
    reading = MeterReading.objects.get(source=MeterReading.Source.WORK_ORDER)
    assert (reading.unit, reading.hours, reading.taken_at) == (unit, 2_010.0, wo.closed_at)

    events = {e.kind: e for e in ServiceEvent.objects.filter(work_order=wo)}
    assert set(events) == {
        "filter_changed",
        "separator_drained",
        "injector_replaced",
        "connector_replaced",
        "relief_valve_replaced",
        "inspection",
    }
    fc = events["filter_changed"]
    assert (fc.component, fc.component_kind, fc.part_number, fc.dp_before_bar) == (
        fine,
        "fine_filter",
        "FF-4410",
        0.82,
    )
    assert fc.parts_used == "1 x FF-4410" and fc.hour_meter == 2_010.0
    sd = events["separator_drained"]
    assert (sd.component, sd.water_ml, sd.water_appearance) == (primary, 45.0, "cloudy")
    inj = events["injector_replaced"]
    assert (inj.cylinder, inj.old_serial, inj.new_serial, inj.component) == (
        2,
        old_serial,
        "INJ-NEW-2",
        injector,
    )
    assert events["connector_replaced"].cylinder == 2
    assert events["inspection"].notes == "All dry"
    assert all(e.recorded_by == mechanic for e in events.values())

    injector.refresh_from_db()
    assert (injector.serial, injector.part_number, injector.installed_hours) == (
        "INJ-NEW-2",
        "IN-77",
        2_010.0,
    )
    assert WorkOrderTask.objects.filter(work_order=wo, done=False).count() == 0

    # The ledger's signal recomputed the unit on commit: the fine filter starts afresh.
    after = DueItem.objects.get(unit=unit, task=DueItem.Task.FINE_FILTER)
    assert after.pk == before.pk
    assert after.computed_at > before.computed_at
    assert after.due_hours is not None and after.due_hours > 2_010.0
    assert after.due_on > before.due_on


def test_required_fields_are_named_per_task(wo: Any, mechanic: Any) -> None:
    task_make(wo, K.INJECTOR_REPLACE, cylinder=4, description="Replace injector, cylinder 4")
    task_make(wo, K.CONNECTOR_REPLACE, cylinder=4, description="Connector 4")
    task_make(wo, K.SEPARATOR_DRAIN, description="Drain separator")
    outcome = close(wo, mechanic)
    assert outcome.result == "refused"
    assert outcome.problems == [
        "Replace injector, cylinder 4: fill in “New injector serial”.",
        "Drain separator: fill in “Water drained”.",
        "Drain separator: fill in “What came out”.",
    ]


# ----------------------------------------------------------------- idempotency


def test_same_token_twice_closes_once(wo: Any, mechanic: Any, limits: Any) -> None:
    task_make(
        wo,
        K.MEASUREMENT,
        description="Supply pressure under load",
        entry={"limit_id": limits["load"].pk, "value": 9.0},
    )
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    first = close(wo, mechanic, token="same")
    events = list(ServiceEvent.objects.filter(unit=wo.unit).values_list("pk", flat=True))
    second = close(wo, mechanic, token="same")
    assert (first.result, first.replay) == ("closed", False)
    assert (second.result, second.replay) == ("closed", True)
    assert second.follow_up == first.follow_up
    assert list(ServiceEvent.objects.filter(unit=wo.unit).values_list("pk", flat=True)) == events
    assert len(events) == 2
    assert MeterReading.objects.filter(source=MeterReading.Source.WORK_ORDER).count() == 1
    assert WorkOrder.objects.filter(follow_up_of=wo).count() == 1


def test_retried_post_gets_the_same_result_page(as_mechanic: Any, wo: Any) -> None:
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    url = reverse("workorders:close", args=[wo.pk])
    data = {"token": "retry-me", "hour_meter": "2000"}
    first = as_mechanic.post(url, data)
    second = as_mechanic.post(url, data)
    assert first.status_code == second.status_code == 302
    assert first["Location"] == second["Location"] == reverse("workorders:detail", args=[wo.pk])
    assert ServiceEvent.objects.filter(work_order=wo).count() == 1
    assert MeterReading.objects.filter(source=MeterReading.Source.WORK_ORDER).count() == 1


def test_second_tablet_is_told_who_closed_and_its_entry_is_kept(
    wo: Any, mechanic: Any, manager: Any
) -> None:
    task_make(wo, K.RELIEF_VALVE_REPLACE, description="Relief valve")
    won = close(wo, manager, token="tablet-a")
    lost = close(
        wo,
        mechanic,
        token="tablet-b",
        job=job(2_001.5, notes="Cab filter also dusty"),
        snapshot='{"Relief valve": {"part_number": "RV-9"}}',
    )
    assert won.result == "closed"
    assert lost.result == "closed_by_other"
    assert manager.username in lost.message and "added to the work order's notes" in lost.message
    wo.refresh_from_db()
    assert wo.closed_by == manager and wo.close_token == "tablet-a"
    assert f"{mechanic.username} tried to close it after {manager.username} had closed it" in (
        wo.notes
    )
    assert "hour meter 2001.5 h" in wo.notes
    assert "Cab filter also dusty" in wo.notes and "RV-9" in wo.notes
    assert ServiceEvent.objects.filter(work_order=wo).count() == 1


# ----------------------------------------------------------------- server errors


def test_a_server_error_records_nothing_and_says_how_to_retry(
    as_mechanic: Any, wo: Any, monkeypatch: pytest.MonkeyPatch
) -> None:
    task = task_make(
        wo, K.RELIEF_VALVE_REPLACE, description="Relief valve", entry={"part_number": "RV-1"}
    )

    def broken(**kwargs: Any) -> None:
        raise RuntimeError("disk full")

    monkeypatch.setattr(close_writes, "service_event_append", broken)
    response = as_mechanic.post(
        reverse("workorders:close", args=[wo.pk]), {"token": "t-err", "hour_meter": "2000"}
    )
    assert response.status_code == 500
    html = response.content.decode()
    assert "nothing was recorded" in html and "safe to retry" in html
    assert 'value="t-err"' in html
    wo.refresh_from_db()
    task.refresh_from_db()
    assert wo.status == WorkOrder.Status.OPEN
    assert wo.hour_meter == 2_000.0  # the hour meter sent with the close is kept as a draft
    assert task.entry["part_number"] == "RV-1"
    assert not MeterReading.objects.filter(source=MeterReading.Source.WORK_ORDER).exists()
    assert not Component.objects.filter(unit=wo.unit, part_number="RV-1").exists()


def test_a_task_without_a_linked_part_renews_the_part_at_its_cylinder(
    wo: Any, mechanic: Any
) -> None:
    # Planned tasks may name only the cylinder (as the demo's do): the fitted part is found.
    injector = wo.unit.components.get(kind=ComponentKind.INJECTOR, position=5)
    task_make(wo, K.INJECTOR_REPLACE, cylinder=5, component=None, description="Injector 5",
              entry={"new_serial": "INJ-5-NEW"})  # fmt: skip
    task_make(wo, K.CONNECTOR_REPLACE, cylinder=5, component=None, description="Connector 5")
    assert close(wo, mechanic).result == "closed"
    event = ServiceEvent.objects.get(work_order=wo, kind=ServiceEvent.Kind.INJECTOR_REPLACED)
    assert (event.component, event.old_serial) == (injector, injector.serial)
    injector.refresh_from_db()
    assert injector.serial == "INJ-5-NEW" and injector.installed_hours == 2_000.0
