"""Filter change projection: contaminant budget, plan limits, dP curve, status.

Concentrations are particles per mL in the >=4 um(c) channel. Reference fuel is
ISO 4406 18/16/13 (World-Wide Fuel Charter, 6th ed. 2019); its
>=4 um code 18 covers more than 1,300 up to 2,500 per mL, code 20 more than 5,000
up to 10,000 per mL (ISO 4406:1999 Table 1). Using each range's
upper limit, fuel two codes dirtier carries 10,000 / 2,500 = 4x the particles.
The budget model is the mass balance of filter life: hours = capacity /
(fuel flow x concentration x capture efficiency) (a mass balance, as filter makers'
service-life guides state it; common practice).
"""

from __future__ import annotations

import math
from datetime import UTC, date, datetime, timedelta

import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from services.common import Basis, DueDate, DueStatus, Projection, TaskKind, UsageForecast
from services.filter_inputs import FilterPlan, Loading
from services.intervals import filter_projection, last_change

CODE_18_UPPER = 2_500.0  # ISO 4406:1999 Table 1: code 18 is >1,300 and <=2,500 per mL
CODE_20_UPPER = 10_000.0  # ISO 4406:1999 Table 1: code 20 is >5,000 and <=10,000 per mL
CODE_17_UPPER = 1_300.0  # ISO 4406:1999 Table 1: code 17 is >640 and <=1,300 per mL

CHANGED_AT = datetime(2026, 1, 1, 8, 0)
CHANGED_HOURS = 10_000.0
NOW = datetime(2026, 1, 11, 8, 0)  # 10 days later at 10 h/day: 10,100 h


def make_plan(**over: object) -> FilterPlan:
    values: dict[str, object] = {
        "interval_hours": 500.0,
        "interval_days": 365,
        "interval_litres": None,
        "reference_concentration_per_ml": CODE_18_UPPER,
        "reference_burn_l_per_h": 30.0,
        "dp_limit_bar": None,
        "soon_days": 14,
        "due_days": 2,
    }
    values.update(over)
    return FilterPlan(**values)  # type: ignore[arg-type]


def make_forecast(
    hours: float = 10_100.0, rate: float = 10.0, low: float = 8.0, high: float = 12.0
) -> UsageForecast:
    return UsageForecast(
        as_of=NOW,
        current_hours=hours,
        rate=rate,
        rate_low=low,
        rate_high=high,
        basis="readings",
        note="10.0 h/day from 12 readings over 30 days",
    )


def reference_loading(litres: float = 3_000.0, conc: float = CODE_18_UPPER) -> Loading:
    return Loading(
        at=CHANGED_AT + timedelta(days=5),
        litres=litres,
        concentration_per_ml=conc,
        reference_assumed=False,
        label=f"{litres:.0f} L from Bulk tank A, sample S-0001",
    )


def project(**over: object) -> Projection:
    args: dict[str, object] = {
        "task": TaskKind.FINE_FILTER,
        "plan": make_plan(),
        "last_change_at": CHANGED_AT,
        "last_change_hours": CHANGED_HOURS,
        "loadings": [reference_loading()],
        "current_concentration_per_ml": CODE_18_UPPER,
        "current_reference_assumed": False,
        "burn_l_per_h": 30.0,
        "dp_readings": [],
        "forecast": make_forecast(),
        "now": NOW,
    }
    args.update(over)
    return filter_projection(**args)  # type: ignore[arg-type]


# ----------------------------------------------------------------- the budget


