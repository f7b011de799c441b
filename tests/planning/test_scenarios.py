"""Scenarios through the engine: hours, meters, relief-valve flags, drains and bad inputs.

Each one is built in the database and projected by ``manage.py project_due --json`` with the
clock frozen at ``NOW`` (the command reads it), then read back as a manager would: the JSON
items, the stored hours left and the unit's flags. Figures are hand-worked in the comments.
"""

from __future__ import annotations

import json
from datetime import timedelta
from io import StringIO
from typing import Any

import pytest
import time_machine
from django.core.management import call_command

from fleetfuel.fleet.models import (
    EngineEvent,
    Fueling,
    MeterReading,
    MeterReplacement,
    ServicePlan,
)
from fleetfuel.ledger.actions import service_event_append
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.models import DueItem, UnitFlag
from tests import factories as f
from tests.planning.builders import engine_forecast

NOW = f.NOW


def project_due() -> dict[tuple[str, str], dict[str, Any]]:
    """``project_due --json`` at NOW: the items by (fleet number, task)."""
    out = StringIO()
    with time_machine.travel(NOW, tick=False):
        call_command("project_due", "--json", stdout=out)
    rows = [json.loads(line) for line in out.getvalue().splitlines() if line.strip()]
    return {(r["unit"], r["task"]): r for r in rows}


def readings_make(unit: Any, *, days: range, hours_at: Any) -> None:
    """A reading at noon on each day ago in ``days``, of ``hours_at(day_ago)`` hours."""
    MeterReading.objects.bulk_create(
        MeterReading(unit=unit, taken_at=NOW - timedelta(days=d), hours=hours_at(d)) for d in days
    )


def filters_fit(unit: Any, *, days_ago: int, hours: float) -> None:
    unit.components.filter(kind__in=["primary_filter", "fine_filter"]).update(
        installed_on=(NOW - timedelta(days=days_ago)).date(), installed_hours=hours
    )


def flags_of(unit: Any) -> dict[str, UnitFlag]:
    return {fl.code: fl for fl in UnitFlag.objects.filter(unit=unit)}


# ----------------------------------------------------------------------------- hours


def test_a_unit_parked_sixty_days_gains_no_hours(site: Any, unit_class: Any) -> None:
    # Read daily at 10 h/day until 60 days ago (2,000 h then), nothing since: no reading, no
    # fueling. Filters changed 70 days ago at 1,900 h, plan 500 h: due at 2,400 h. Carried
    # one usual interval (1 day) past the last reading: 2,010 h, not 2,000 + 60 x 10 =
    # 2,600 h (which made both filters "overdue by plan hours").
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="PARK-1")
    readings_make(unit, days=range(60, 121), hours_at=lambda d: 2_000.0 - 10 * (d - 60))
    filters_fit(unit, days_ago=70, hours=1_900.0)
    items = project_due()
    fine = items[("PARK-1", "fine_filter")]
    assert fine["due_hours"] == pytest.approx(2_400.0)
    assert fine["status"] != "overdue"
    stored = DueItem.objects.get(unit=unit, task="fine_filter")
    assert stored.hours_left == pytest.approx(2_400.0 - 2_010.0, abs=0.1)
    last = (NOW - timedelta(days=60)).date().isoformat()
    assert any(f"no reading since {last}" in line for line in fine["explanation"])


def test_a_unit_with_no_readings_starts_from_its_recorded_hours(site: Any, unit_class: Any) -> None:
    # No readings at all; the filters went on at 1,000 h (the factory's fitting). Due at
    # 1,500 h with 500 h left, not 1,500 h left from 0 h ("Due at 500 h" was the old fault).
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="NONE-1")
    items = project_due()
    fine = items[("NONE-1", "fine_filter")]
    assert fine["due_hours"] == pytest.approx(1_500.0)
    stored = DueItem.objects.get(unit=unit, task="fine_filter")
    assert stored.hours_left == pytest.approx(500.0, abs=0.1)
    assert any("last service record" in line for line in fine["explanation"])


def test_one_reading_is_not_carried_without_evidence(site: Any, unit_class: Any) -> None:
    # One reading, 1,200 h, 30 days ago; nothing since: current hours stay 1,200 h (the class
    # default of 8 h/day would have added 240 h).
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="ONE-1")
    readings_make(unit, days=range(30, 31), hours_at=lambda d: 1_200.0)
    project_due()
    forecast = engine_forecast(unit)
    assert forecast.basis == "class_default"
    assert forecast.current_hours == pytest.approx(1_200.0)
    stored = DueItem.objects.get(unit=unit, task="fine_filter")
    assert stored.hours_left == pytest.approx(1_500.0 - 1_200.0, abs=0.1)


# ----------------------------------------------------------------------------- meters


