"""Separator drain projection: water from fuel, rate blend, drain level, events."""

from __future__ import annotations

import math
from datetime import date, datetime, timedelta

import pint
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from services.common import Basis, DueStatus, Projection, UsageForecast
from services.water import (
    DrainPlan,
    DrainRecord,
    WaterIntake,
    blended_rate,
    drain_projection,
    observed_rates,
    water_ml_from_fuel,
)

UREG = pint.UnitRegistry()

DRAINED_AT = datetime(2026, 3, 1, 8, 0)
NOW = datetime(2026, 3, 3, 8, 0)
LAST = DrainRecord(at=DRAINED_AT, hours=5_000.0, water_ml=40.0)
DENSITY = 0.835  # kg/L, inside EN 590's 820-845 kg/m3 at 15 C


def make_plan(**over: object) -> DrainPlan:
    values: dict[str, object] = {
        "bowl_capacity_ml": 250.0,
        # ISO 16332:2018 drains the water collector at 80 % full (in its test method).
        "drain_level_fraction": 0.8,
        "drain_interval_days": 30,
        "drain_interval_hours": None,
        "separator_efficiency": 0.9,
        "soon_days": 7,
        "due_days": 1,
    }
    values.update(over)
    return DrainPlan(**values)  # type: ignore[arg-type]


def forecast(hours: float = 5_020.0, rate: float = 10.0) -> UsageForecast:
    return UsageForecast(
        as_of=NOW,
        current_hours=hours,
        rate=rate,
        rate_low=rate * 0.8,
        rate_high=rate * 1.2,
        basis="readings",
        note="10.0 h/day from 9 readings over 30 days",
    )


def intake(
    litres: float = 400.0, water: float = 100.0, label: str = "400 L, Tank 2"
) -> WaterIntake:
    return WaterIntake(
        at=DRAINED_AT + timedelta(days=1),
        litres=litres,
        free_water_mg_kg=water,
        density_kg_l=DENSITY,
        label=label,
    )


def project(**over: object) -> Projection:
    args: dict[str, object] = {
        "plan": make_plan(),
        "last_drain": LAST,
        "history": [],
        "intakes": [intake()],
        "burn_l_per_h": 20.0,
        "current_free_water_mg_kg": 100.0,
        "density_kg_l": DENSITY,
        "forecast": forecast(),
        "water_in_fuel_since_drain": False,
        "now": NOW,
    }
    args.update(over)
    return drain_projection(**args)  # type: ignore[arg-type]


# ----------------------------------------------------------------- water from fuel


def test_water_from_fuel_hand_worked() -> None:
    # 1,000 L x 0.835 kg/L = 835 kg of fuel; x 300 mg/kg = 250,500 mg = 250.5 g;
    # water at 1 g/mL -> 250.5 mL.
    assert math.isclose(
        water_ml_from_fuel(litres=1_000, free_water_mg_kg=300, density_kg_l=0.835), 250.5
    )


def test_water_from_fuel_matches_pint() -> None:
    # Independent check with a general-purpose units library (pint).
    water_mass = (
        UREG.Quantity(1_000, "L") * UREG.Quantity(0.835, "kg/L") * UREG.Quantity(300, "mg/kg")
    )
    water_volume = (water_mass / UREG.Quantity(1, "g/mL")).to("mL")
    assert math.isclose(
        water_ml_from_fuel(litres=1_000, free_water_mg_kg=300, density_kg_l=0.835),
        water_volume.magnitude,
    )


def test_water_from_fuel_matches_volume_percent_rule() -> None:
    # Hand-worked, water at 1 g/mL: % vol ~= mg/kg x density [kg/L] / 10,000; 200 mg/kg
    # at 0.820 kg/L is 0.0164 % vol, i.e. 0.164 mL of water in each litre of fuel.
    per_litre = water_ml_from_fuel(litres=1.0, free_water_mg_kg=200, density_kg_l=0.820)
    assert math.isclose(per_litre / 1_000 * 100, 0.0164)


# ----------------------------------------------------------------- rates


