"""Plausibility of entered readings and fuelings.

Sources: a day has 24 hours (ISO 8601-1:2019, 3.1.2.21, the calendar day), so an engine's hour
meter gains at most 24 h a day; an hour meter only counts up (common practice) unless it is
replaced; a tank's stated capacity is nominal and a fill may exceed it slightly (common
practice). Elapsed times are computed independently with the standard library's
``datetime`` arithmetic.
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from hypothesis import given
from hypothesis import strategies as st

from services.plausibility import Neighbour, fueling_refusal, reading_refusal, time_refusal

NOW = datetime(2026, 11, 21, 12, 0, tzinfo=UTC)
DAY = timedelta(days=1)


def refusal(
    hours: float,
    at: datetime = NOW,
    before: Neighbour | None = None,
    after: Neighbour | None = None,
    replaced_before: bool = False,
    replaced_after: bool = False,
) -> str | None:
    return reading_refusal(
        at=at,
        hours=hours,
        before=before,
        after=after,
        replaced_before=replaced_before,
        replaced_after=replaced_after,
        now=NOW,
    )


def test_a_reading_between_its_neighbours_is_plausible() -> None:
    before = Neighbour(at=NOW - 10 * DAY, hours=10_974.0)
    after = Neighbour(at=NOW - 2 * DAY, hours=11_025.0)
    assert refusal(11_000.0, at=NOW - 5 * DAY, before=before, after=after) is None


def test_a_reading_above_the_next_one_is_refused_with_its_value() -> None:
    # The case reported in issue 11: 11,100 h dated between 10,974 h and 11,025 h.
    before = Neighbour(at=NOW - 10 * DAY, hours=10_974.0)
    after = Neighbour(at=NOW - 2 * DAY, hours=11_025.0)
    # It gains 126 h on the previous reading in 120 h, so that rule speaks first.
    reason = refusal(11_100.0, at=NOW - 5 * DAY, before=before, after=after)
    assert reason is not None and "10,974.0 h" in reason and "120.0 h elapsed" in reason
    # With the previous reading a month back, it is refused for passing the next one.
    month_back = Neighbour(at=NOW - 30 * DAY, hours=10_974.0)
    reason = refusal(11_100.0, at=NOW - 5 * DAY, before=month_back, after=after)
    assert reason is not None
    assert "higher than the next reading" in reason and "11,025.0 h" in reason


def test_a_reading_months_in_the_future_is_refused() -> None:
    reason = refusal(13_000.0, at=NOW + timedelta(days=7 * 30))
    assert reason is not None and "future" in reason


def test_the_clock_allowance_accepts_a_slightly_fast_watch() -> None:
    assert refusal(100.0, at=NOW + timedelta(minutes=9)) is None
    assert refusal(100.0, at=NOW + timedelta(minutes=11)) is not None


def test_a_lower_reading_needs_a_meter_replacement() -> None:
    before = Neighbour(at=NOW - DAY, hours=1_990.0)
    reason = refusal(1_980.0, before=before)
    assert reason is not None and "lower than the previous reading" in reason
    assert "1,990.0 h" in reason and "meter replacement" in reason
    assert refusal(12.0, before=before, replaced_before=True) is None


def test_a_replacement_after_lets_the_next_reading_be_lower() -> None:
    after = Neighbour(at=NOW, hours=5.0)
    assert refusal(2_000.0, at=NOW - DAY, after=after) is not None
    assert refusal(2_000.0, at=NOW - DAY, after=after, replaced_after=True) is None


def test_no_more_hours_than_the_day_holds() -> None:
    before = Neighbour(at=NOW - DAY, hours=1_000.0)
    # One calendar day holds 24 h (ISO 8601-1:2019, 3.1.2.21).
    assert refusal(1_024.0, before=before) is None
    reason = refusal(1_030.0, before=before)
    assert reason is not None and "24.0 h elapsed" in reason and "1,000.0 h" in reason


def test_no_more_hours_than_elapsed_before_the_next_reading() -> None:
    after = Neighbour(at=NOW, hours=1_100.0)
    reason = refusal(1_000.0, at=NOW - 2 * DAY, after=after)
    assert reason is not None and "next reading" in reason and "48.0 h elapsed" in reason


def test_amounts_must_be_finite_and_not_negative() -> None:
    assert refusal(float("nan")) is not None
    assert refusal(float("inf")) is not None
    assert refusal(-1.0) is not None
    assert refusal(0.0) is None


@given(
    gap_h=st.floats(min_value=0.5, max_value=24 * 400, allow_nan=False),
    gained=st.floats(min_value=0, max_value=24 * 500, allow_nan=False),
)
def test_refused_exactly_when_more_hours_than_elapsed(gap_h: float, gained: float) -> None:
    at = NOW - timedelta(days=500)
    before = Neighbour(at=at, hours=500.0)
    later = at + timedelta(hours=gap_h)
    elapsed = (later - at) / timedelta(hours=1)  # datetime's own arithmetic
    reason = refusal(500.0 + gained, at=later, before=before)
    if gained > elapsed + 0.1 + 1e-9:
        assert reason is not None
    elif gained < elapsed:
        assert reason is None


def test_a_fueling_fits_its_tank_with_a_margin() -> None:
    assert fueling_refusal(litres=400.0, tank_l=400.0) is None
    assert fueling_refusal(litres=440.0, tank_l=400.0) is None
    reason = fueling_refusal(litres=441.0, tank_l=400.0)
    assert reason is not None and "400 L" in reason
    assert fueling_refusal(litres=9_000.0, tank_l=None) is None


def test_a_fueling_is_a_finite_positive_amount() -> None:
    for bad in (0.0, -5.0, float("nan"), float("inf")):
        assert fueling_refusal(litres=bad, tank_l=400.0) is not None


def test_any_dated_entry_may_not_lie_in_the_future() -> None:
    assert time_refusal(at=NOW + timedelta(minutes=5), now=NOW, what="fueling") is None
    reason = time_refusal(at=NOW + DAY, now=NOW, what="fueling")
    assert reason is not None and reason.startswith("The fueling is dated")
