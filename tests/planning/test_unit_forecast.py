"""One usage forecast for a unit: the engine's due dates and the unit page use the same one,
kept by the projection that made them (planning.models.UnitForecast)."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest

from fleetfuel.fleet.models import MeterReading
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem, UnitForecast
from fleetfuel.planning.selectors import unit_forecast_stored
from tests import factories as f
from tests.planning.builders import engine_forecast, history_make

NOW = f.NOW


def test_the_page_forecast_is_the_one_the_engine_projected_from(
    unit: Any, django_assert_num_queries: Any
) -> None:
    history_make(unit=unit, source=f.source_make(), days=30, hours_per_day=10.0)
    assert unit_forecast_stored(unit_id=unit.pk) is None  # never projected: none shown
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    with django_assert_num_queries(1):  # the stored forecast, not the engine's inputs again
        forecast = unit_forecast_stored(unit_id=unit.pk)
    assert forecast is not None
    # history_make: a reading a day at 10 h/day, 1,300 h on the last day (hand-worked).
    assert forecast.rate == pytest.approx(10.0)
    assert forecast.current_hours == pytest.approx(1_300.0)
    # Exactly what the engine computes from the unit's inputs, every field (a round trip).
    assert forecast == engine_forecast(unit)
    # Each stored item's hours left were counted from the same current hours.
    items = DueItem.objects.filter(unit=unit, due_hours__isnull=False)
    assert items.exists()
    for item in items:
        assert item.due_hours - item.hours_left == pytest.approx(forecast.current_hours, abs=0.1)


def test_a_recompute_replaces_the_forecast_and_a_new_unit_keeps_its_class_rate(unit: Any) -> None:
    history_make(unit=unit, source=f.source_make(), days=30, hours_per_day=10.0)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    later = NOW + timedelta(days=1)
    MeterReading.objects.create(unit=unit, taken_at=later, hours=1_320.0)
    due_items_recompute(unit_ids=[unit.pk], now=later)
    assert UnitForecast.objects.filter(unit=unit).count() == 1
    forecast = unit_forecast_stored(unit_id=unit.pk)
    assert forecast is not None and forecast.as_of == later
    assert forecast.current_hours == pytest.approx(1_320.0)
    # A unit with no readings is projected from its class's typical hours a day, and that
    # is the forecast kept for it (common practice: a new unit runs like its class).
    other = f.unit_make(site=unit.site, unit_class=unit.unit_class)
    due_items_recompute(unit_ids=[other.pk], now=NOW)
    kept = unit_forecast_stored(unit_id=other.pk)
    assert kept is not None and kept.basis == "class_default"
    assert kept.rate == pytest.approx(unit.unit_class.typical_hours_per_day)


def test_the_forecast_is_fitted_on_the_last_ninety_days(unit: Any) -> None:
    # Hand-worked: 5 h/day for a year, then 12 h/day for the last 90 days. Fitted on the last
    # 90 days only, the rate is 12 h/day; a year of readings would have pulled it down.
    start = NOW - timedelta(days=455)
    hours, rows = 1_000.0, []
    for d in range(456):
        at = start + timedelta(days=d)
        rows.append(MeterReading(unit=unit, taken_at=at, hours=hours))
        hours += 12.0 if at >= NOW - timedelta(days=90) else 5.0
    MeterReading.objects.bulk_create(rows)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    forecast = unit_forecast_stored(unit_id=unit.pk)
    assert forecast is not None
    assert forecast.rate == pytest.approx(12.0)
    assert "91 readings over 90 days" in forecast.note


def test_the_items_sort_key_follows_a_renamed_unit(unit: Any) -> None:
    # The due list sorts by the fleet number the projection kept on each item; a unit saved
    # is recomputed (planning/signals.py), so a rename reaches its items.
    history_make(unit=unit, source=f.source_make(), days=30, hours_per_day=10.0)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    assert set(DueItem.objects.filter(unit=unit).values_list("sort_fleet_number", flat=True)) == {
        unit.fleet_number
    }
    unit.fleet_number = "ZZ-RENAMED"
    unit.save()
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    kept = set(DueItem.objects.filter(unit=unit).values_list("sort_fleet_number", flat=True))
    assert kept == {"ZZ-RENAMED"}
