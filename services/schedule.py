"""Shared by the projections: dates from engine hours, the earliest limit, status words.

Pure functions on services.common types; intervals.py (filters) and water.py (drains) use them.
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from datetime import date, datetime, timedelta

from services.common import Basis, DueDate, DueStatus, UsageForecast

MAX_FORECAST_DAYS = 3650  # ten years: past this a forecast date means nothing
MIN_DP_READINGS = 3
_TIE_HOURS = 1e-6  # hour limits closer than this count as equal (the plan wins a tie)


# --------------------------------------------------------------------------- shared helpers


def forecast_dates(
    *, forecast: UsageForecast, target_hours: float
) -> tuple[date, date, date] | None:
    """Central, earliest and latest dates at which the meter reaches ``target_hours``.

    days = (target - current_hours) / rate; earliest at ``rate_high``, latest at
    ``rate_low``; capped at ten years. A target already reached gives the central
    estimate of when it was passed (a past date), with the band collapsed onto it.
    Returns None when the unit is not running (rate <= 0) and the target is still
    ahead: the hour limit never arrives and the calendar governs.
    """
    remaining = target_hours - forecast.current_hours

    def on(rate: float) -> date:
        if rate <= 0:
            days = float(MAX_FORECAST_DAYS)
        else:
            days = max(-MAX_FORECAST_DAYS, min(MAX_FORECAST_DAYS, remaining / rate))
        return (forecast.as_of + timedelta(days=days)).date()

    if remaining <= 0:
        central = on(forecast.rate) if forecast.rate > 0 else forecast.as_of.date()
        return central, central, central
    if forecast.rate <= 0:
        return None
    central = on(forecast.rate)
    earliest = min(central, on(max(forecast.rate_high, forecast.rate)))
    latest = max(central, on(min(forecast.rate_low, forecast.rate)))
    return central, earliest, latest


def earliest_due(
    *, hour_limits: Sequence[tuple[Basis, float]], calendar: date, forecast: UsageForecast
) -> tuple[Basis, DueDate]:
    """The earliest of some hour limits (engine hours) and a calendar limit.

    The first hour limit wins a tie (put the plan's own first). The band comes from
    the usage forecast but never runs past the calendar limit; when the calendar
    governs (or the unit is idle and the hour limits never arrive) the band is the
    date itself and ``hours`` is None.
    """
    dates = None
    if hour_limits:
        basis, hours = hour_limits[0]
        for b, h in hour_limits[1:]:
            if h < hours - _TIE_HOURS:
                basis, hours = b, h
        dates = forecast_dates(forecast=forecast, target_hours=hours)
    if dates is None or calendar < dates[0]:
        return Basis.PLAN_DAYS, DueDate(hours=None, on=calendar, earliest=calendar, latest=calendar)
    central, earliest, latest = dates
    return basis, DueDate(
        hours=hours, on=central, earliest=min(earliest, calendar), latest=min(latest, calendar)
    )


_ORDER = list(DueStatus)  # declared from most to least urgent


def due_status(
    *,
    due: DueDate,
    current_hours: float,
    now: datetime,
    soon_days: int,
    due_days: int,
    raise_one_step: bool = False,
) -> DueStatus:
    """Grade a due point against today.

    Overdue when the date is before today or the meter has reached the due hours;
    due within ``due_days``; soon within ``soon_days``; otherwise ok.
    ``raise_one_step`` makes ok -> soon and soon -> due; it never turns "due" into
    "overdue", because overdue means a limit has actually passed.
    """
    today = now.date()
    days_left = (due.on - today).days
    if days_left < 0 or (due.hours is not None and current_hours >= due.hours):
        status = DueStatus.OVERDUE
    elif days_left <= due_days:
        status = DueStatus.DUE
    elif days_left <= soon_days:
        status = DueStatus.SOON
    else:
        status = DueStatus.OK
    if raise_one_step and status in (DueStatus.SOON, DueStatus.OK):
        status = _ORDER[_ORDER.index(status) - 1]
    return status


def estimate_only(*, status: DueStatus, hard_limit_passed: bool) -> DueStatus:
    """An estimate never makes an item overdue on its own: "overdue" with no hard limit passed
    (the plan's hours, days or fuel volume, a measured dP at or over its limit, an alarm) is
    "check", which asks for a measurement before the work (common practice: a filter is changed
    on its differential pressure or restriction indicator, not on a dirt estimate)."""
    if status is DueStatus.OVERDUE and not hard_limit_passed:
        return DueStatus.CHECK
    return status


def more_urgent(a: DueStatus, b: DueStatus) -> DueStatus:
    """The more urgent of two statuses."""
    return a if _ORDER.index(a) <= _ORDER.index(b) else b


def fmt_hours(hours: float) -> str:
    return f"{hours:,.0f} h"


def plural(n: int, word: str) -> str:
    """``1 drain``, ``2 drains``."""
    return f"{n} {word}" if n == 1 else f"{n} {word}s"


def sentence(text: str) -> str:
    """Text ending with a full stop."""
    text = text.strip()
    return text if text.endswith((".", "!", "?")) else text + "."


def json_number(value: float) -> float | None:
    """A float that JSON can carry (no inf or nan)."""
    return value if math.isfinite(value) else None


# --------------------------------------------------------------------------- inputs
