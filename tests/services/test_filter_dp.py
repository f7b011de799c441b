"""A filter's differential pressure: the exponential fit, and the projection it governs."""

from __future__ import annotations

import math
from datetime import timedelta

from services.common import Basis, DueStatus
from services.filter_dp import DpReading, dp_fit
from tests.services.test_intervals import CHANGED_AT, CHANGED_HOURS, make_plan, project


def _exp_readings(a: float, b: float, hours: list[float]) -> list[DpReading]:
    return [
        DpReading(
            at=CHANGED_AT + timedelta(hours=h), hours=CHANGED_HOURS + h, dp_bar=a * math.exp(b * h)
        )
        for h in hours
    ]


def test_dp_fit_recovers_exponential_hand_worked() -> None:
    # dp = 0.2 exp(0.01 h): 0.200, 0.330, 0.544 bar at 0, 50, 100 h. The limit 1.0 bar
    # is reached at h = ln(1.0 / 0.2) / 0.01 = ln 5 / 0.01 = 160.94 h after the change.
    fit = dp_fit(readings=_exp_readings(0.2, 0.01, [0, 50, 100]), limit_bar=1.0, h0=CHANGED_HOURS)
    assert fit is not None
    assert math.isclose(fit.a, 0.2, rel_tol=1e-9)
    assert math.isclose(fit.b, 0.01, rel_tol=1e-9)
    assert math.isclose(fit.crossing_hours or 0, CHANGED_HOURS + math.log(5) / 0.01)
    # A straight line through the first and last points, slope (0.544 - 0.2)/100 =
    # 0.00344 bar/h, would reach 1.0 bar only at 232.8 h: later, i.e. optimistic.
    line_cross = (1.0 - 0.2) / ((0.2 * math.exp(1.0) - 0.2) / 100)
    assert (fit.crossing_hours or 0) - CHANGED_HOURS < line_cross


def test_dp_projection_governs_and_is_explained() -> None:
    p = project(
        plan=make_plan(dp_limit_bar=1.0),
        dp_readings=_exp_readings(0.2, 0.01, [0, 50, 100]),
    )
    assert p.basis is Basis.DIFFERENTIAL_PRESSURE
    assert math.isclose(p.due.hours or 0, 10_160.94, abs_tol=0.01)
    assert any("reaches the 1 bar limit" in s for s in p.explanation)


def test_dp_limit_already_seen_is_due_at_that_reading() -> None:
    # Readings up to 1.2 bar at +100 h with a 1.0 bar limit: the observed crossing.
    readings = [
        DpReading(CHANGED_AT, CHANGED_HOURS + h, dp) for h, dp in [(0, 0.3), (50, 0.6), (100, 1.2)]
    ]
    p = project(plan=make_plan(dp_limit_bar=1.0), dp_readings=readings)
    assert p.basis is Basis.DIFFERENTIAL_PRESSURE
    assert p.due.hours == CHANGED_HOURS + 100
    assert p.status is DueStatus.OVERDUE


def test_falling_dp_is_ignored_and_said() -> None:
    readings = _exp_readings(0.5, -0.002, [0, 50, 100])
    p = project(plan=make_plan(dp_limit_bar=1.0), dp_readings=readings)
    assert p.basis is Basis.PLAN_HOURS
    assert any("do not rise" in s for s in p.explanation)


def test_two_dp_readings_are_not_enough() -> None:
    p = project(plan=make_plan(dp_limit_bar=0.3), dp_readings=_exp_readings(0.2, 0.01, [0, 50]))
    assert p.basis is Basis.PLAN_HOURS
    assert p.inputs["dp_fit"] is None


def test_readings_before_the_change_are_not_fitted() -> None:
    old = [
        DpReading(CHANGED_AT - timedelta(days=1), CHANGED_HOURS - 10 + i, 0.2 + i) for i in range(3)
    ]
    p = project(plan=make_plan(dp_limit_bar=1.0), dp_readings=old)
    assert p.inputs["dp_fit"] is None
