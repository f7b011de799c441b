"""Scenarios through the engine: fuel put in but not yet burned, the dirty fuel that is burned,
and a dirt estimate that has run out ("check", not overdue) until a hard limit says otherwise.

Concentrations: ISO 4406:1999 Table 1 doubles the upper limit of a scale number with each step,
so 22/20/17 is four steps over the plan's 18/16/13 in every channel: 2^4 = 16x its particles.
"""

from __future__ import annotations

import json
from collections.abc import Iterator
from datetime import datetime, timedelta
from io import StringIO
from typing import Any

import pytest
import time_machine
from django.core.management import call_command
from django.urls import reverse

from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
    Delivery,
    FilterPressureReading,
    Fueling,
)
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from services import fuel_water as fw
from tests import factories as f
from tests.planning.builders import history_make, sample_make
from tests.services.test_fuel_quality import quality_make

NOW = f.NOW  # 2026-06-15 12:00 UTC
FILTERS = [ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER]


def items(unit: Any) -> dict[str, DueItem]:
    return {i.task: i for i in DueItem.objects.filter(unit=unit)}


def filters_changed(unit: Any, *, on: datetime, hours: float) -> None:
    """Both filters fitted new at midnight of ``on``'s day, at ``hours`` on the meter."""
    Component.objects.filter(unit=unit, kind__in=FILTERS).update(
        installed_on=on.date(), installed_hours=hours
    )


@pytest.fixture
def sources(db: Any) -> dict[str, Any]:
    clean, dirty = f.source_make(name="Clean tank"), f.source_make(name="Dirty tank")
    sample_make(source=clean, at=NOW - timedelta(days=90), code="18/16/13", ref="S-CLEAN")
    sample_make(source=dirty, at=NOW - timedelta(days=1, hours=2), code="22/20/17", ref="S-DIRTY")
    return {"clean": clean, "dirty": dirty}


def test_dirty_fuel_put_in_but_not_yet_burned_loads_nothing(
    site: Any, unit_class: Any, sources: dict[str, Any]
) -> None:
    # 30 days at 10 h/day on clean fuel to 1,300 h now; both filters changed today at 1,300 h;
    # then 1,000 L of 16x fuel put in. Nothing has run since the change, so nothing is loaded
    # (before the tank model: "Overdue, 320 % of its budget").
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="P-1")
    history_make(unit=unit, source=sources["clean"], days=30)
    filters_changed(unit, on=NOW, hours=1300.0)
    Fueling.objects.create(
        unit=unit, source=sources["dirty"], fueled_at=NOW - timedelta(minutes=30), litres=1000.0
    )
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    for task in ("primary_filter", "fine_filter"):
        item = items(unit)[task]
        assert item.inputs["loading"] == 0.0 and item.inputs["percent_used"] == 0.0
        assert item.status not in {DueItem.Status.OVERDUE, DueItem.Status.CHECK}
        # The tank now holds the dirty fuel: it brings the next change forward all the same
        # (16x; 16.25x at >=14 um(c), where Table 1 rounds code 17 to 1,300/mL over 13's 80).
        assert item.inputs["current_concentration_per_ml"] == pytest.approx(
            16 * item.inputs["reference_concentration_per_ml"], rel=0.016
        )
        assert any("0 L burned since the change" in line for line in item.explanation)


def test_only_the_dirty_fuel_burned_counts_and_is_named(
    site: Any, unit_class: Any, sources: dict[str, Any]
) -> None:
    # Worked by hand. A 400 L tank; daily 200 L fuelings of clean (1x) fuel an hour before each
    # noon reading (10 h/day, 20 L/h measured: 200 L a day). Yesterday's fueling was 400 L of
    # 16x fuel instead, and none today (the same litres in all, so the same burn rate).
    # Filters changed at midnight yesterday at 1,285 h (on the readings' straight line).
    # Burned since: midnight to 11:00, 11/24 x 200 = 91.67 L of clean fuel; then the 400 L
    # fill takes the tank's room (200 L were left of 400), so from 11:00 to noon today,
    # 25/24 x 200 = 208.33 L of 16x fuel. Used: 91.67 + 16 x 208.33 = 3,425 of the plan's
    # 500 h x 20 L/h = 10,000 reference-litres (34.25 %). The tank holds 191.67 L of 16x fuel:
    # 6,575 / (20 L/h x 16) = 20.55 h more -> due at 1,320.55 h.
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="P-2")
    unit.tank_capacity_l = 400.0
    unit.save()
    history_make(unit=unit, source=sources["clean"], days=30)
    Fueling.objects.filter(unit=unit, fueled_at__gte=NOW - timedelta(days=1, hours=2)).delete()
    Fueling.objects.create(
        unit=unit, source=sources["dirty"], fueled_at=NOW - timedelta(days=1, hours=1), litres=400.0
    )
    filters_changed(unit, on=NOW - timedelta(days=1), hours=1285.0)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    fine = items(unit)["fine_filter"]
    assert fine.inputs["percent_used"] == pytest.approx(34.25, abs=0.01)
    assert fine.due_hours == pytest.approx(1320.55, abs=0.06)  # stored to 0.1 h
    assert fine.basis == "contaminant_budget"
    burned_line = next(line for line in fine.explanation if "Dirtiest fuel burned" in line)
    assert "S-DIRTY" in burned_line and "208 L of the 400 L fuelled on 2026-06-14" in burned_line
    assert "192 L still in the tank" in burned_line


