"""How fast a unit's hour meter runs: a robust hours-per-day forecast with a band.

The rate is the Theil-Sen estimate (Theil 1950; Sen 1968): the median of the slopes
between every pair of readings, so one mistyped reading or a couple of idle weeks
barely move it. The band comes from the rates of the intervals between readings
(services/usage_band.py, beside the estimator: a seeded bootstrap), never narrower than
a floor that is wider when readings are few. Sen's (1968) interval on the median slope,
still computed by :func:`theil_sen`, is not a band for cumulative readings, whose
residuals are not independent.

Engine hours are hour-meter values corrected for meter replacements. A reading, a service
or a dP reading recorded at the very moment of a replacement belongs to the new meter,
everywhere (one rule: a replacement's offset applies from its own instant on). A large
drop with no replacement recorded is bridged provisionally and reported as a probable
meter change (services/hour_meter.py).

Current hours are carried forward from the last reading only as far as evidence allows
(:func:`carry`); a unit parked with no readings and no fuelings does not gain hours.
"""

from __future__ import annotations

import bisect
import math
import statistics
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import date, datetime, timedelta
from typing import Final

from services.common import UsageForecast, amount_check, moment_check
from services.hour_meter import meter_drop
from services.usage_band import SlopeFit, intervals_from, rate_band, theil_sen

SECONDS_PER_DAY: Final = 86_400.0
BAND_CONFIDENCE: Final = 0.90  # two-sided confidence of the usage band
BAND_FLOOR: Final = 0.10  # the band is at least +/-10 % of the rate ...
BAND_FEW_READINGS: Final = 0.5  # ... and at least +/-50 % / sqrt(readings - 1)
IDLE_RATE: Final = 0.05  # h/day: below this the unit counts as idle
CLASS_BAND: Final = (0.5, 1.5)  # band around a class default rate, as fractions
MAX_HORIZON_DAYS: Final = 3_653  # ten years: the furthest date forecast
FORECAST_WINDOW_DAYS: Final = 90  # the readings a unit's forecast is fitted on
# Hours are carried past the last reading for one usual interval between readings, at most
# this many days (our own choice: a fleet reads its meters at least weekly, common practice).
CARRY_DAYS_MAX: Final = 7.0


@dataclass(frozen=True, slots=True)
class MeterReading:
    """The hour meter as shown at a moment."""

    at: datetime
    hours: float

    def __post_init__(self) -> None:
        if type(self.hours) is float and 0 <= self.hours < math.inf:
            return  # the usual reading, passed without spelling out its name
        amount_check(name=f"meter reading at {self.at:%Y-%m-%d %H:%M} hours", value=self.hours)


@dataclass(frozen=True, slots=True)
class MeterReplacement:
    """An hour meter swapped: the old one's last value and the new one's first."""

    at: datetime
    old_meter_final: float
    new_meter_start: float

    def __post_init__(self) -> None:
        amount_check(name="meter replacement old_meter_final", value=self.old_meter_final)
        amount_check(name="meter replacement new_meter_start", value=self.new_meter_start)


def engine_hours(
    *, readings: Sequence[MeterReading], replacements: Sequence[MeterReplacement]
) -> list[tuple[datetime, float]]:
    """(moment, engine hours) for every reading, oldest first.

    Engine hours = meter + offset; each replacement adds ``old_meter_final -
    new_meter_start`` to the offset of readings taken at or after it: a reading taken at
    the very moment of a replacement is read on the new meter (as in
    :func:`meter_to_engine_hours`).
    """
    swaps = sorted(replacements, key=lambda r: r.at)
    swap_times = [r.at for r in swaps]
    offsets = [0.0]
    for swap in swaps:
        offsets.append(offsets[-1] + swap.old_meter_final - swap.new_meter_start)
    return [
        (reading.at, reading.hours + offsets[bisect.bisect_right(swap_times, reading.at)])
        for reading in sorted(readings, key=lambda r: r.at)
    ]