def test_dirty_fuel_hand_worked_example() -> None:
    # Plan 500 h at 30 L/h on 18/16/13 -> budget B = 500 x 30 x 2,500 = 37,500,000.
    # 100 h of reference fuel: 3,000 L x 2,500 = 7,500,000 used (20 %).
    # Fuel now 20/18/15-class: 10,000 per mL = 4x (ISO 4406:1999 Table 1, two codes).
    # Remaining 30,000,000 / (30 L/h x 10,000) = 100 h -> due at 10,000 + 200 = 10,200 h
    # (not 10,500). At 10 h/day from 10,100 h: 10 days -> 2026-01-21.
    p = project(current_concentration_per_ml=CODE_20_UPPER)
    assert p.basis is Basis.CONTAMINANT_BUDGET
    assert math.isclose(p.due.hours or 0, 10_200.0)
    assert p.due.on == date(2026, 1, 21)
    assert (p.due.earliest, p.due.latest) == (date(2026, 1, 19), date(2026, 1, 23))
    assert p.status is DueStatus.SOON  # 10 days: within 14, not within 2
    assert math.isclose(float(p.inputs["percent_used"]), 20.0)  # type: ignore[arg-type]
    assert math.isclose(float(p.inputs["budget"]), 37_500_000.0)  # type: ignore[arg-type]
    assert p.explanation[0].startswith("Due at 10,200 h by contaminant loading")
    assert "500 h interval" in p.explanation[0]
    assert any("20 % of the filter's contaminant budget" in s for s in p.explanation)
    assert any("4.0x the reference" in s for s in p.explanation)


def test_dirty_past_loading_named_and_counted() -> None:
    # 3,000 L at 4x the reference used 4 x 7,500,000 = 30,000,000 (80 % of B).
    # Remaining 7,500,000 / (30 x 2,500) = 100 h -> 10,200 h.
    dirty = reference_loading(conc=CODE_20_UPPER)
    p = project(loadings=[dirty])
    assert math.isclose(p.due.hours or 0, 10_200.0)
    assert any(dirty.label in s and "Dirtiest" in s for s in p.explanation)
    assert dirty.label in p.inputs["sample_labels"]  # type: ignore[operator]


def test_a_trace_of_dirty_fuel_counts_but_is_not_named() -> None:
    # 0.3 L burned shows as "0 L": it adds to the loading (0.3 x 10,000 = 3,000) but is not
    # named as the dirtiest fuel burned; the 3,000 L of reference fuel is all there is to say.
    trace = reference_loading(litres=0.3, conc=CODE_20_UPPER)
    p = project(loadings=[reference_loading(), trace])
    assert math.isclose(float(p.inputs["loading"]), 7_500_000.0 + 3_000.0)  # type: ignore[arg-type]
    assert not any("Dirtiest" in s for s in p.explanation)
    assert trace.label not in p.inputs["sample_labels"]  # type: ignore[operator]


def test_clean_fuel_never_extends_the_plan() -> None:
    # Fuel at code 17 (1,300 per mL, about half the reference) would last
    # 30,000,000 / (30 x 1,300) = 769 h more: the plan's 10,500 h still governs.
    p = project(current_concentration_per_ml=CODE_17_UPPER)
    assert p.basis is Basis.PLAN_HOURS
    assert p.due.hours == 10_500.0
    assert "does not bring it forward" in p.explanation[0]


def test_reference_fuel_ties_go_to_the_plan() -> None:
    # Reference fuel all along: budget runs out exactly at 10,500 h, same as the plan.
    p = project()
    assert p.basis is Basis.PLAN_HOURS
    assert math.isclose(p.due.hours or 0, 10_500.0)


def test_calendar_governs_with_band_collapsed() -> None:
    # 30 days from 2026-01-01 = 2026-01-31; 10,500 h at 10 h/day is 2026-02-20.
    p = project(plan=make_plan(interval_days=30))
    assert p.basis is Basis.PLAN_DAYS
    assert p.due == DueDate(
        hours=None, on=date(2026, 1, 31), earliest=date(2026, 1, 31), latest=date(2026, 1, 31)
    )
    assert "30-day calendar interval" in p.explanation[0]


