"""How fast a unit's hour meter runs: a robust hours-per-day forecast with a band.

The rate is the Theil-Sen estimate (Theil 1950; Sen 1968): the median of the slopes
between every pair of readings, so one mistyped reading or a couple of idle weeks
barely move it. The band is Sen's (1968, eq. 2.6) confidence interval on that median,
widened to a floor that is wider when readings are few, because future use varies
more than a fitted line says.

Engine hours are hour-meter values corrected for meter replacements.
"""

from __future__ import annotations

import bisect
import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta
from typing import Final

from services.common import UsageForecast

SECONDS_PER_DAY: Final = 86_400.0
MAX_POINTS: Final = 500  # above this, readings are thinned by a fixed stride (O(n^2) pairs)
BAND_CONFIDENCE: Final = 0.90  # two-sided confidence of Sen's interval
BAND_FLOOR: Final = 0.10  # the band is at least +/-10 % of the rate ...
BAND_FEW_READINGS: Final = 0.5  # ... and at least +/-50 % / sqrt(readings - 1)
IDLE_RATE: Final = 0.05  # h/day: below this the unit counts as idle
CLASS_BAND: Final = (0.5, 1.5)  # band around a class default rate, as fractions
MAX_HORIZON_DAYS: Final = 3_653  # ten years: the furthest date forecast
FORECAST_WINDOW_DAYS: Final = 90  # the readings a unit's forecast is fitted on


@dataclass(frozen=True, slots=True)
class MeterReading:
    """The hour meter as shown at a moment."""

    at: datetime
    hours: float

    def __post_init__(self) -> None:
        if not math.isfinite(self.hours):
            raise ValueError(f"meter reading at {self.at}: hours must be a number")


@dataclass(frozen=True, slots=True)
class MeterReplacement:
    """An hour meter swapped: the old one's last value and the new one's first."""

    at: datetime
    old_meter_final: float
    new_meter_start: float


@dataclass(frozen=True, slots=True)
class SlopeFit:
    """Theil-Sen slope with Sen's confidence interval (units of y per unit of x)."""

    slope: float
    low: float
    high: float
    points: int  # points used (after thinning)


def engine_hours(
    *, readings: Sequence[MeterReading], replacements: Sequence[MeterReplacement]
) -> list[tuple[datetime, float]]:
    """(moment, engine hours) for every reading, oldest first.

    Engine hours = meter + offset; each replacement adds ``old_meter_final -
    new_meter_start`` to the offset of readings taken after it. A reading taken at
    the very moment of a replacement is read as the old meter's.
    """
    swaps = sorted(replacements, key=lambda r: r.at)
    swap_times = [r.at for r in swaps]
    offsets = [0.0]
    for swap in swaps:
        offsets.append(offsets[-1] + swap.old_meter_final - swap.new_meter_start)
    return [
        (reading.at, reading.hours + offsets[bisect.bisect_left(swap_times, reading.at)])
        for reading in sorted(readings, key=lambda r: r.at)
    ]


def _tie_term(values: Sequence[float]) -> int:
    counts: dict[float, int] = {}
    for value in values:
        counts[value] = counts.get(value, 0) + 1
    return sum(k * (k - 1) * (2 * k + 5) for k in counts.values())


