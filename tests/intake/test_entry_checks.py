"""The plausibility rule on stored rows (``fleetfuel.fleet.checks``): neighbours on both sides,
meter replacements between, tank capacities, and the model's own ``clean``.

Sources: a day has 24 hours (ISO 8601-1:2019, 3.1.2.21), so a meter gains at most 24 h a day;
an hour meter only counts up unless replaced (common practice).
"""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.core.exceptions import ValidationError

from fleetfuel.fleet.checks import (
    fueling_refusal_for,
    meter_reading_refusal,
    meter_readings_refusals,
)
from fleetfuel.fleet.models import MeterReading, MeterReplacement
from fleetfuel.workorders.close import work_order_close
from fleetfuel.workorders.forms import JobEntry
from fleetfuel.workorders.models import WorkOrderTask
from tests import factories as f
from tests.factories import NOW
from tests.workorders.conftest import task_make, work_order_make

DAY = timedelta(days=1)


@pytest.fixture
def readings(unit: Any) -> Any:
    # The case reported in issue 11: readings of 10,974 h and 11,025 h a month apart.
    MeterReading.objects.create(unit=unit, taken_at=NOW - 40 * DAY, hours=10_974.0)
    MeterReading.objects.create(unit=unit, taken_at=NOW - 10 * DAY, hours=11_025.0)
    return unit


def test_a_reading_above_its_later_neighbour_is_refused(readings: Any) -> None:
    reason = meter_reading_refusal(unit=readings, at=NOW - 15 * DAY, hours=11_100.0, now=NOW)
    assert reason is not None and "11,025.0 h" in reason and "next reading" in reason
    assert meter_reading_refusal(unit=readings, at=NOW - 15 * DAY, hours=11_000.0, now=NOW) is None


def test_a_reading_in_the_future_is_refused(readings: Any) -> None:
    reason = meter_reading_refusal(unit=readings, at=NOW + 210 * DAY, hours=13_000.0, now=NOW)
    assert reason is not None and "future" in reason


def test_a_replacement_between_lets_the_meter_start_again(readings: Any) -> None:
    assert meter_reading_refusal(unit=readings, at=NOW - DAY, hours=3.0, now=NOW) is not None
    MeterReplacement.objects.create(
        unit=readings, replaced_at=NOW - 2 * DAY, old_meter_final=11_190.0, new_meter_start=0.0
    )
    assert meter_reading_refusal(unit=readings, at=NOW - DAY, hours=3.0, now=NOW) is None


def test_a_reading_being_edited_is_not_its_own_neighbour(readings: Any) -> None:
    latest = MeterReading.objects.latest()
    reason = meter_reading_refusal(
        unit=readings, at=latest.taken_at, hours=11_030.0, now=NOW, exclude_pk=latest.pk
    )
    assert reason is None


def test_a_round_checks_every_unit_in_two_queries(
    readings: Any, site: Any, unit_class: Any, django_assert_num_queries: Any
) -> None:
    other = f.unit_make(site=site, unit_class=unit_class)
    MeterReading.objects.create(unit=other, taken_at=NOW - 2 * DAY, hours=500.0)
    # 1: units with their neighbours' times and hours (subqueries); 2: meter replacements.
    with django_assert_num_queries(2):
        refusals = meter_readings_refusals(
            hours_by_unit={readings.pk: 11_030.0, other.pk: 600.0}, at=NOW, now=NOW
        )
    assert list(refusals) == [other.pk]  # 100 h in 48 h
    assert "48.0 h elapsed" in refusals[other.pk]


def test_the_model_refuses_what_the_rule_refuses(readings: Any) -> None:
    bad = MeterReading(unit=readings, taken_at=NOW - 15 * DAY, hours=11_100.0)
    with pytest.raises(ValidationError) as err:
        bad.full_clean()
    assert "11,025.0 h" in str(err.value.message_dict["hours"])


def test_a_fueling_fits_the_unit_tank_else_the_class_tank(unit: Any) -> None:
    unit.unit_class.typical_tank_l = 400.0
    unit.unit_class.save()
    assert fueling_refusal_for(unit=unit, litres=500.0) is not None
    unit.tank_capacity_l = 600.0
    unit.save()
    assert fueling_refusal_for(unit=unit, litres=500.0) is None
    assert fueling_refusal_for(unit=unit, litres=float("nan")) is not None


def test_the_close_refuses_more_hours_than_elapsed(unit: Any, manager: Any) -> None:
    # The close records its reading at ``now``: 100 h on a reading two days back is more than
    # the 48 h the two days hold (ISO 8601-1:2019, 3.1.2.21).
    MeterReading.objects.create(unit=unit, taken_at=NOW - 2 * DAY, hours=1_990.0)
    wo = work_order_make(unit=unit, created_by=manager)
    task_make(wo, WorkOrderTask.Kind.RELIEF_VALVE_REPLACE, description="Replace relief valve")
    job = JobEntry(
        hour_meter=2_090.0,
        meter_replaced=False,
        meter_old_final=None,
        meter_new_start=None,
        notes=None,
    )
    outcome = work_order_close(work_order_id=wo.pk, user=manager, token="t", job=job, now=NOW)
    assert outcome.result == "refused"
    assert any("48.0 h elapsed" in p and "1,990.0 h" in p for p in outcome.problems)
    assert not MeterReading.objects.filter(source=MeterReading.Source.WORK_ORDER).exists()