def test_observed_rates_between_consecutive_drains() -> None:
    # 150 mL over 100 h = 1.5 mL/h; 250 mL over 100 h = 2.5 mL/h. The oldest drain has
    # nothing before it, so its water gives no rate. Given out of order on purpose.
    records = [
        DrainRecord(DRAINED_AT, 5_000, 250),
        DrainRecord(DRAINED_AT - timedelta(days=20), 4_800, 999),
        DrainRecord(DRAINED_AT - timedelta(days=10), 4_900, 150),
    ]
    assert observed_rates(records=records) == [1.5, 2.5]


def test_blend_hand_worked() -> None:
    # Observed 1.5 then 2.5 mL/h: recency weights 0.7 and 1 -> mean (1.05 + 2.5)/1.7
    # = 2.0882. Two observations: the estimate 1.503 weighs 1/3, they weigh 2/3:
    # 1.503/3 + 2 x 2.0882/3 = 0.5010 + 1.3922 = 1.8932 mL/h.
    rate, w_est = blended_rate(estimate_ml_h=1.503, observed=[1.5, 2.5])
    assert math.isclose(w_est, 1 / 3)
    assert math.isclose(rate, 1.8932, abs_tol=1e-4)


def test_blend_with_no_observations_is_the_estimate() -> None:
    assert blended_rate(estimate_ml_h=1.2, observed=[]) == (1.2, 1.0)


def test_blend_leans_to_observations_as_they_accumulate() -> None:
    one, _ = blended_rate(estimate_ml_h=1.0, observed=[3.0])
    five, _ = blended_rate(estimate_ml_h=1.0, observed=[3.0] * 5)
    # 1/2 x 1 + 1/2 x 3 = 2.0; 1/6 x 1 + 5/6 x 3 = 2.667
    assert math.isclose(one, 2.0)
    assert math.isclose(five, 1 / 6 + 5 / 6 * 3)


# ----------------------------------------------------------------- projection


def test_drain_level_hand_worked() -> None:
    # Sample estimate: 20 L/h x 0.835 x 100 mg/kg / 1000 = 1.67 mL/h, x 0.9 = 1.503 mL/h.
    # Since the drain: 400 L x 0.835 x 100 / 1000 = 33.4 mL, x 0.9 = 30.06 mL.
    # Drain level 0.8 x 250 = 200 mL; (200 - 30.06) / 1.503 = 113.07 h -> 5,133.07 h.
    # At 10 h/day from 5,020 h: 11.31 days after 2026-03-03 08:00 -> 2026-03-14.
    p = project()
    assert p.basis is Basis.WATER_LEVEL
    assert math.isclose(p.due.hours or 0, 5_020 + (200 - 30.06) / 1.503, rel_tol=1e-9)
    assert p.due.on == date(2026, 3, 14)
    assert p.status is DueStatus.OK
    assert p.inputs["drain_level_ml"] == 200.0
    assert math.isclose(float(p.inputs["water_so_far_ml"]), 30.06)  # type: ignore[arg-type]
    assert p.explanation[0].startswith("Drain at 5,133 h, when the bowl reaches 80 %")
    assert any("10.0 h/day" in s for s in p.explanation)


def test_without_intakes_the_fuel_burned_carries_the_current_fuel_s_water() -> None:
    # 20 h since the drain x 20 L/h = 400 L burned, at the current fuel's 100 mg/kg:
    # 400 x 0.835 x 100 / 1000 x 0.9 = 30.06 mL, the same as 400 L of sampled fuel.
    p = project(intakes=[])
    assert math.isclose(float(p.inputs["water_so_far_ml"]), 30.06)  # type: ignore[arg-type]
    assert any("400 L burned over 20 h" in s and "no fuel inputs" in s for s in p.explanation)


def test_observed_drains_change_the_rate() -> None:
    # Blended 1.8932 mL/h (see test_blend_hand_worked). The water since the drain is the
    # same blend over the 20 h run since: 37.864 mL; (200 - 37.864)/1.8932 = 85.64 h.
    history = [
        DrainRecord(DRAINED_AT - timedelta(days=20), 4_800, 30),
        DrainRecord(DRAINED_AT - timedelta(days=10), 4_900, 150),
    ]
    p = project(last_drain=DrainRecord(DRAINED_AT, 5_000, 250), history=history)
    assert math.isclose(p.due.hours or 0, 5_020 + (200 - 20 * 1.8932) / 1.8932, rel_tol=1e-4)
    assert any("over 2 drain intervals count for 67 %" in s for s in p.explanation)