def theil_sen(
    *, xs: Sequence[float], ys: Sequence[float], confidence: float = BAND_CONFIDENCE
) -> SlopeFit | None:
    """Median of pairwise slopes, with Sen's (1968) interval; None without two distinct x.

    Above :data:`MAX_POINTS` points, every k-th point is kept counting back from the
    last, so the result is deterministic and the newest point always counts.
    """
    if len(xs) != len(ys):
        raise ValueError(f"xs and ys differ in length: {len(xs)} and {len(ys)}")
    if not 0 < confidence < 1:
        raise ValueError(f"confidence must be between 0 and 1, got {confidence}")
    n = len(xs)
    if n > MAX_POINTS:
        keep = sorted(range(n - 1, -1, -math.ceil(n / MAX_POINTS)))
        xs, ys, n = [xs[i] for i in keep], [ys[i] for i in keep], len(keep)
    slopes = sorted(
        (ys[j] - ys[i]) / (xs[j] - xs[i])
        for i in range(n)
        for j in range(i + 1, n)
        if xs[j] != xs[i]
    )
    if not slopes:
        return None
    # Sen (1968) eq. 2.6: variance of Kendall's S with ties in x and in y.
    variance = (n * (n - 1) * (2 * n + 5) - _tie_term(xs) - _tie_term(ys)) / 18.0
    z = statistics.NormalDist().inv_cdf(0.5 + confidence / 2)
    spread = z * math.sqrt(max(variance, 0.0))
    count = len(slopes)
    upper = min(round((count + spread) / 2), count - 1)
    lower = max(round((count - spread) / 2) - 1, 0)
    return SlopeFit(
        slope=statistics.median(slopes), low=slopes[lower], high=slopes[upper], points=n
    )


def usage_forecast(
    *,
    readings: Sequence[MeterReading],
    replacements: Sequence[MeterReplacement],
    now: datetime,
    window_days: int = FORECAST_WINDOW_DAYS,
    class_rate: float,
    min_readings: int = 3,
) -> UsageForecast:
    """Engine hours per day over the last ``window_days``, with a band, as of ``now``.

    Readings after ``now`` are ignored. With fewer than ``min_readings`` in the window,
    the latest ``min_readings`` readings are used whatever their age. With fewer than
    two readings at distinct moments, the class default rate stands (band 0.5x-1.5x).
    ``current_hours`` is the last reading extrapolated to ``now`` at the rate.
    """
    if window_days < 1:
        raise ValueError(f"window_days must be 1 or more, got {window_days}")
    if min_readings < 2:
        raise ValueError(f"min_readings must be 2 or more, got {min_readings}")
    if not (math.isfinite(class_rate) and class_rate >= 0):
        raise ValueError(f"class_rate must be 0 or more hours per day, got {class_rate}")

    history = [p for p in engine_hours(readings=readings, replacements=replacements) if p[0] <= now]
    start = now - timedelta(days=window_days)
    points = [p for p in history if p[0] >= start]
    widened = len(points) < min_readings and len(history) > len(points)
    if widened:
        points = history[-min_readings:]

    fit = None
    if points:
        origin = points[0][0]
        fit = theil_sen(
            xs=[(at - origin).total_seconds() / SECONDS_PER_DAY for at, _ in points],
            ys=[hours for _, hours in points],
        )
    if fit is None:
        return _class_default(points=points, now=now, class_rate=class_rate)

    rate = max(fit.slope, 0.0)
    half = rate * max(BAND_FLOOR, BAND_FEW_READINGS / math.sqrt(fit.points - 1))
    rate_low = max(min(fit.low, rate - half), 0.0)
    rate_high = max(fit.high, rate + half)
    last_at, last_hours = points[-1]
    current = last_hours + rate * (now - last_at).total_seconds() / SECONDS_PER_DAY
    span = round((last_at - points[0][0]).total_seconds() / SECONDS_PER_DAY)
    source = f"{len(points)} readings over {span} days"
    if widened:
        source += f" (fewer than {min_readings} in the last {window_days} days)"
    extrapolated = (
        f"{current:,.0f} h on {now:%Y-%m-%d} is extrapolated from the reading of {last_at:%Y-%m-%d}"
    )
    if rate < IDLE_RATE:
        basis = "idle"
        note = f"Idle: {rate:.1f} h/day from {source}; the calendar limit governs."
    else:
        basis = "readings"
        note = (
            f"{rate:.1f} h/day (band {rate_low:.1f} to {rate_high:.1f}) from {source}; "
            f"{extrapolated}."
        )
    return UsageForecast(
        as_of=now,
        current_hours=current,
        rate=rate,
        rate_low=rate_low,
        rate_high=rate_high,
        basis=basis,
        note=note,
    )