def _old_meter(unit: Any) -> None:
    """Read daily at 10 h/day on the old meter up to 5,400 h, 10 days ago at noon."""
    readings_make(unit, days=range(10, 60), hours_at=lambda d: 5_400.0 - 10 * (d - 10))
    filters_fit(unit, days_ago=30, hours=5_200.0)


def test_a_reading_at_the_instant_of_a_meter_replacement_is_the_new_meter(
    site: Any, unit_class: Any
) -> None:
    # The meter was replaced 10 days ago at noon (old 5,400 h, new 0 h) and read at that very
    # moment: 0 h on the new meter, 5,400 engine hours (it was read as the old meter: 0 h).
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="SWAP-1")
    _old_meter(unit)
    swap = NOW - timedelta(days=10)
    MeterReading.objects.filter(unit=unit, taken_at=swap).update(hours=0.0)
    MeterReplacement.objects.create(
        unit=unit, replaced_at=swap, old_meter_final=5_400.0, new_meter_start=0.0
    )
    project_due()
    forecast = engine_forecast(unit)
    # Carried one day past the last reading at 10 h/day: 5,410 h.
    assert forecast.current_hours == pytest.approx(5_410.0, abs=0.5)
    assert "meter_change_unconfirmed" not in flags_of(unit)
    # A reading after it on the new meter: 50 h five days ago -> 5,450 engine hours, carried
    # one usual interval (the median gap between readings, 1 day) -> 5,460 h.
    readings_make(unit, days=range(5, 6), hours_at=lambda d: 50.0)
    forecast = engine_forecast(unit)
    assert forecast.current_hours == pytest.approx(5_460.0, abs=1.0)
    items = project_due()
    assert items[("SWAP-1", "fine_filter")]["due_hours"] == pytest.approx(5_700.0)


def test_a_meter_replacement_nobody_recorded_is_flagged(site: Any, unit_class: Any) -> None:
    # Old meter to 5,400 h ten days ago; from nine days ago a new meter reads 10, 20, ... h.
    # No replacement recorded: a probable meter change for the manager to confirm, and the
    # rate stays ~10 h/day (not "Idle: 0.0 h/day").
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="DROP-1")
    _old_meter(unit)
    readings_make(unit, days=range(0, 10), hours_at=lambda d: 10.0 * (10 - d))
    items = project_due()
    flag = flags_of(unit)["meter_change_unconfirmed"]
    assert "5,400 h" in flag.reason and "no meter replacement recorded" in flag.reason
    forecast = engine_forecast(unit)
    assert forecast.basis == "readings" and forecast.rate == pytest.approx(10.0, rel=0.15)
    assert forecast.current_hours == pytest.approx(5_490.0, abs=15.0)
    explanation = items[("DROP-1", "fine_filter")]["explanation"]
    assert not any("Idle" in line for line in explanation)
    assert any("probably a meter change" in line for line in explanation)


# ----------------------------------------------------------------------------- relief valve


def _openings(unit: Any, *, days_ago: list[float], hours: list[float], count: int = 1) -> None:
    EngineEvent.objects.bulk_create(
        EngineEvent(
            unit=unit,
            occurred_at=NOW - timedelta(days=d),
            hours=h,
            spn=5571,
            fmi=31,
            occurrences=count,
            kind=EngineEvent.Kind.RELIEF_VALVE_OPENED,
        )
        for d, h in zip(days_ago, hours, strict=True)
    )


def test_relief_valve_openings_old_new_and_after_replacement(
    site: Any, unit_class: Any, manager: Any
) -> None:
    # The class's plan (tests/factories.plans_make): 3 openings in 7 days flag a unit, 25 in
    # the valve's life replace it; here also an hour window of 50 h.
    ServicePlan.objects.filter(unit_class=unit_class, component_kind="relief_valve").update(
        relief_window_hours=50
    )
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="RV-1")
    # The valve went on 400 days ago (its fitting starts the lifetime count).
    unit.components.filter(kind="relief_valve").update(
        installed_on=(NOW - timedelta(days=400)).date(), installed_hours=1_000.0
    )
    readings_make(unit, days=range(0, 320), hours_at=lambda d: 5_000.0 - 10 * d)
    # Old: three openings 300 days ago at 1,990-2,000 h. The unit is at 5,000 h now; neither
    # window reaches them ("in the last 50 engine hours" was the stale flag).
    _openings(unit, days_ago=[300.0, 300.0, 300.0], hours=[1_990.0, 1_995.0, 2_000.0])
    project_due()
    assert "relief_valve_repeat" not in flags_of(unit)
    # New: three in the last two days (4,980-4,995 h): flagged once, with one reason.
    _openings(unit, days_ago=[2.0, 1.0, 0.5], hours=[4_980.0, 4_990.0, 4_995.0], count=8)
    project_due()
    flags = flags_of(unit)
    assert flags["relief_valve_repeat"].reason.count("relief-valve openings") == 1
    # 3 old + 24 new = 27 openings: over the 25 of the plan's valve life.
    assert "27 times" in flags["relief_valve_life"].reason
    # The valve is replaced an hour ago: the counts start again; neither flag stays.
    service_event_append(
        unit=unit,
        kind=ServiceEvent.Kind.RELIEF_VALVE_REPLACED,
        performed_at=NOW - timedelta(hours=1),
        recorded_by=manager,
        recorded_at=NOW,
        hour_meter=4_999.0,
    )
    project_due()
    assert not {"relief_valve_repeat", "relief_valve_life"} & set(flags_of(unit))


