"""The recompute stores each due item's urgency and lateness (services.urgency), so the due list
orders by them in the database."""

from __future__ import annotations

from datetime import UTC, date, datetime

from fleetfuel.planning.actions import due_item_make
from fleetfuel.planning.engine import UnitResult
from services.common import Basis, DueDate, DueStatus, Projection, TaskKind
from services.urgency import Tier

NOW = datetime(2026, 12, 2, 9, 0, tzinfo=UTC)


def result(rate: float = 6.5) -> UnitResult:
    return UnitResult(
        unit_id=1, site_id=1, projections=[], flags=[], skipped=[], current_hours=1_000.0,
        rate=rate,
    )  # fmt: skip


def spent_estimate() -> Projection:
    # Worked by hand: budget 960,000 (500 h x 24 L/h x 80 particles/mL), loading 1,200,000;
    # 240,000 over at 24 L/h x 1,000 particles/mL = 10 engine hours since it ran out.
    return Projection(
        task=TaskKind.FINE_FILTER,
        due=DueDate(hours=1_000.0, on=NOW.date(), earliest=NOW.date(), latest=NOW.date()),
        status=DueStatus.CHECK,
        basis=Basis.CONTAMINANT_BUDGET,
        inputs={
            "loading": 1_200_000.0,
            "budget": 960_000.0,
            "burn_l_per_h": 24.0,
            "current_concentration_per_ml": 1_000.0,
            "hours_since_change": 150.0,
        },
    )


def test_a_spent_estimate_stores_its_overrun_in_hours_and_days() -> None:
    item = due_item_make(result(), 7, spent_estimate(), False, NOW)
    # 10 h at 6.5 h a day: one whole day back from 2 December.
    assert item.urgency == Tier.CHECK and item.late_hours == 10.0
    assert item.late_from == date(2026, 12, 1) and item.due_on == NOW.date()


def test_a_unit_stood_down_by_a_high_pressure_flag_brings_its_spent_filters_forward() -> None:
    item = due_item_make(result(), 7, spent_estimate(), True, NOW)
    assert item.urgency == Tier.UNIT_STOOD_DOWN


def test_an_hour_limit_passed_is_late_by_its_hours_from_its_date() -> None:
    # The plan's hours fell at 970 h; the meter is at 1,000 h: 30 h past, on 28 November.
    passed = Projection(
        task=TaskKind.PRIMARY_FILTER,
        due=DueDate(hours=970.0, on=date(2026, 11, 28), earliest=date(2026, 11, 28),
                    latest=date(2026, 11, 28)),
        status=DueStatus.OVERDUE,
        basis=Basis.PLAN_HOURS,
    )  # fmt: skip
    item = due_item_make(result(), 7, passed, False, NOW)
    assert item.urgency == Tier.OVERDUE and item.late_hours == 30.0
    assert item.hours_left == -30.0 and item.late_from == date(2026, 11, 28)


def test_a_water_alarm_drain_is_stored_first() -> None:
    drain = Projection(
        task=TaskKind.SEPARATOR_DRAIN,
        due=DueDate(hours=None, on=NOW.date(), earliest=NOW.date(), latest=NOW.date()),
        status=DueStatus.DUE,
        basis=Basis.WATER_EVENT,
    )
    item = due_item_make(result(), 7, drain, False, NOW)
    assert item.urgency == Tier.WATER_ALARM == 0 and item.late_from == NOW.date()
