"""A filter's differential pressure: the fit above the clean-element baseline, its prediction
bound, and the projection it governs. Outside references: the analytic crossing of the curve
the readings were drawn from, scipy.optimize.curve_fit (the same least-squares problem solved by
a general-purpose library) and scipy.stats.t (Student's t quantiles)."""

from __future__ import annotations

import math
import random
import statistics
from datetime import timedelta

import pytest

from services.common import Basis, DueStatus
from services.filter_dp import DpReading, dp_fit, t95_one_sided
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
    assert any("meets the 1 bar limit" in s for s in p.explanation)


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


# The case: dP = 0.10 + 0.01 exp(0.01 h) (bar, h since the change), limit 1.0 bar.
# Analytic crossing: 0.10 + 0.01 e^(0.01 h) = 1.0 -> h = 100 ln 90 = 449.98 h
# (0.10 + 0.01 e^4.5 = 1.0002 bar at 450 h: the "true 450 h").
TRUE_CROSSING_H = 100 * math.log(90)


def _baseline_readings(hours: list[float], noise: list[float] | None = None) -> list[DpReading]:
    return [
        DpReading(
            at=CHANGED_AT + timedelta(hours=h),
            hours=CHANGED_HOURS + h,
            dp_bar=0.10 + 0.01 * math.exp(0.01 * h) + (noise[i] if noise else 0.0),
        )
        for i, h in enumerate(hours)
    ]


def test_the_baseline_puts_the_limit_at_the_true_crossing() -> None:
    hours = [0.0, 50.0, 100.0, 150.0, 200.0, 250.0]
    fit = dp_fit(readings=_baseline_readings(hours), limit_bar=1.0, h0=CHANGED_HOURS)
    assert fit is not None and fit.crossing_hours is not None
    assert math.isclose(fit.c, 0.10, abs_tol=1e-6) and math.isclose(fit.b, 0.01, rel_tol=1e-4)
    assert abs(fit.crossing_hours - CHANGED_HOURS - TRUE_CROSSING_H) < 1.0
    # The old pure exponential through total dP (ln dP linear in h) on the same readings puts
    # it at about 825 h (the issue measured 817 h on its own readings): far too late.
    slope, intercept = statistics.linear_regression(
        hours, [math.log(0.10 + 0.01 * math.exp(0.01 * h)) for h in hours]
    )
    assert -intercept / slope > 800


def test_the_fit_agrees_with_scipy_curve_fit() -> None:
    optimize = pytest.importorskip("scipy.optimize")
    np = pytest.importorskip("numpy")
    rng = random.Random(19438)
    hours = [float(h) for h in range(0, 301, 25)]
    noise = [rng.gauss(0.0, 0.004) for _ in hours]
    readings = _baseline_readings(hours, noise)
    fit = dp_fit(readings=readings, limit_bar=1.0, h0=CHANGED_HOURS)
    assert fit is not None

    def model(h: object, c: float, a: float, b: float) -> object:
        return c + a * np.exp(b * h)

    ys = [r.dp_bar for r in readings]
    (c, a, b), _ = optimize.curve_fit(model, hours, ys, p0=(0.1, 0.01, 0.01), maxfev=20_000)
    assert math.isclose(fit.c, c, abs_tol=2e-3)
    assert math.isclose(fit.a, a, rel_tol=0.02)
    assert math.isclose(fit.b, b, rel_tol=0.01)


def test_the_prediction_bound_is_conservative_on_noisy_readings() -> None:
    rng = random.Random(4406)
    hours = [float(h) for h in range(0, 251, 25)]
    readings = _baseline_readings(hours, [rng.gauss(0.0, 0.004) for _ in hours])
    fit = dp_fit(readings=readings, limit_bar=1.0, h0=CHANGED_HOURS)
    assert fit is not None and fit.bounded and fit.crossing_hours is not None
    central = math.log((1.0 - fit.c) / fit.a) / fit.b
    bound = fit.crossing_hours - CHANGED_HOURS
    assert bound < central  # the upper bound of dP reaches the limit first
    assert bound < TRUE_CROSSING_H + 5  # never much later than the truth
    assert bound > 250  # and not before the last reading