def unit_usage_forecast(
    *,
    window_readings: Sequence[MeterReading],
    latest: MeterReading | None,
    replacements: Sequence[MeterReplacement],
    now: datetime,
    class_rate: float,
) -> UsageForecast:
    """A unit's forecast, the one its due dates and its page use.

    Fitted on the readings of the last :data:`FORECAST_WINDOW_DAYS` days plus the unit's
    latest reading, however old, so a unit read rarely still has a current meter value.
    """
    readings = list(window_readings)
    if latest is not None and (not readings or readings[-1].at != latest.at):
        readings = sorted([*readings, latest], key=lambda r: r.at)
    return usage_forecast(
        readings=readings,
        replacements=replacements,
        now=now,
        window_days=FORECAST_WINDOW_DAYS,
        class_rate=class_rate,
    )


def meter_to_engine_hours(
    *, meter: float, at: datetime, replacements: Sequence[MeterReplacement]
) -> float:
    """Engine hours for an hour-meter value recorded at ``at`` (a service or a dP reading).

    Adds the offset (old meter's last value minus new meter's first) of every replacement
    at or before ``at``: a value recorded at the very moment of a swap is read on the new
    meter. (:func:`engine_hours` reads a meter *reading* taken at that moment on the old one.)
    """
    return meter + sum(r.old_meter_final - r.new_meter_start for r in replacements if r.at <= at)


def forecast_path(
    *, forecast: UsageForecast, now: datetime, days: int, steps: int = 10
) -> list[tuple[datetime, float, float, float]]:
    """(moment, central, low, high engine hours) from ``now`` to ``days`` ahead, in ``steps``
    equal steps: the forecast's line and band, as a chart draws them.

    Hours run from the forecast's ``current_hours`` at its ``as_of`` at ``rate``; the band
    at ``rate_low`` and ``rate_high``.
    """
    if days < 0 or steps < 1:
        raise ValueError(f"days must be 0 or more and steps 1 or more, got {days}, {steps}")
    path = []
    for i in range(steps + 1):
        at = now + timedelta(days=days * i / steps)
        elapsed = (at - forecast.as_of).total_seconds() / SECONDS_PER_DAY
        path.append(
            (
                at,
                forecast.current_hours + forecast.rate * elapsed,
                forecast.current_hours + forecast.rate_low * elapsed,
                forecast.current_hours + forecast.rate_high * elapsed,
            )
        )
    return path


def _class_default(
    *, points: Sequence[tuple[datetime, float]], now: datetime, class_rate: float
) -> UsageForecast:
    if points:
        last_at, last_hours = points[-1]
        current = last_hours + class_rate * (now - last_at).total_seconds() / SECONDS_PER_DAY
        note = (
            f"Too few readings to measure usage (latest {last_at:%Y-%m-%d}): the class "
            f"default of {class_rate:.1f} h/day is assumed until more readings come in."
        )
    else:
        current = 0.0
        note = (
            f"No hour-meter readings: the class default of {class_rate:.1f} h/day is "
            "assumed and current hours are unknown (taken as 0)."
        )
    return UsageForecast(
        as_of=now,
        current_hours=current,
        rate=class_rate,
        rate_low=class_rate * CLASS_BAND[0],
        rate_high=class_rate * CLASS_BAND[1],
        basis="class_default",
        note=note,
    )


def date_for_hours(*, forecast: UsageForecast, target_hours: float) -> tuple[date, date, date]:
    """(central, earliest, latest) date on which the unit reaches ``target_hours``.

    Earliest runs at ``rate_high``, latest at ``rate_low``. No date is later than ten
    years after ``as_of`` (a rate of 0 never arrives): callers clamp to their calendar
    limit. A target already reached gives ``as_of``'s date for all three.
    """
    remaining = target_hours - forecast.current_hours
    if remaining <= 0:
        today = forecast.as_of.date()
        return today, today, today

    def reached(rate: float) -> date:
        days = MAX_HORIZON_DAYS if rate <= 0 else min(remaining / rate, MAX_HORIZON_DAYS)
        return (forecast.as_of + timedelta(days=days)).date()

    return reached(forecast.rate), reached(forecast.rate_high), reached(forecast.rate_low)
