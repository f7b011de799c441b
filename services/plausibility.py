"""Whether an entered hour-meter reading or a fueling is plausible: one rule for every path
(the entry pages, spreadsheet imports, the telematics feed, the work-order close).

A reading is checked against its neighbours in time, not only the latest one:

- an amount is a finite, non-negative number;
- it is not in the future beyond a small clock allowance (devices and people's watches drift);
- an engine's hour meter only counts up, so a reading is not below the reading before it nor
  above the reading after it, unless a meter replacement lies between the two (common
  practice: the replaced meter starts again from its own value);
- an engine runs at most 24 hours a day, so a reading does not gain more hours on its
  neighbour than the time elapsed between them.

A fueling is a finite, positive amount that fits in the tank it goes into, with a margin for
the filler neck and gauge error (common practice: a tank's stated capacity is nominal).

Each refusal is one sentence naming the rule and the neighbouring values.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from datetime import datetime, timedelta

# Hour meters show tenths of an hour (common practice): a gain within one tenth above the
# elapsed time is reading resolution, not a fault.
METER_RESOLUTION_H = 0.1
HOURS_PER_DAY = 24.0


@dataclass(frozen=True)
class Neighbour:
    """An engine-meter reading as read (the meter's own value), next to the one checked."""

    at: datetime
    hours: float


def _when(at: datetime) -> str:
    return f"{at:%Y-%m-%d %H:%M}"


def _elapsed_h(*, earlier: datetime, later: datetime) -> float:
    return (later - earlier).total_seconds() / 3600.0


def time_refusal(
    *, at: datetime, now: datetime, what: str, clock_allowance: timedelta = timedelta(minutes=10)
) -> str | None:
    """None unless ``at`` lies in the future beyond the clock allowance (any dated entry:
    a reading, a fueling, a delivery, a sample, an engine event; ``what`` names it)."""
    if at <= now + clock_allowance:
        return None
    minutes = clock_allowance.total_seconds() / 60
    return (
        f"The {what} is dated {_when(at)}, in the future: no later than {minutes:g} "
        f"minutes after now ({_when(now)})."
    )


def reading_refusal(
    *,
    at: datetime,
    hours: float,
    before: Neighbour | None,
    after: Neighbour | None,
    replaced_before: bool,
    replaced_after: bool,
    now: datetime,
    clock_allowance: timedelta = timedelta(minutes=10),
) -> str | None:
    """None when the reading ``hours`` at ``at`` is plausible, else why not, in one sentence.

    ``before``/``after`` are the unit's nearest readings in time on either side (None when
    there is none); ``replaced_before``/``replaced_after`` say whether a meter replacement lies
    between that neighbour and this reading, in which case the two meters' values are not
    compared.
    """
    if not math.isfinite(hours):
        return "The hour meter reading must be a number."
    if hours < 0:
        return f"The hour meter reading cannot be negative ({hours:,.1f} h)."
    future = time_refusal(at=at, now=now, clock_allowance=clock_allowance, what="reading")
    if future:
        return future
    if before is not None and not replaced_before:
        refusal = _pair_refusal(
            earlier=before, later=Neighbour(at=at, hours=hours), checked_is_later=True
        )
        if refusal:
            return refusal
    if after is not None and not replaced_after:
        refusal = _pair_refusal(
            earlier=Neighbour(at=at, hours=hours), later=after, checked_is_later=False
        )
        if refusal:
            return refusal
    return None


def _pair_refusal(*, earlier: Neighbour, later: Neighbour, checked_is_later: bool) -> str | None:
    """Why two readings of one meter cannot both be right, or None."""
    checked, other = (later, earlier) if checked_is_later else (earlier, later)
    which = "previous" if checked_is_later else "next"
    if later.hours < earlier.hours:
        relation = "lower" if checked_is_later else "higher"
        return (
            f"{checked.hours:,.1f} h is {relation} than the {which} reading "
            f"({other.hours:,.1f} h on {_when(other.at)}): the hour meter only counts up, so "
            "record a meter replacement first if the hour meter was changed."
        )
    elapsed = _elapsed_h(earlier=earlier.at, later=later.at)
    gained = later.hours - earlier.hours
    if gained > elapsed + METER_RESOLUTION_H:
        return (
            f"{checked.hours:,.1f} h is {gained:,.1f} h from the {which} reading "
            f"({other.hours:,.1f} h on {_when(other.at)}), but only {elapsed:,.1f} h "
            f"elapsed between them: an engine runs at most {HOURS_PER_DAY:g} h a day."
        )
    return None


def fueling_refusal(*, litres: float, tank_l: float | None, margin: float = 0.1) -> str | None:
    """None when ``litres`` is a plausible fueling, else why not, in one sentence.

    ``tank_l`` is the unit's tank capacity (else its class's typical tank); None skips the
    capacity rule. ``margin`` is the fraction above the capacity still accepted.
    """
    if not math.isfinite(litres):
        return "The amount of fuel must be a number."
    if litres <= 0:
        return f"The amount of fuel must be more than zero (got {litres:,.1f} L)."
    if tank_l is not None and litres > tank_l * (1 + margin):
        return (
            f"{litres:,.1f} L is more than the tank holds ({tank_l:,.0f} L, accepted up to "
            f"{tank_l * (1 + margin):,.0f} L with a {margin:.0%} margin)."
        )
    return None