def usage_forecast(
    *,
    readings: Sequence[MeterReading],
    replacements: Sequence[MeterReplacement],
    now: datetime,
    window_days: int = FORECAST_WINDOW_DAYS,
    class_rate: float,
    min_readings: int = 3,
    floor: tuple[datetime, float] | None = None,
    evidence_at: datetime | None = None,
    seed: int = 0,
) -> UsageForecast:
    """Engine hours per day over the last ``window_days``, with a band, as of ``now``.

    With fewer than ``min_readings`` in the window, the latest ``min_readings`` readings are
    used whatever their age. With fewer than two readings at distinct moments, the class
    default rate stands (band 0.5x-1.5x). ``current_hours`` is carried forward from the last
    reading (or from ``floor``, the latest engine hours a service recorded, when that is
    later) only as far as :func:`carry` allows, and is never below ``floor``'s hours.
    ``seed`` seeds the band's bootstrap. Readings, replacements and ``evidence_at`` (the
    latest fueling) after ``now`` are refused.
    """
    if window_days < 1 or min_readings < 2:
        raise ValueError(f"window_days must be 1 or more and min_readings 2 or more, "
                         f"got {window_days}, {min_readings}")  # fmt: skip
    amount_check(name="class_rate", value=class_rate)
    for r in readings:
        moment_check(name="meter reading taken_at", at=r.at, now=now)
    for m in replacements:
        moment_check(name="meter replacement replaced_at", at=m.at, now=now)
    moment_check(name="evidence_at", at=evidence_at, now=now)
    if floor is not None:
        moment_check(name="floor moment", at=floor[0], now=now)
        amount_check(name="floor hours", value=floor[1])
    history, suspect = _provisional(engine_hours(readings=readings, replacements=replacements))
    points = [p for p in history if p[0] >= now - timedelta(days=window_days)]
    widened = len(points) < min_readings and len(history) > len(points)
    if widened:
        points = history[-min_readings:]
    anchor = points[-1] if points else None
    if floor is not None and (anchor is None or (floor[0] > anchor[0] and floor[1] >= anchor[1])):
        anchor = floor
    fit = None
    if len(points) >= 2:
        origin = points[0][0]
        fit = theil_sen(
            xs=[(at - origin).total_seconds() / SECONDS_PER_DAY for at, _ in points],
            ys=[hours for _, hours in points],
        )
    if fit is None:
        rate, low, high = class_rate, class_rate * CLASS_BAND[0], class_rate * CLASS_BAND[1]
    else:
        rate = max(fit.slope, 0.0)
        low, high = _band(points=points, rate=rate, seed=seed)
    current, carried_to = carry(anchor=anchor, points=points, rate=rate, now=now,
                                evidence_at=evidence_at)  # fmt: skip
    if floor is not None:
        current = max(current, floor[1])
    note, basis = _note(points=points, fit=fit, rate=(rate, low, high), current=current,
                        carried_to=carried_to, anchor=anchor, now=now, class_rate=class_rate,
                        widened=(widened, min_readings, window_days))  # fmt: skip
    if suspect is not None:
        at, before, meter = suspect
        note = (
            f"The readings drop from {before:,.0f} h to {meter:,.0f} h on {at:%Y-%m-%d} with "
            "no meter replacement recorded: probably a meter change (record it to confirm); "
            f"hours are counted on from {before:,.0f} h meanwhile. {note}"
        )
    return UsageForecast(
        as_of=now,
        current_hours=current,
        rate=rate,
        rate_low=low,
        rate_high=high,
        basis=basis,
        note=note,
        last_reading_at=points[-1][0] if points else None,
        carried_to=carried_to,
        probable_meter_change=suspect,
    )


def _provisional(
    history: list[tuple[datetime, float]],
) -> tuple[list[tuple[datetime, float]], tuple[datetime, float, float] | None]:
    """Engine hours with a probable unrecorded meter change bridged: the readings after the
    drop are counted on from the last reading before it (no hours assumed in between)."""
    drop = meter_drop(points=history)
    if drop is None:
        return history, None
    at, meter = history[drop]
    before = history[drop - 1][1]
    offset = before - meter
    return history[:drop] + [(t, h + offset) for t, h in history[drop:]], (at, before, meter)


def _band(
    *, points: Sequence[tuple[datetime, float]], rate: float, seed: int
) -> tuple[float, float]:
    """The band from the intervals' rates (services/usage_band.py), never narrower than the
    floors and always around the central rate."""
    band = rate_band(intervals=intervals_from(points), confidence=BAND_CONFIDENCE, seed=seed)
    half = rate * max(BAND_FLOOR, BAND_FEW_READINGS / math.sqrt(len(points) - 1))
    low, high = band if band is not None else (rate, rate)
    return max(min(low, rate - half), 0.0), max(high, rate + half)


