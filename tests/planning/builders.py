"""A small invented unit history for planning tests: readings, fuelings and samples."""

from __future__ import annotations

from datetime import datetime, timedelta
from typing import Any

from fleetfuel.fleet.models import Component, ComponentKind, Fueling, FuelSample, MeterReading
from fleetfuel.planning.selectors import batch_inputs_load, unit_forecast
from services.common import UsageForecast
from tests.factories import NOW


def history_make(
    *,
    unit: Any,
    source: Any,
    days: int = 60,
    hours_per_day: float = 10.0,
    burn_l_per_h: float = 20.0,
    now: datetime = NOW,
    start_hours: float = 1000.0,
) -> None:
    """Daily readings and fuelings for ``days`` up to ``now``; filters changed at the start."""
    start = now - timedelta(days=days)
    Component.objects.filter(
        unit=unit, kind__in=[ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER]
    ).update(installed_on=start.date(), installed_hours=start_hours)
    readings, fuelings = [], []
    for d in range(1, days + 1):
        at = start + timedelta(days=d)
        readings.append(MeterReading(unit=unit, taken_at=at, hours=start_hours + d * hours_per_day))
        fuelings.append(
            Fueling(
                unit=unit,
                source=source,
                fueled_at=at - timedelta(hours=1),
                litres=hours_per_day * burn_l_per_h,
            )
        )
    MeterReading.objects.bulk_create(readings)
    Fueling.objects.bulk_create(fuelings)


def sample_make(
    *, source: Any, at: datetime, code: str, water: float = 80.0, ref: str
) -> FuelSample:
    sample = FuelSample(
        reference=ref,
        source=source,
        sampled_at=at,
        iso4406=code,
        water_mg_kg=water,
        temperature_c=15.0,
        fame_pct_v=0.0,
    )
    sample.full_clean()
    sample.save()
    return sample


def engine_forecast(unit: Any, now: datetime = NOW) -> UsageForecast:
    """The usage forecast the engine makes for the unit at ``now``, from its stored inputs."""
    return unit_forecast(batch_inputs_load(unit_ids=[unit.pk], now=now).units[0], now=now)
