"""Hour-meter plausibility: an engine's hour meter only counts up (common practice), so a
reading below an earlier one needs a recorded meter replacement."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from hypothesis import given
from hypothesis import strategies as st

from services.hour_meter import meter_backwards, meter_drop, meter_entry_problems

hours = st.floats(min_value=0, max_value=100_000, allow_nan=False)


def test_a_lower_reading_goes_backwards_unless_the_meter_was_replaced() -> None:
    assert meter_backwards(hours=1_980.0, earlier_hours=1_990.0, replaced=False) is True
    assert meter_backwards(hours=1_980.0, earlier_hours=1_990.0, replaced=True) is False


def test_an_equal_reading_is_a_unit_that_stood_still() -> None:
    assert meter_backwards(hours=1_990.0, earlier_hours=1_990.0, replaced=False) is False


def test_nothing_to_compare_is_not_backwards() -> None:
    assert meter_backwards(hours=None, earlier_hours=1_990.0, replaced=False) is False
    assert meter_backwards(hours=12.0, earlier_hours=None, replaced=False) is False


@given(hours, hours)
def test_backwards_exactly_when_lower(now: float, before: float) -> None:
    assert meter_backwards(hours=now, earlier_hours=before, replaced=False) is (now < before)


def problems(**kw: object) -> list[str]:
    args: dict[str, object] = {
        "hour_meter": 2_000.0,
        "meter_replaced": False,
        "meter_old_final": None,
        "meter_new_start": None,
        "last_hours": 1_990.0,
    }
    args.update(kw)
    return meter_entry_problems(**args)  # type: ignore[arg-type]


def test_the_reading_at_the_job_is_required() -> None:
    assert problems(hour_meter=None) == ["Enter the hour meter reading at the job."]
    assert problems() == []


def test_a_replaced_meter_needs_its_starting_reading() -> None:
    assert problems(hour_meter=3.5, meter_replaced=True) == [
        "Meter replaced: enter the new meter's reading when it was fitted."
    ]
    assert problems(hour_meter=3.5, meter_replaced=True, meter_new_start=0.0) == []


def test_the_new_meter_cannot_read_below_its_start() -> None:
    (problem,) = problems(hour_meter=3.5, meter_replaced=True, meter_new_start=10.0)
    assert problem == ("The hour meter (3.5 h) is below the new meter's starting reading (10.0 h).")


def test_the_old_meters_final_reading_cannot_be_below_its_last_reading() -> None:
    (problem,) = problems(
        hour_meter=3.5, meter_replaced=True, meter_new_start=0.0, meter_old_final=1_980.0
    )
    assert problem == (
        "The old meter's final reading (1,980.0 h) is below its last recorded reading (1,990.0 h)."
    )
    assert (
        problems(hour_meter=3.5, meter_replaced=True, meter_new_start=0.0, meter_old_final=1_995.0)
        == []
    )


# --- a meter replacement nobody recorded -------------------------------------------------

T = datetime(2026, 3, 1, tzinfo=UTC)


def _points(values: list[float]) -> list[tuple[datetime, float]]:
    return [(T + timedelta(days=i), v) for i, v in enumerate(values)]


def test_a_large_lasting_drop_is_a_probable_meter_change() -> None:
    # common practice: an hour meter only counts up; a drop from 5,400 h to 10 h that the
    # next readings continue from is a new meter, not a slip.
    assert meter_drop(points=_points([5_380.0, 5_390.0, 5_400.0, 10.0, 20.0])) == 3
    # The latest drop wins when there are two.
    assert meter_drop(points=_points([9_000.0, 4_000.0, 4_010.0, 100.0, 110.0])) == 3


def test_a_slip_or_a_small_drop_is_not_a_meter_change() -> None:
    # One mistyped reading: the next is back at the old level.
    assert meter_drop(points=_points([5_390.0, 5_400.0, 540.0, 5_420.0])) is None
    # A drop of 100 h or less, or to half or more of the reading before, is not flagged here
    # (the closing rules catch readings going backwards).
    assert meter_drop(points=_points([5_400.0, 5_300.0, 5_310.0])) is None
    assert meter_drop(points=_points([150.0, 40.0, 50.0])) == 1
    assert meter_drop(points=_points([400.0, 250.0, 260.0])) is None