def test_band_never_runs_past_the_calendar() -> None:
    # Due at 10,200 h: latest at 8 h/day is 2026-01-23, but the calendar ends 2026-01-22.
    p = project(plan=make_plan(interval_days=21), current_concentration_per_ml=CODE_20_UPPER)
    assert p.basis is Basis.CONTAMINANT_BUDGET
    assert p.due.on == date(2026, 1, 21)
    assert p.due.latest == date(2026, 1, 22)


def test_idle_unit_falls_to_the_calendar() -> None:
    p = project(
        forecast=make_forecast(rate=0.0, low=0.0, high=0.0),
        current_concentration_per_ml=CODE_20_UPPER,
    )
    assert p.basis is Basis.PLAN_DAYS
    assert p.due.on == date(2027, 1, 1)  # 365 days after 2026-01-01


def test_fuel_volume_limit() -> None:
    # Plan 6,000 L: 3,000 L burned, 3,000 L left at 30 L/h = 100 h -> 10,200 h.
    p = project(plan=make_plan(interval_litres=6_000.0))
    assert p.basis is Basis.FUEL_VOLUME
    assert math.isclose(p.due.hours or 0, 10_200.0)


def test_no_fuel_data_assumes_reference_and_says_so() -> None:
    # No loadings: the 100 h run is taken as 3,000 L of reference fuel, so with 4x
    # fuel now the result matches the hand-worked case: 10,200 h.
    p = project(loadings=[], current_concentration_per_ml=CODE_20_UPPER)
    assert math.isclose(p.due.hours or 0, 10_200.0)
    assert any("reference cleanliness was assumed" in s for s in p.explanation)
    assert p.inputs["reference_assumed"] is True


def test_assumed_current_fuel_is_said() -> None:
    p = project(current_reference_assumed=True)
    assert any("assumed for the fuel now in use" in s for s in p.explanation)
    assert not any("assumed" in s for s in project().explanation)


def test_missing_burn_rate_uses_plan_reference_and_says_so() -> None:
    p = project(burn_l_per_h=None)
    assert p.inputs["burn_l_per_h"] == 30.0
    assert p.inputs["burn_source"] == "plan_reference"
    assert any("plan's reference" in s and "Burn rate" in s for s in p.explanation)


def test_higher_burn_brings_due_forward() -> None:
    # 60 L/h on 4x fuel: 30,000,000 / (60 x 10,000) = 50 h -> 10,150 h.
    p = project(burn_l_per_h=60.0, current_concentration_per_ml=CODE_20_UPPER)
    assert math.isclose(p.due.hours or 0, 10_150.0)


def test_budget_spent_is_overdue() -> None:
    # 15,000 L at 4x = 150,000,000 > B: nothing left, due at the current 10,100 h.
    p = project(loadings=[reference_loading(litres=15_000.0, conc=CODE_20_UPPER)])
    # Only the estimate has run out (10,100 h is before the plan's 10,500 h): "check", not
    # overdue (common practice: change a filter on its dP or restriction indicator).
    assert p.status is DueStatus.CHECK
    assert p.explanation[0].startswith("Check before changing")
    assert p.inputs["remaining_budget"] == 0.0


def test_priority_raised_moves_one_step_and_is_said() -> None:
    base = project(current_concentration_per_ml=CODE_20_UPPER)
    raised = project(current_concentration_per_ml=CODE_20_UPPER, priority_raised=True)
    assert (base.status, raised.status) == (DueStatus.SOON, DueStatus.DUE)
    assert any("Raised one step" in s for s in raised.explanation)
    assert project().status is DueStatus.OK
    assert project(priority_raised=True).status is DueStatus.SOON


def test_usage_note_is_in_the_explanation() -> None:
    assert any("10.0 h/day from 12 readings" in s for s in project().explanation)


def test_inputs_are_json_safe() -> None:
    import json

    p = project(current_concentration_per_ml=0.0)  # budget never reached: no inf in inputs
    json.dumps(p.inputs, allow_nan=False)
    assert p.inputs["limits"]["contaminant_budget"] is None  # type: ignore[index]