@pytest.mark.parametrize("dof", [1, 2, 5, 10, 30])
def test_t_quantiles_match_scipy(dof: int) -> None:
    stats = pytest.importorskip("scipy.stats")
    assert math.isclose(t95_one_sided(dof), stats.t.ppf(0.95, dof), abs_tol=5e-4)


@pytest.mark.parametrize(
    ("field", "value"),
    [("dp_bar", float("nan")), ("dp_bar", -0.1), ("hours", float("inf")), ("flow_l_per_h", -1.0)],
)
def test_dp_reading_refuses_bad_numbers_by_name(field: str, value: float) -> None:
    fields = {"at": CHANGED_AT, "hours": 10.0, "dp_bar": 0.2, field: value}
    with pytest.raises(ValueError, match=field):
        DpReading(**fields)  # type: ignore[arg-type]


def test_conditions_at_the_reading_are_kept() -> None:
    r = DpReading(CHANGED_AT, 10.0, 0.3, flow_l_per_h=120.0, load_pct=80.0, fuel_temperature_c=-5)
    assert (r.flow_l_per_h, r.load_pct, r.fuel_temperature_c) == (120.0, 80.0, -5)


def test_a_straight_rise_uses_the_textbook_prediction_bound() -> None:
    # dP rising linearly with noise: the exponential does not earn its extra parameter, and
    # the crossing is where the classical one-sided 95 % prediction bound of a straight-line
    # regression meets the limit: y + t(0.95, n-2) s sqrt(1 + 1/n + (x - mean)^2 / Sxx)
    # (computed here with scipy.stats.linregress, scipy.stats.t and scipy.optimize.brentq).
    stats = pytest.importorskip("scipy.stats")
    optimize = pytest.importorskip("scipy.optimize")
    rng = random.Random(11171)
    hours = [float(h) for h in range(0, 251, 25)]
    ys = [0.2 + 0.001 * h + rng.gauss(0.0, 0.01) for h in hours]
    readings = [
        DpReading(CHANGED_AT + timedelta(hours=h), CHANGED_HOURS + h, y)
        for h, y in zip(hours, ys, strict=True)
    ]
    fit = dp_fit(readings=readings, limit_bar=1.0, h0=CHANGED_HOURS)
    assert fit is not None and fit.linear and fit.bounded and fit.crossing_hours is not None
    line = stats.linregress(hours, ys)
    n = len(hours)
    mean = sum(hours) / n
    sxx = sum((h - mean) ** 2 for h in hours)
    s = math.sqrt(
        sum((y - line.intercept - line.slope * h) ** 2 for h, y in zip(hours, ys, strict=True))
        / (n - 2)
    )
    t = stats.t.ppf(0.95, n - 2)

    def gap(x: float) -> float:
        spread = s * math.sqrt(1 + 1 / n + (x - mean) ** 2 / sxx)
        return line.intercept + line.slope * x + t * spread - 1.0

    expected = optimize.brentq(gap, 250.0, 5_000.0)
    # within 0.1 h: the t table is printed to three decimals
    assert math.isclose(fit.crossing_hours - CHANGED_HOURS, expected, abs_tol=0.1)
    assert math.isclose(fit.a, line.slope, rel_tol=1e-9)


def test_noise_on_a_flat_curve_is_not_read_as_a_steep_rise() -> None:
    # A clean element reading 0.30 bar +- 0.01 bar: no projection toward a 1.0 bar limit
    # within the next thousand hours (a free exponential would fit the last point's noise).
    rng = random.Random(16332)
    readings = [
        DpReading(CHANGED_AT + timedelta(hours=h), CHANGED_HOURS + h, 0.30 + rng.gauss(0, 0.01))
        for h in range(0, 251, 25)
    ]
    fit = dp_fit(readings=readings, limit_bar=1.0, h0=CHANGED_HOURS)
    assert fit is not None and fit.linear
    assert fit.crossing_hours is None or fit.crossing_hours - CHANGED_HOURS > 1_250


@pytest.mark.parametrize("dof", [1, 3, 8, 20])
def test_the_f_test_quantile_is_t_squared(dof: int) -> None:
    # F(1, v) at 90 % equals t(0.95, v)^2 (scipy.stats.f against our t table).
    stats = pytest.importorskip("scipy.stats")
    assert math.isclose(t95_one_sided(dof) ** 2, stats.f.ppf(0.90, 1, dof), rel_tol=2e-3)