def test_hour_interval_governs_when_first() -> None:
    # Plan 100 h -> 5,100 h, before the water level at 5,133 h.
    p = project(plan=make_plan(drain_interval_hours=100.0))
    assert p.basis is Basis.PLAN_HOURS
    assert p.due.hours == 5_100.0


def test_calendar_governs_for_dry_fuel() -> None:
    # No free water: the bowl never fills; 30 days after 2026-03-01 is 2026-03-31.
    p = project(current_free_water_mg_kg=0.0, intakes=[intake(water=0.0)])
    assert p.basis is Basis.PLAN_DAYS
    assert p.due.on == p.due.latest == date(2026, 3, 31)
    assert p.due.hours is None


def test_bowl_over_the_level_is_overdue() -> None:
    # 400 h since the drain x 20 L/h = 8,000 L burned:
    # 8,000 L x 0.835 x 100 / 1000 x 0.9 = 601.2 mL > 200 mL.
    p = project(intakes=[intake(litres=8_000.0)], forecast=forecast(hours=5_400.0))
    assert p.status is DueStatus.OVERDUE
    assert p.basis is Basis.WATER_LEVEL


def test_fuel_delivered_but_not_burned_adds_no_water() -> None:
    # 8,000 L put in, but only 20 h x 20 L/h = 400 L burned since the drain: 30.06 mL
    # (as in test_drain_level_hand_worked), not 601.2 mL.
    p = project(intakes=[intake(litres=8_000.0)])
    assert p.status is DueStatus.OK
    assert math.isclose(float(p.inputs["water_so_far_ml"]), 30.06)  # type: ignore[arg-type]


def test_a_drain_with_no_amount_empties_the_bowl_but_adds_no_rate() -> None:
    # Drains at 4,800 h (30 mL) and 4,900 h (150 mL: 1.5 mL/h), then the last one at 5,000 h
    # with no amount written down. Counted as 0 mL it would have weighed most (newest);
    # skipped, only 1.5 mL/h is observed. The bowl still counts from 5,000 h: 20 h at the
    # blend of the estimate 1.503 and 1.5 mL/h, half each (1.5015 mL/h), is 30.03 mL.
    history = [
        DrainRecord(DRAINED_AT - timedelta(days=20), 4_800, 30),
        DrainRecord(DRAINED_AT - timedelta(days=10), 4_900, 150),
    ]
    blank = DrainRecord(DRAINED_AT, 5_000, None)
    p = project(last_drain=blank, history=history)
    assert p.inputs["observed_rates_ml_h"] == [1.5]
    assert math.isclose(float(p.inputs["water_so_far_ml"]), 30.03)  # type: ignore[arg-type]
    assert observed_rates(records=[*history, blank, DrainRecord(NOW, 5_100, 100)]) == [1.5, 1.0]


@pytest.mark.parametrize(
    ("field", "make"),
    [
        ("drain water_ml", lambda: DrainRecord(DRAINED_AT, 5_000, float("nan"))),
        ("drain hours", lambda: DrainRecord(DRAINED_AT, float("inf"), 10.0)),
        ("fueling litres", lambda: intake(litres=-5.0)),
        ("free_water_mg_kg", lambda: intake(water=float("nan"))),
        ("separator_efficiency", lambda: make_plan(separator_efficiency=1.5)),
        ("burn_l_per_h", lambda: project(burn_l_per_h=float("inf"))),
        (
            "drain performed_at",
            lambda: project(last_drain=DrainRecord(NOW + timedelta(days=1), 5_000, 1.0)),
        ),
    ],
)
def test_bad_inputs_are_refused_naming_the_field(field: str, make: object) -> None:
    with pytest.raises(ValueError, match=field):
        make()  # type: ignore[operator]


