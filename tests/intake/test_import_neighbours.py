"""The import's in-memory neighbours give the same verdicts as the rule on every other path
(fleetfuel.fleet.checks.meter_reading_refusal, which queries the database per reading)."""

from __future__ import annotations

from datetime import timedelta
from typing import Any
from zoneinfo import ZoneInfo

import pytest

from fleetfuel.fleet.checks import meter_reading_refusal
from fleetfuel.fleet.models import MeterReading, MeterReplacement
from fleetfuel.intake.imports.neighbours import ReadingsNearby
from tests import factories as f

NOW = f.NOW


@pytest.mark.parametrize(
    ("days_ago", "hours"),
    [
        (12, 900.0), (9, 1_010.0), (9, 1_200.0), (7, 1_030.0), (7, 990.0), (5, 1_100.0),
        (5, 1_049.0), (3, 1_060.0), (3, 1_100.0), (1, 30.0), (1, 1_200.0), (0.5, 60.0),
        (-1, 80.0), (10, 1_000.0),
    ],
)  # fmt: skip
def test_same_verdict_as_the_shared_rule(unit: Any, days_ago: float, hours: float) -> None:
    for ago, h in [(10, 1_000.0), (6, 1_050.0), (2, 1_090.0), (0.8, 20.0)]:
        MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(days=ago), hours=h)
    # The meter was replaced between the readings 2 and 0.8 days ago (1,095 h -> 0 h).
    MeterReplacement.objects.create(
        unit=unit, replaced_at=NOW - timedelta(days=1.5), old_meter_final=1_095, new_meter_start=0
    )
    at = NOW - timedelta(days=days_ago)
    existing = MeterReading.objects.filter(unit=unit, taken_at=at).first()
    expected = meter_reading_refusal(
        unit=unit, at=at, hours=hours, now=NOW, zone=ZoneInfo(unit.site.time_zone),
        exclude_pk=existing.pk if existing else None,
    )  # fmt: skip
    assert ReadingsNearby().refusal(unit, at=at, hours=hours, now=NOW) == expected
