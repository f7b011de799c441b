"""The fuel each fueling brought, and which fuel is "current".

A fueling takes the quality of the sample that describes it (its source's latest sample, or a
later sample from the unit's own tank); the fuel "now in use" is what went in over the last
two weeks, or the last few fuelings when there were none (common practice: a tank turns over
in days to weeks of normal running, so older fuel has been burned).
"""

from __future__ import annotations

import bisect
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Final

from services.fuel_quality import (
    REFERENCE_CODES,
    FuelQuality,
    channel_check,
    concentration_or_reference,
    count_range,
)
from services.inputs import dates_check, number_check

CURRENT_FUEL_DAYS: Final = 14  # the fuel now in use: what went in over the last two weeks ...
CURRENT_FUEL_LAST: Final = 3  # ... or, when nothing did, the last three fuelings
MIN_BURN_HOURS: Final = 10.0  # fewer engine hours say too little about a burn rate
# One fueling into one machine above this is a typing error, not fuel (common practice: the
# largest machine tanks hold a few thousand litres, a road tanker's load about 40,000 L).
MAX_FUELING_LITRES: Final = 20_000.0


@dataclass(frozen=True, slots=True)
class Fueling:
    """Fuel put into one unit's tank."""

    at: datetime
    litres: float
    source_id: int | None  # the bulk tank, bowser or station it came from, if known
    ref: str

    def __post_init__(self) -> None:
        number_check(f"fueling {self.ref}: litres", self.litres, most=MAX_FUELING_LITRES)


Paired = tuple[Fueling, FuelQuality | None]  # a fueling and the quality of the fuel it brought


@dataclass(frozen=True, slots=True)
class Sample:
    """A fuel sample: from a source (``unit_sample=False``) or from the unit's own tank."""

    at: datetime
    source_id: int | None
    unit_sample: bool
    quality: FuelQuality


def quality_for_fuelings(
    *, fuelings: Sequence[Fueling], samples: Sequence[Sample]
) -> list[tuple[Fueling, FuelQuality | None]]:
    """Pair each fueling (input order) with the quality of the fuel it brought.

    * A fueling takes its source's latest sample taken at or before the fueling.
    * A sample from the unit's tank measures what the earlier fuelings became, so
      it overrides source samples for every fueling at or before it, back to (not
      including) the unit's previous tank sample. Pass one unit's tank samples only.
    * ``None`` when nothing applies. Samples at the same instant: the later in
      ``samples`` wins.
    """
    by_source: dict[int, list[Sample]] = {}
    tank: list[Sample] = []
    for sample in samples:  # stable sorts below keep input order among equal times
        if sample.unit_sample:
            tank.append(sample)
        elif sample.source_id is not None:
            by_source.setdefault(sample.source_id, []).append(sample)
    tank.sort(key=lambda s: s.at)
    tank_times = [s.at for s in tank]
    source_times: dict[int, list[datetime]] = {}
    for source_id, group in by_source.items():
        group.sort(key=lambda s: s.at)
        source_times[source_id] = [s.at for s in group]

    paired: list[tuple[Fueling, FuelQuality | None]] = []
    for fueling in fuelings:
        quality: FuelQuality | None = None
        first_after = bisect.bisect_left(tank_times, fueling.at)
        if first_after < len(tank):
            same_instant_last = bisect.bisect_right(tank_times, tank_times[first_after]) - 1
            quality = tank[same_instant_last].quality
        elif fueling.source_id in by_source:
            last_before = bisect.bisect_right(source_times[fueling.source_id], fueling.at) - 1
            if last_before >= 0:
                quality = by_source[fueling.source_id][last_before].quality
        paired.append((fueling, quality))
    return paired


def volume_weighted_concentration(
    *, pairs: Sequence[tuple[Fueling, FuelQuality | None]], channel: int
) -> tuple[float, float, list[str]]:
    """(litre-weighted particles per mL, litres where the reference was assumed, labels used).

    Labels are those of the samples whose figures were used, in order of first use.
    With no litres at all, the reference concentration is returned with 0 litres.
    """
    channel_check(channel)
    total_litres = 0.0
    weighted = 0.0
    reference_litres = 0.0
    labels: list[str] = []
    for fueling, quality in pairs:
        value, used_reference = concentration_or_reference(quality=quality, channel=channel)
        total_litres += fueling.litres
        weighted += fueling.litres * value
        if used_reference:
            reference_litres += fueling.litres
        elif quality is not None and quality.label not in labels:
            labels.append(quality.label)
    if total_litres == 0:
        return count_range(REFERENCE_CODES[channel])[1], 0.0, labels
    return weighted / total_litres, reference_litres, labels


def current_fuel(*, pairs: Sequence[Paired], now: datetime) -> list[Paired]:
    """The fuel now in use: fuelings (oldest first) at or after ``now`` minus
    :data:`CURRENT_FUEL_DAYS`, else the last :data:`CURRENT_FUEL_LAST` of them."""
    recent_from = now - timedelta(days=CURRENT_FUEL_DAYS)
    return [p for p in pairs if p[0].at >= recent_from] or list(pairs[-CURRENT_FUEL_LAST:])


def current_concentration(
    *, pairs: Sequence[Paired], now: datetime, channel: int
) -> tuple[float, bool]:
    """(particles per mL of the fuel now in use, litre-weighted; whether all of it had no
    sample and the reference fuel was assumed). No fuel at all: the reference fuel.
    A fueling dated after ``now`` is refused (ValueError naming it)."""
    dates_check(items=[(f"fueling {f.ref}", f.at) for f, _ in pairs], now=now)
    recent = current_fuel(pairs=pairs, now=now)
    if not recent:
        return concentration_or_reference(quality=None, channel=channel)
    concentration, reference_litres, _ = volume_weighted_concentration(
        pairs=recent, channel=channel
    )
    return concentration, reference_litres >= sum(f.litres for f, _ in recent) - 1e-9


def measured_burn(
    *, start: tuple[datetime, float], end: tuple[datetime, float], fuelings: Sequence[Fueling]
) -> float | None:
    """Litres per engine hour between two (moment, engine hours) readings: the fuel put in
    after the first reading up to and including the second, over the hours run between them.

    None when the engine ran fewer than :data:`MIN_BURN_HOURS` or no fuel went in: too
    little to tell (common practice: over a long enough run, fuel put in is fuel burned).
    Hours that are NaN, infinite or negative are refused (ValueError naming them).
    """
    (t0, h0), (t1, h1) = start, end
    number_check("start hours", h0)
    number_check("end hours", h1)
    hours = h1 - h0
    if hours < MIN_BURN_HOURS:
        return None
    litres = sum(f.litres for f in fuelings if t0 < f.at <= t1)
    return litres / hours if litres > 0 else None