def carry(
    *,
    anchor: tuple[datetime, float] | None,
    points: Sequence[tuple[datetime, float]],
    rate: float,
    now: datetime,
    evidence_at: datetime | None,
) -> tuple[float, datetime | None]:
    """(engine hours now, the moment they were carried to) from the anchor at ``rate``.

    Carried only as far as evidence allows: to the latest fueling after the anchor
    (``evidence_at``: fuel put in means the unit works), or one usual interval between
    readings past the anchor (the median gap, at most :data:`CARRY_DAYS_MAX` days: the next
    reading is not late before then), whichever is later; never past ``now``. No anchor:
    hours unknown, 0.
    """
    if anchor is None:
        return 0.0, None
    at, hours = anchor
    gaps = [
        (b[0] - a[0]).total_seconds() / SECONDS_PER_DAY
        for a, b in zip(points, points[1:], strict=False)
    ]
    grace = min(statistics.median(gaps), CARRY_DAYS_MAX) if gaps else 0.0
    until = at + timedelta(days=grace)
    if evidence_at is not None and evidence_at > until:
        until = evidence_at
    until = min(max(until, at), now)
    return hours + rate * (until - at).total_seconds() / SECONDS_PER_DAY, until


def _note(
    *,
    points: Sequence[tuple[datetime, float]],
    fit: SlopeFit | None,
    rate: tuple[float, float, float],
    current: float,
    carried_to: datetime | None,
    anchor: tuple[datetime, float] | None,
    now: datetime,
    widened: tuple[bool, int, int],
    class_rate: float,
) -> tuple[str, str]:
    """(the sentence a manager reads, the basis: readings, idle or class_default)."""
    carried = ""
    if anchor is not None and carried_to is not None:
        what = "reading" if points and anchor == points[-1] else "service record"
        if carried_to < now:
            carried = (f" {current:,.0f} h carried to {carried_to:%Y-%m-%d}: no reading since "
                       f"{anchor[0]:%Y-%m-%d} and no fueling since then, so no hours are added "
                       "after that.")  # fmt: skip
        else:
            carried = (f" {current:,.0f} h on {now:%Y-%m-%d} is extrapolated from the {what} "
                       f"of {anchor[0]:%Y-%m-%d}.")  # fmt: skip
    if fit is None:
        if points:
            head = (f"Too few readings to measure usage (latest {points[-1][0]:%Y-%m-%d}): the "
                    f"class default of {class_rate:.1f} h/day is assumed until more readings "
                    "come in.")  # fmt: skip
        elif anchor is not None:
            head = (f"No hour-meter readings: current hours start from the last service record "
                    f"({anchor[1]:,.0f} h on {anchor[0]:%Y-%m-%d}) and the class default of "
                    f"{class_rate:.1f} h/day is assumed.")  # fmt: skip
        else:
            head = (f"No hour-meter readings: the class default of {class_rate:.1f} h/day is "
                    "assumed and current hours are unknown (taken as 0).")  # fmt: skip
        return head + carried, "class_default"
    value, low, high = rate
    is_widened, min_readings, window_days = widened
    span = round((points[-1][0] - points[0][0]).total_seconds() / SECONDS_PER_DAY)
    source = f"{len(points)} readings over {span} days"
    if is_widened:
        source += f" (fewer than {min_readings} in the last {window_days} days)"
    if value < IDLE_RATE:
        return f"Idle: {value:.1f} h/day from {source}; the calendar limit governs.", "idle"
    return f"{value:.1f} h/day (band {low:.1f} to {high:.1f}) from {source};{carried}", "readings"


def unit_usage_forecast(
    *,
    window_readings: Sequence[MeterReading],
    latest: MeterReading | None,
    replacements: Sequence[MeterReplacement],
    now: datetime,
    class_rate: float,
    floor: tuple[datetime, float] | None = None,
    evidence_at: datetime | None = None,
    seed: int = 0,
) -> UsageForecast:
    """A unit's forecast, the one its due dates and its page use.

    Fitted on the readings of the last :data:`FORECAST_WINDOW_DAYS` days plus the unit's
    latest reading, however old, so a unit read rarely still has a current meter value.
    ``floor``, ``evidence_at`` and ``seed`` are passed to :func:`usage_forecast`.
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
        floor=floor,
        evidence_at=evidence_at,
        seed=seed,
    )


def meter_to_engine_hours(
    *, meter: float, at: datetime, replacements: Sequence[MeterReplacement]
) -> float:
    """Engine hours for an hour-meter value recorded at ``at`` (a service or a dP reading).

    Adds the offset (old meter's last value minus new meter's first) of every replacement
    at or before ``at``: a value recorded at the very moment of a swap is read on the new
    meter, as :func:`engine_hours` reads a meter reading.
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
