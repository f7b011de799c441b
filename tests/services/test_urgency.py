"""What to do first: urgency tiers, an exhausted estimate's overrun, and the timing words."""

from __future__ import annotations

from datetime import date

import pytest
from hypothesis import given
from hypothesis import strategies as st

from services.common import Basis, DueStatus
from services.display import NBSP
from services.urgency import (
    Tier,
    estimate_overrun_hours,
    lateness,
    timing_words,
    urgency_tier,
)


def test_a_water_in_fuel_alarm_comes_before_everything() -> None:
    # Free water reaching a common-rail pump and injectors damages them (common practice):
    # the drain an alarm makes due ranks above an overdue filter of the plan.
    alarm = urgency_tier(status=DueStatus.DUE, basis=Basis.WATER_EVENT, unit_stood_down=False)
    overdue = urgency_tier(status=DueStatus.OVERDUE, basis=Basis.PLAN_HOURS, unit_stood_down=False)
    assert alarm < overdue and alarm is Tier.WATER_ALARM


def test_a_measured_limit_passed_comes_before_a_plan_interval_passed() -> None:
    # A filter at its dP limit is restricting flow now (common practice: changed on dP).
    measured = urgency_tier(
        status=DueStatus.OVERDUE, basis=Basis.DIFFERENTIAL_PRESSURE, unit_stood_down=False
    )
    plan = urgency_tier(status=DueStatus.OVERDUE, basis=Basis.PLAN_DAYS, unit_stood_down=False)
    assert measured < plan


def test_a_unit_stood_down_brings_its_near_items_forward_but_not_its_far_ones() -> None:
    # A high-pressure flag's checks start with the supply side: these filters (common
    # practice); an item months away is not part of that check.
    near = urgency_tier(
        status=DueStatus.CHECK, basis=Basis.CONTAMINANT_BUDGET, unit_stood_down=True
    )
    far = urgency_tier(status=DueStatus.OK, basis=Basis.PLAN_HOURS, unit_stood_down=True)
    plain = urgency_tier(status=DueStatus.OVERDUE, basis=Basis.PLAN_HOURS, unit_stood_down=False)
    assert near < plain and far is Tier.OK


def test_an_alarm_with_nothing_left_to_do_is_not_raised() -> None:
    assert (
        urgency_tier(status=DueStatus.OK, basis=Basis.WATER_EVENT, unit_stood_down=False) is Tier.OK
    )


@pytest.mark.parametrize("status", list(DueStatus))
def test_without_a_reason_to_raise_it_the_tier_follows_the_status_order(
    status: DueStatus,
) -> None:
    # DueStatus is declared most urgent first; plain items keep that order among themselves.
    tiers = [
        urgency_tier(status=s, basis=Basis.PLAN_HOURS, unit_stood_down=False) for s in DueStatus
    ]
    assert tiers == sorted(tiers) and len(set(tiers)) == len(tiers)
    assert urgency_tier(status=status, basis=Basis.PLAN_DAYS, unit_stood_down=False) >= Tier.OVERDUE


def test_estimate_overrun_hand_worked() -> None:
    # Worked by hand: budget 960,000 (500 h x 24 L/h x 80 particles/mL), loading 1,200,000;
    # 240,000 over at 24 L/h x 1,000 particles/mL = 24,000 an hour: 10 engine hours past.
    assert estimate_overrun_hours(
        loading=1_200_000,
        budget=960_000,
        burn_l_per_h=24.0,
        concentration_per_ml=1_000.0,
        hours_since_change=150.0,
    ) == pytest.approx(10.0)


def test_estimate_overrun_never_exceeds_the_hours_since_the_change() -> None:
    # 100 h of overrun by the arithmetic, but the filter has only run 6 h since it was fitted.
    assert (
        estimate_overrun_hours(
            loading=3_360_000,
            budget=960_000,
            burn_l_per_h=24.0,
            concentration_per_ml=1_000.0,
            hours_since_change=6.0,
        )
        == 6.0
    )


@given(
    loading=st.floats(0, 1e9),
    budget=st.floats(1, 1e9),
    burn=st.floats(0, 200),
    conc=st.floats(0, 1e5),
    since=st.floats(0, 1e5),
)
def test_estimate_overrun_is_never_negative(
    loading: float, budget: float, burn: float, conc: float, since: float
) -> None:
    hours = estimate_overrun_hours(
        loading=loading,
        budget=budget,
        burn_l_per_h=burn,
        concentration_per_ml=conc,
        hours_since_change=since,
    )
    assert 0.0 <= hours <= since
    if loading <= budget:
        assert hours == 0.0


def test_lateness_of_an_estimate_counts_days_at_the_usage_rate() -> None:
    # Worked by hand: 38 h past at 6.5 h/day is 5.8 days: whole days, 5, back from 2 Dec.
    late = lateness(
        due_on=date(2026, 12, 2),
        hours_left=0.0,
        overrun_hours=38.0,
        rate=6.5,
        today=date(2026, 12, 2),
    )
    assert late.hours == 38.0 and late.since == date(2026, 11, 27)


def test_lateness_of_a_due_point_is_its_date_and_hours_left() -> None:
    late = lateness(
        due_on=date(2026, 11, 29), hours_left=-30.0, overrun_hours=0.0, rate=10.0,
        today=date(2026, 12, 2),
    )  # fmt: skip
    assert late.hours == 30.0 and late.since == date(2026, 11, 29)


@pytest.mark.parametrize(
    "days,hours,estimate,words",
    [
        (3, 30.0, False, "overdue by 3 d · 30 h"),
        (0, 2.4, False, "overdue by 0 d · 2 h"),
        (3, -5.0, False, "overdue by 3 d · 0 h"),  # a calendar limit passed, an idle unit
        (5, 38.0, True, "est. overdue by 5 d · 38 h"),
        (-4, -41.6, False, "due in 4 d · 42 h"),
        (0, 0.0, False, "due now"),  # nothing left of either: not "due in 0 d · 0 h"
        (0, -3.0, False, "due in 0 d · 3 h"),
        (-400, -4_000.0, False, "due in 400 d · 4,000 h"),
    ],
)
def test_timing_words(days: int, hours: float, estimate: bool, words: str) -> None:
    # A no-break space keeps each number with its unit (services.display's convention).
    said = timing_words(days_late=days, hours_late=hours, estimate=estimate)
    assert said.replace(NBSP, " ") == words


def test_timing_words_in_a_depots_style() -> None:
    # de-DE groups thousands with a dot (services.display.STYLES).
    said = timing_words(days_late=-400, hours_late=-4_000.0, style="de-DE")
    assert said.replace(NBSP, " ") == "due in 400 d · 4.000 h"