def test_plan_without_reference_fuel_is_refused() -> None:
    with pytest.raises(ValueError, match="positive"):
        project(plan=make_plan(reference_concentration_per_ml=0.0))


# ----------------------------------------------------------------- properties

concs = st.floats(min_value=100.0, max_value=100_000.0)
burns = st.floats(min_value=1.0, max_value=200.0)
used = st.floats(min_value=0.0, max_value=1_000.0)


def _scenario(
    *,
    used_h: float,
    burn: float,
    current: float,
    past: float,
    litres_factor: float,
    days: int,
    plan_litres: float | None,
    rate: float,
) -> Projection:
    forecast = make_forecast(
        hours=CHANGED_HOURS + used_h, rate=rate, low=rate * 0.8, high=rate * 1.2
    )
    loading = Loading(
        CHANGED_AT + timedelta(days=1), used_h * burn * litres_factor, past, False, "L"
    )
    return project(
        plan=make_plan(interval_days=days, interval_litres=plan_litres),
        loadings=[loading] if used_h > 0 else [],
        current_concentration_per_ml=current,
        burn_l_per_h=burn,
        forecast=forecast,
    )


def _not_later(a: Projection, b: Projection) -> bool:
    """a is due no later than b."""
    if a.due.on > b.due.on:
        return False
    return a.due.hours is None or b.due.hours is None or a.due.hours <= b.due.hours + 1e-6


scenario_args = {
    "used_h": used,
    "burn": burns,
    "litres_factor": st.floats(min_value=0.5, max_value=1.5),
    "days": st.integers(min_value=1, max_value=1_000),
    "plan_litres": st.none() | st.floats(min_value=1_000.0, max_value=50_000.0),
    "rate": st.floats(min_value=0.5, max_value=24.0),
}


@settings(max_examples=200, deadline=None)
@given(current=concs, past=concs, f1=st.floats(1.0, 10.0), f2=st.floats(1.0, 10.0), **scenario_args)
def test_dirtier_fuel_is_never_due_later(
    current: float, past: float, f1: float, f2: float, **kw: object
) -> None:
    clean = _scenario(current=current, past=past, **kw)  # type: ignore[arg-type]
    dirty = _scenario(current=current * f1, past=past * f2, **kw)  # type: ignore[arg-type]
    assert _not_later(dirty, clean)


@settings(max_examples=200, deadline=None)
@given(
    current=concs,
    past=concs,
    extra=st.floats(1.0, 5.0),
    used_h=used,
    days=st.integers(1, 1_000),
    rate=st.floats(0.5, 24.0),
    plan_litres=st.none() | st.floats(1_000.0, 50_000.0),
    burn=burns,
)
def test_more_burn_is_never_due_later(
    current: float,
    past: float,
    extra: float,
    used_h: float,
    days: int,
    rate: float,
    plan_litres: float | None,
    burn: float,
) -> None:
    # The same fuel history (litres fixed); only the burn rate from now on differs.
    def run(b: float) -> Projection:
        forecast = make_forecast(
            hours=CHANGED_HOURS + used_h, rate=rate, low=rate * 0.8, high=rate * 1.2
        )
        return project(
            plan=make_plan(interval_days=days, interval_litres=plan_litres),
            loadings=[Loading(CHANGED_AT, used_h * 30.0, past, False, "L")],
            current_concentration_per_ml=current,
            burn_l_per_h=b,
            forecast=forecast,
        )

    assert _not_later(run(burn * extra), run(burn))


@settings(max_examples=300, deadline=None)
@given(current=concs, past=concs, **scenario_args)
def test_never_later_than_the_plan(current: float, past: float, **kw: object) -> None:
    p = _scenario(current=current, past=past, **kw)  # type: ignore[arg-type]
    calendar = CHANGED_AT.date() + timedelta(days=int(kw["days"]))  # type: ignore[call-overload]
    assert p.due.on <= calendar
    assert p.due.latest <= calendar
    assert p.due.earliest <= p.due.on <= p.due.latest
    if p.due.hours is not None:
        assert p.due.hours <= CHANGED_HOURS + 500.0