@pytest.fixture
def dirty_unit(site: Any, unit_class: Any, sources: dict[str, Any]) -> Any:
    # 30 days of 16x fuel from a fresh change: 300 h x 20 L/h x 16 = 96,000 of 10,000
    # reference-litres (960 %), but only 300 of the plan's 500 h and 30 of its 180 days.
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="K-1")
    history_make(unit=unit, source=sources["dirty"], days=30)
    sample_make(
        source=sources["dirty"], at=NOW - timedelta(days=40), code="22/20/17", ref="S-DIRTY-0"
    )
    return unit


def test_an_estimate_alone_asks_for_a_check_not_a_change(dirty_unit: Any) -> None:
    due_items_recompute(unit_ids=[dirty_unit.pk], now=NOW)
    for task in ("primary_filter", "fine_filter"):
        item = items(dirty_unit)[task]
        assert item.status == DueItem.Status.CHECK
        # Sorted right after overdue, before due.
        assert item.rank == 1
        assert item.explanation[0].startswith("Check before changing")
        assert "differential pressure or restriction indicator" in item.explanation[0]


def test_a_measured_dp_at_the_limit_makes_it_overdue(dirty_unit: Any) -> None:
    fine = Component.objects.get(unit=dirty_unit, kind=ComponentKind.FINE_FILTER)
    # The fine filter's plan limit is 1.0 bar (tests/factories.plans_make).
    FilterPressureReading.objects.create(
        component=fine, taken_at=NOW - timedelta(hours=2), hours=1299.0, dp_bar=1.05
    )
    due_items_recompute(unit_ids=[dirty_unit.pk], now=NOW)
    assert items(dirty_unit)["fine_filter"].status == DueItem.Status.OVERDUE
    assert items(dirty_unit)["primary_filter"].status == DueItem.Status.CHECK


def test_a_dp_check_below_the_limit_re_bases_the_estimate(dirty_unit: Any) -> None:
    # Read after the estimate ran out (960 % of it): the element has life the estimate did
    # not credit, so the plan's 1,500 h (20 days at 10 h/day) governs again. Common practice:
    # a filter is changed on its measured dP, not on an estimate.
    fine = Component.objects.get(unit=dirty_unit, kind=ComponentKind.FINE_FILTER)
    FilterPressureReading.objects.create(
        component=fine, taken_at=NOW - timedelta(hours=2), hours=1299.0, dp_bar=0.4
    )
    due_items_recompute(unit_ids=[dirty_unit.pk], now=NOW)
    item = items(dirty_unit)["fine_filter"]
    assert item.status not in {DueItem.Status.OVERDUE, DueItem.Status.CHECK}
    assert item.basis == "plan_hours" and item.due_hours == pytest.approx(1500.0)
    assert any("no longer governs" in line for line in item.explanation)
    assert items(dirty_unit)["primary_filter"].status == DueItem.Status.CHECK


def test_a_dp_reading_before_the_estimate_ran_out_does_not_re_base(dirty_unit: Any) -> None:
    # 2 days after the change: 20 h x 20 L/h x 16 = 6,400 of 10,000 reference-litres, not yet
    # spent; the estimate still stands and has since run out.
    fine = Component.objects.get(unit=dirty_unit, kind=ComponentKind.FINE_FILTER)
    FilterPressureReading.objects.create(
        component=fine, taken_at=NOW - timedelta(days=28), hours=1020.0, dp_bar=0.2
    )
    due_items_recompute(unit_ids=[dirty_unit.pk], now=NOW)
    assert items(dirty_unit)["fine_filter"].status == DueItem.Status.CHECK


def test_the_plans_hours_passed_make_it_overdue(
    site: Any, unit_class: Any, sources: dict[str, Any]
) -> None:
    # 60 days at 10 h/day: 600 h run against the plan's 500 h, a hard limit.
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="K-2")
    history_make(unit=unit, source=sources["dirty"], days=60)
    sample_make(
        source=sources["dirty"], at=NOW - timedelta(days=70), code="22/20/17", ref="S-DIRTY-1"
    )
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    assert items(unit)["fine_filter"].status == DueItem.Status.OVERDUE


