"""A filter's differential pressure (dP): fit its rise and find where it meets the limit.

Clogging curves are flat, then rise steeply near the end of a filter's life (filter clogging
literature, e.g. Separations 8(6):71, 2021), so a straight line extrapolates optimistically;
an exponential fitted on the readings since the change is the conservative choice.
"""

from __future__ import annotations

import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime

from services.schedule import MIN_DP_READINGS, fmt_hours, plural


@dataclass(frozen=True, slots=True)
class DpReading:
    """A differential-pressure reading across the filter."""

    at: datetime
    hours: float  # engine hours
    dp_bar: float


@dataclass(frozen=True, slots=True)
class DpFit:
    """dp = a * exp(b * (h - h0)), fitted by least squares on log(dp)."""

    a: float
    b: float
    h0: float
    readings: int
    crossing_hours: float | None  # engine hours at the limit; None if the fit does not rise


def dp_fit(*, readings: Sequence[DpReading], limit_bar: float, h0: float) -> DpFit | None:
    """Fit a rising exponential to dP readings and find where it meets the limit.

    Why exponential: clogging curves are flat, then rise steeply, so a straight line
    extrapolates optimistically (late). ln(dp) = ln(a) + b*(h - h0) is a straight line
    in log space: two parameters, fits from three points, rises without ever turning
    back down (a quadratic can bend over and never reach the limit), and its
    steepening is the conservative direction. Readings <= 0 bar carry no log and are
    left out. Returns None with fewer than three usable readings.
    """
    usable = sorted((r for r in readings if r.dp_bar > 0), key=lambda r: r.hours)
    if len(usable) < MIN_DP_READINGS:
        return None
    xs = [r.hours - h0 for r in usable]
    ys = [math.log(r.dp_bar) for r in usable]
    try:
        slope, intercept = statistics.linear_regression(xs, ys)
    except statistics.StatisticsError:  # all readings at the same hours
        return None
    a = math.exp(intercept)
    if slope <= 0:
        return DpFit(a=a, b=slope, h0=h0, readings=len(usable), crossing_hours=None)
    reached = [r for r in usable if r.dp_bar >= limit_bar]
    if reached:
        crossing = reached[0].hours  # observed, not projected
    else:
        # The limit has not been seen yet, so it lies beyond the last reading even
        # where the fitted curve would put it earlier.
        crossing = max(h0 + (math.log(limit_bar) - intercept) / slope, usable[-1].hours)
    return DpFit(a=a, b=slope, h0=h0, readings=len(usable), crossing_hours=crossing)


def dp_limit(
    *, limit_bar: float | None, readings: Sequence[DpReading], last_change_at: datetime, h0: float
) -> tuple[DpFit | None, str | None]:
    """The dP fit of the readings since the change (None when there is none) and the
    sentence that explains it; no limit or fewer than three readings: (None, None)."""
    dp_since = [r for r in readings if r.at >= last_change_at]
    if limit_bar is None or len(dp_since) < MIN_DP_READINGS:
        return None, None
    fit = dp_fit(readings=dp_since, limit_bar=limit_bar, h0=h0)
    if fit is None:
        return None, "The dP readings since the change could not be fitted; no dP projection."
    if fit.crossing_hours is None:
        return fit, (
            f"The {fit.readings} dP readings since the change do not rise, so the fit "
            "was ignored and no dP projection was made."
        )
    per_100h = (math.exp(fit.b * 100) - 1) * 100
    return fit, (
        f"Filter dP fitted on {plural(fit.readings, 'reading')} rises about "
        f"{per_100h:.0f} % per 100 h and reaches the {limit_bar:g} bar limit at "
        f"{fmt_hours(fit.crossing_hours)}."
    )
