"""One usage forecast for a unit: the engine's due dates and the unit page use the same one."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest

from fleetfuel.fleet.models import MeterReading
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.selectors import unit_forecast_get
from tests import factories as f
from tests.planning.builders import history_make

NOW = f.NOW


def test_the_page_forecast_is_the_one_the_engine_projected_from(
    unit: Any, django_assert_num_queries: Any
) -> None:
    history_make(unit=unit, source=f.source_make(), days=30, hours_per_day=10.0)
    due_items_recompute(unit_ids=[unit.pk], now=NOW)
    # 1 the unit with its class and latest reading, 2 its readings in the forecast window,
    # 3 its meter replacements.
    with django_assert_num_queries(3):
        forecast = unit_forecast_get(unit_id=unit.pk, now=NOW)
    # history_make: a reading a day at 10 h/day, 1,300 h on the last day (hand-worked).
    assert forecast.rate == pytest.approx(10.0)
    assert forecast.current_hours == pytest.approx(1_300.0)
    # Each stored item's hours left were counted from the same current hours.
    items = DueItem.objects.filter(unit=unit, due_hours__isnull=False)
    assert items.exists()
    for item in items:
        assert item.due_hours - item.hours_left == pytest.approx(forecast.current_hours, abs=0.1)


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
    forecast = unit_forecast_get(unit_id=unit.pk, now=NOW)
    assert forecast.rate == pytest.approx(12.0)
    assert "91 readings over 90 days" in forecast.note
