"""Shared by the projections: engine hours to dates with a band, and status words."""

from __future__ import annotations

from datetime import date, timedelta

from services.common import DueDate, DueStatus
from services.schedule import due_status, forecast_dates
from tests.services.test_intervals import NOW, make_forecast

# ----------------------------------------------------------------- hours to dates


def test_forecast_dates_band_hand_worked() -> None:
    # 100 h ahead: at 10 h/day 10 days (2026-01-21 08:00); at 12 h/day 8.33 days
    # (2026-01-19 16:00); at 8 h/day 12.5 days (2026-01-23 20:00).
    assert forecast_dates(forecast=make_forecast(), target_hours=10_200.0) == (
        date(2026, 1, 21),
        date(2026, 1, 19),
        date(2026, 1, 23),
    )


def test_forecast_dates_idle_unit_never_reaches_hours() -> None:
    # Rate 0: the hour limit never arrives; the caller lets the calendar govern.
    idle = make_forecast(rate=0.0, low=0.0, high=0.0)
    assert forecast_dates(forecast=idle, target_hours=10_200.0) is None


def test_forecast_dates_capped_at_ten_years() -> None:
    # 1,000,000 h at 1 h/day is ~2,700 years; capped at 3,650 days after as_of.
    slow = make_forecast(rate=1.0, low=1.0, high=1.0)
    dates = forecast_dates(forecast=slow, target_hours=1_010_100.0)
    assert dates is not None
    assert dates[0] == (NOW + timedelta(days=3650)).date()


def test_forecast_dates_passed_target_gives_past_date() -> None:
    # 50 h behind at 10 h/day: passed 5 days before as_of, 2026-01-06.
    day = date(2026, 1, 6)
    assert forecast_dates(forecast=make_forecast(), target_hours=10_050.0) == (day, day, day)


# ----------------------------------------------------------------- status


def _due(on: date, hours: float | None = None) -> DueDate:
    return DueDate(hours=hours, on=on, earliest=on, latest=on)


def test_status_thresholds_at_their_edges() -> None:
    today = NOW.date()

    def grade(days: int, raised: bool = False) -> DueStatus:
        due = _due(today + timedelta(days=days))
        return due_status(
            due=due, current_hours=0, now=NOW, soon_days=14, due_days=2, raise_one_step=raised
        )

    assert grade(-1) is DueStatus.OVERDUE
    assert grade(0) is DueStatus.DUE
    assert grade(2) is DueStatus.DUE
    assert grade(3) is DueStatus.SOON
    assert grade(14) is DueStatus.SOON
    assert grade(15) is DueStatus.OK
    assert grade(15, raised=True) is DueStatus.SOON
    assert grade(3, raised=True) is DueStatus.DUE
    assert grade(0, raised=True) is DueStatus.DUE  # never pushed to overdue


def test_status_overdue_when_meter_passed_due_hours() -> None:
    due = _due(NOW.date() + timedelta(days=30), hours=10_050.0)
    status = due_status(due=due, current_hours=10_050.0, now=NOW, soon_days=14, due_days=2)
    assert status is DueStatus.OVERDUE