def test_exhausted_budget_says_so_in_words() -> None:
    # Plan budget: 500 h x 30 L/h = 15,000 reference-litres. 4,000 L at 4x the reference
    # (two ISO 4406 steps, Table 1) = 16,000 -> 107 % used: the filter is due now.
    p = project(
        loadings=[reference_loading(litres=4_000.0, conc=4 * CODE_18_UPPER)],
        current_concentration_per_ml=4 * CODE_18_UPPER,
    )
    assert p.basis is Basis.CONTAMINANT_BUDGET
    # An estimate says it is one (issue: the explanation must not claim what nobody measured).
    assert "used 107 % of its estimated budget" in p.explanation[1]
    assert "not a measurement" in p.explanation[1]
    assert p.status is DueStatus.CHECK


# ----------------------------------------------------------------- where a filter's life starts


def test_life_counts_from_the_last_recorded_change() -> None:
    at, meter = last_change(
        changed_at=CHANGED_AT,
        changed_meter=CHANGED_HOURS,
        fitted_on=date(2025, 6, 1),
        fitted_meter=4_000.0,
        tz=UTC,
    )
    assert (at, meter) == (CHANGED_AT, CHANGED_HOURS)


def test_no_change_on_record_counts_from_the_fitting() -> None:
    # common practice: a filter fitted with the unit and never changed has run since it was
    # fitted; the start of that day is the earliest it can have been, so the most hours.
    at, meter = last_change(
        changed_at=None,
        changed_meter=None,
        fitted_on=date(2025, 6, 1),
        fitted_meter=4_000.0,
        tz=UTC,
    )
    assert (at, meter) == (datetime(2025, 6, 1, 0, 0, tzinfo=UTC), 4_000.0)


def test_a_change_without_a_meter_reading_keeps_the_fitted_hours() -> None:
    at, meter = last_change(
        changed_at=CHANGED_AT,
        changed_meter=None,
        fitted_on=date(2025, 6, 1),
        fitted_meter=4_000.0,
        tz=UTC,
    )
    assert (at, meter) == (CHANGED_AT, 4_000.0)


# ----------------------------------------------------------------- validation at the door


@pytest.mark.parametrize(
    ("over", "field"),
    [
        # A NaN concentration compares false with everything: it must not switch the budget off.
        ({"current_concentration_per_ml": math.nan}, "current_concentration_per_ml"),
        ({"current_concentration_per_ml": math.inf}, "current_concentration_per_ml"),
        ({"burn_l_per_h": -5.0}, "burn_l_per_h"),
        ({"last_change_hours": math.nan}, "last_change_hours"),
    ],
)
def test_bad_numbers_are_refused_by_name(over: dict[str, object], field: str) -> None:
    with pytest.raises(ValueError, match=field):
        project(**over)


@pytest.mark.parametrize(
    "field",
    ["interval_hours", "reference_concentration_per_ml", "reference_burn_l_per_h", "dp_limit_bar"],
)
def test_a_plan_with_nan_is_refused_not_unlimited(field: str) -> None:
    with pytest.raises(ValueError, match=f"plan {field}"):
        make_plan(**{field: math.nan})


def test_a_loading_with_nan_or_a_dirty_date_in_the_future_is_refused() -> None:
    with pytest.raises(ValueError, match="concentration_per_ml"):
        reference_loading(conc=math.nan)
    with pytest.raises(ValueError, match="litres"):
        reference_loading(litres=math.inf)
    late = Loading(
        at=NOW + timedelta(hours=1),
        litres=100.0,
        concentration_per_ml=CODE_18_UPPER,
        reference_assumed=False,
        label="100 L tomorrow",
    )
    with pytest.raises(ValueError, match="loading 100 L tomorrow: dated .* after now"):
        project(loadings=[reference_loading(), late])