def test_water_event_makes_it_due_today() -> None:
    p = project(water_in_fuel_since_drain=True)
    assert p.basis is Basis.WATER_EVENT
    assert p.status is DueStatus.DUE
    assert p.due.on == NOW.date()
    assert "water-in-fuel alarm" in p.explanation[0]


def test_water_event_keeps_an_overdue_status() -> None:
    # Last drain 40 days ago with a 30-day plan: already overdue; the alarm keeps it so.
    old = DrainRecord(NOW - timedelta(days=40), 4_900, 10)
    p = project(last_drain=old, water_in_fuel_since_drain=True)
    assert p.status is DueStatus.OVERDUE
    assert p.basis is Basis.WATER_EVENT


def test_no_drain_on_record_is_due_now() -> None:
    p = project(last_drain=None)
    assert p.status is DueStatus.DUE
    assert p.due.on == NOW.date()
    assert "no drain" in p.explanation[0]


def test_wettest_fuel_named() -> None:
    p = project(intakes=[intake(water=50.0, label="Tank 1"), intake(water=400.0, label="Tank 9")])
    line = next(s for s in p.explanation if s.startswith("Wettest"))
    assert line.index("Tank 9") < line.index("Tank 1")


def test_wettest_fuel_named_once_per_sample() -> None:
    # Two fuelings from one delivery carry one sample: the line names it once, and the next
    # wettest fuel still gets its place among the three named (common practice: a list of
    # causes names each cause once).
    same = [intake(water=400.0, label="Tank 9"), intake(water=400.0, label="Tank 9")]
    p = project(intakes=[*same, intake(water=50.0, label="Tank 1")])
    line = next(s for s in p.explanation if s.startswith("Wettest"))
    assert line.count("Tank 9") == 1 and "Tank 1" in line


# ----------------------------------------------------------------- properties


@st.composite
def drain_histories(draw: st.DrawFn) -> list[DrainRecord]:
    n = draw(st.integers(min_value=1, max_value=6))
    gaps = draw(st.lists(st.floats(10.0, 500.0), min_size=n, max_size=n))
    water = draw(st.lists(st.floats(0.0, 300.0), min_size=n, max_size=n))
    records, hours = [], 5_000.0 - sum(gaps)
    for i in range(n):
        hours += gaps[i]
        records.append(DrainRecord(DRAINED_AT - timedelta(days=n - 1 - i), hours, water[i]))
    return records


@settings(max_examples=300, deadline=None)
@given(
    records=drain_histories(),
    which=st.integers(min_value=0, max_value=5),
    extra=st.floats(min_value=0.0, max_value=500.0),
    with_intakes=st.booleans(),
    hours_interval=st.none() | st.floats(10.0, 1_000.0),
)
@pytest.mark.parametrize("free_water", [0.0, 100.0])
def test_more_observed_water_is_never_due_later(
    records: list[DrainRecord],
    which: int,
    extra: float,
    with_intakes: bool,
    hours_interval: float | None,
    free_water: float,
) -> None:
    i = which % len(records)
    wetter = list(records)
    wetter[i] = DrainRecord(records[i].at, records[i].hours, records[i].water_ml + extra)

    def run(history: list[DrainRecord]) -> Projection:
        return project(
            plan=make_plan(drain_interval_hours=hours_interval),
            last_drain=history[-1],
            history=history[:-1],
            intakes=[intake(water=free_water)] if with_intakes else [],
            current_free_water_mg_kg=free_water,
            forecast=forecast(hours=history[-1].hours + 20),
        )

    dry, wet = run(records), run(wetter)
    assert wet.due.on <= dry.due.on
    if wet.due.hours is not None and dry.due.hours is not None:
        assert wet.due.hours <= dry.due.hours + 1e-6


@settings(max_examples=200, deadline=None)
@given(w1=st.floats(0.0, 2_000.0), w2=st.floats(0.0, 2_000.0))
def test_wetter_fuel_is_never_due_later(w1: float, w2: float) -> None:
    lo, hi = sorted((w1, w2))
    dry = project(current_free_water_mg_kg=lo, intakes=[intake(water=lo)])
    wet = project(current_free_water_mg_kg=hi, intakes=[intake(water=hi)])
    assert wet.due.on <= dry.due.on