# ----------------------------------------------------------------------------- drains


def test_a_blank_drain_empties_the_bowl_but_adds_no_rate(
    site: Any, unit_class: Any, manager: Any
) -> None:
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="DR-1")
    readings_make(unit, days=range(0, 30), hours_at=lambda d: 3_000.0 - 10 * d)
    # Drains 20 and 10 days ago with 30 mL and 100 mL (100 mL over 100 h: 1.0 mL/h), the
    # last 2 days ago with no amount written down (it counted as 0 mL and weighed most).
    for days_ago, hours, water in ((20, 2_800.0, 30.0), (10, 2_900.0, 100.0), (2, 2_980.0, None)):
        service_event_append(
            unit=unit,
            kind=ServiceEvent.Kind.SEPARATOR_DRAINED,
            performed_at=NOW - timedelta(days=days_ago),
            recorded_by=manager,
            recorded_at=NOW,
            hour_meter=hours,
            water_ml=water,
        )
    drain = project_due()[("DR-1", "separator_drain")]
    assert drain["inputs"]["observed_rates_ml_h"] == [pytest.approx(1.0)]
    # The bowl counts from the blank drain at 2,980 h: about 20 h of fuel burned since (the
    # engine's burn, not the litres delivered).
    assert any("since the drain at 2,980 h" in line for line in drain["explanation"])


# ----------------------------------------------------------------------------- bad inputs


def test_infinite_and_negative_records_skip_their_task_with_the_reason(
    site: Any, unit_class: Any
) -> None:
    # An infinite meter reading: refused by name, the unit flagged, nothing crashes; the
    # projections go on from the readings that are numbers.
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="BAD-1")
    readings_make(unit, days=range(1, 30), hours_at=lambda d: 2_000.0 - 10 * d)
    MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(hours=1), hours=float("inf"))
    items = project_due()
    flag = flags_of(unit)["records_refused"]
    assert "must be a finite number" in flag.reason and "hours" in flag.reason
    assert ("BAD-1", "fine_filter") in items
    # A drain with a negative amount: the drain is skipped, named; the filters still project.
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="BAD-2")
    readings_make(other, days=range(0, 30), hours_at=lambda d: 2_000.0 - 10 * d)
    service_event_append(
        unit=other,
        kind=ServiceEvent.Kind.SEPARATOR_DRAINED,
        performed_at=NOW - timedelta(days=1),
        recorded_by=f.user_make("manager"),
        recorded_at=NOW,
        hour_meter=1_990.0,
        water_ml=-5.0,
    )
    items = project_due()
    assert ("BAD-2", "separator_drain") not in items
    assert ("BAD-2", "fine_filter") in items
    assert "drain water_ml cannot be negative" in flags_of(other)["records_refused"].reason


def test_a_nan_reading_is_refused_by_name(site: Any, unit_class: Any, postgres: None) -> None:
    # PostgreSQL stores NaN in a float column (SQLite cannot); the engine refuses it by name.
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="NAN-1")
    readings_make(unit, days=range(1, 30), hours_at=lambda d: 2_000.0 - 10 * d)
    MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(hours=1), hours=float("nan"))
    items = project_due()
    assert "must be a finite number" in flags_of(unit)["records_refused"].reason
    assert items[("NAN-1", "fine_filter")]["due_hours"] == pytest.approx(1_500.0)
    # From the readings that are numbers: 1,990 h a day ago, carried one day at 10 h/day.
    assert engine_forecast(unit).current_hours == pytest.approx(2_000.0)


def test_huge_readings_do_not_break_the_projection(site: Any, unit_class: Any) -> None:
    # A meter read at 10^12 h (a typing slip): a number, so it projects, without overflow.
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="HUGE-1")
    readings_make(unit, days=range(1, 30), hours_at=lambda d: 2_000.0 - 10 * d)
    MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(hours=1), hours=1e12)
    # And 10^12 L put in the tank: a number too; nothing overflows, nothing crashes.
    Fueling.objects.create(
        unit=unit, source=f.source_make(), fueled_at=NOW - timedelta(hours=2), litres=1e12
    )
    items = project_due()
    assert {task for unit_no, task in items if unit_no == "HUGE-1"} == {
        "primary_filter",
        "fine_filter",
        "separator_drain",
    }