@pytest.fixture
def at_now() -> Iterator[None]:
    with time_machine.travel(NOW, tick=False):
        yield


def test_project_due_and_the_due_list_show_the_check(
    at_now: None, dirty_unit: Any, as_manager: Any
) -> None:
    out = StringIO()
    call_command("project_due", "--json", "--unit", "K-1", stdout=out)
    rows = [json.loads(line) for line in out.getvalue().splitlines()]
    statuses = {r["task"]: r["status"] for r in rows}
    assert statuses["fine_filter"] == "check" and statuses["primary_filter"] == "check"
    page = as_manager.get(reverse("pages:due_list"), {"status": "check"})
    html = page.content.decode()
    assert page.context["page"].counts["check"] == 2
    assert 'class="badge st-check"' in html and "Check dP first" in html


def test_a_bulk_tank_carries_its_deliveries_and_samples(site: Any, unit_class: Any) -> None:
    # Worked by hand. A bulk tank's deliveries: 10,000 L 60 days ago (its size, the largest
    # delivery on record), sampled 22/20/17 (16x) 10 days ago, then 5,000 L more 5 days ago
    # with no sample: 5,000 L of the sampled fuel stay, (5,000 x 16 + 5,000 x 1) / 10,000
    # = 8.5x the reference. The unit's 200 L tank holds only its last 200 L fueling from it.
    bulk = f.source_make(name="Bulk tank B")
    Delivery.objects.create(source=bulk, delivered_at=NOW - timedelta(days=60), litres=10_000.0,
                            ticket="T-1")  # fmt: skip
    sample_make(source=bulk, at=NOW - timedelta(days=10), code="22/20/17", ref="S-BULK")
    Delivery.objects.create(source=bulk, delivered_at=NOW - timedelta(days=5), litres=5_000.0,
                            ticket="T-2")  # fmt: skip
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="B-1")
    unit.tank_capacity_l = 200.0
    unit.save()
    history_make(unit=unit, source=bulk, days=30)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    fine = items(unit)["fine_filter"]
    ref = fine.inputs["reference_concentration_per_ml"]
    assert fine.inputs["current_concentration_per_ml"] == pytest.approx(8.5 * ref)
    labels = fine.inputs["sample_labels"]
    assert any("5,000 L delivery on" in x and "T-2" in x and "S-BULK" in x for x in labels)


def test_the_separator_takes_the_water_of_the_fuel_in_the_tank_mixed_as_the_filters_fuel(
    site: Any, unit_class: Any
) -> None:
    # One rule for the fuel now in use, for the filters and the separator: the unit's tank,
    # well mixed. Two units of 2,000 L tanks fuelled daily with a day's 200 L from a tank at
    # the plan's reference water (200 mg/kg: EN 590's limit); the second's last fueling, an
    # hour ago, came from a wet bowser (780 mg/kg). Its tank, full after each fueling, now
    # holds 200 L of wet fuel in 2,000 L: a tenth by volume, whatever the hour since burned.
    wet, dry = f.source_make(name="Wet bowser"), f.source_make(name="Dry tank")
    sample_make(source=wet, at=NOW - timedelta(days=60), code="18/16/13", water=780, ref="S-W")
    sample_make(source=dry, at=NOW - timedelta(days=60), code="18/16/13", water=200, ref="S-D")
    units = {}
    for name in ("DRY", "LAST-WET"):
        units[name] = f.unit_make(site=site, unit_class=unit_class, fleet_number=name)
        units[name].tank_capacity_l = 2000.0
        units[name].save(update_fields=["tank_capacity_l"])
        history_make(unit=units[name], source=dry, days=30, hours_per_day=10.0)
    last = Fueling.objects.filter(unit=units["LAST-WET"]).order_by("-fueled_at").first()
    assert last is not None and last.litres == 200.0
    Fueling.objects.filter(pk=last.pk).update(source=wet)
    due_items_recompute(unit_ids=[u.pk for u in units.values()], now=NOW)
    rate = {n: items(u)["separator_drain"].inputs["sample_rate_ml_h"] for n, u in units.items()}
    # Each fuel's free water at the samples' 15 °C, petroleum diesel (the fuel_water tests
    # check it against Hibbard and Schalla); the water per hour scales with the free water of
    # the mix, a tenth wet and nine tenths dry (one density: mg/kg mixes as litres do).
    free = {
        w: fw.free_water_or_reference(
            quality=quality_make(water_mg_kg=w, temperature_c=15.0, fame_pct_v=0.0),
            reference_mg_kg=200.0,
            coldest_c=None,
        )
        for w in (200.0, 780.0)
    }
    mix = 0.9 * free[200.0] + 0.1 * free[780.0]
    assert rate["LAST-WET"] == pytest.approx(rate["DRY"] * mix / free[200.0], rel=1e-6)
