"""A file's hour readings checked against their neighbours without a query per row.

Each unit's stored readings and meter replacements are read once per file (two queries) and
kept sorted; each row's neighbours are found by bisection and the shared rule
(``fleetfuel.fleet.checks.surroundings_refusal``, i.e. ``services.plausibility``) decides, as
it does on every other path. A stored row joins the list, so later rows see it (also before
its chunk is written: batch.py).
"""

from __future__ import annotations

from bisect import bisect_left, bisect_right
from dataclasses import dataclass, field
from datetime import datetime
from zoneinfo import ZoneInfo

from fleetfuel.fleet.checks import Surroundings, surroundings_refusal
from fleetfuel.fleet.models import MeterReading, MeterReplacement, Unit
from services.plausibility import Neighbour


@dataclass
class _UnitReadings:
    times: list[datetime]
    hours: list[float]
    rows: dict[datetime, MeterReading]  # the stored row at an instant
    replaced: list[datetime]


@dataclass
class ReadingsNearby:
    """The readings of the units a file names, loaded once each."""

    _units: dict[int, _UnitReadings] = field(default_factory=dict)

    def _load(self, unit: Unit) -> _UnitReadings:
        if unit.pk not in self._units:
            rows = MeterReading.objects.filter(unit=unit).order_by("taken_at", "pk")
            times, hours, stored = [], [], {}
            for row in rows:
                row.unit = unit
                times.append(row.taken_at)
                hours.append(row.hours)
                stored[row.taken_at] = row
            replaced = sorted(
                MeterReplacement.objects.filter(unit=unit).values_list("replaced_at", flat=True)
            )
            self._units[unit.pk] = _UnitReadings(times, hours, stored, replaced)
        return self._units[unit.pk]

    def existing(self, unit: Unit, at: datetime) -> MeterReading | None:
        """The unit's reading at ``at``, stored before the file or by an earlier row."""
        return self._load(unit).rows.get(at)

    def refusal(self, unit: Unit, *, at: datetime, hours: float, now: datetime) -> str | None:
        """The shared rule for a reading of ``unit`` at ``at`` (one already stored at that
        instant, being updated, is left out of its own neighbours)."""
        u = self._load(unit)
        low = bisect_left(u.times, at)
        high = bisect_right(u.times, at)
        before = Neighbour(at=u.times[low - 1], hours=u.hours[low - 1]) if low else None
        after = Neighbour(at=u.times[high], hours=u.hours[high]) if high < len(u.times) else None
        around = Surroundings(
            before=before,
            after=after,
            replaced_before=before is not None and _any_between(u.replaced, before.at, at),
            replaced_after=after is not None and _any_between(u.replaced, at, after.at),
        )
        zone = ZoneInfo(unit.site.time_zone)
        return surroundings_refusal(around, at=at, hours=hours, now=now, zone=zone)

    def stored(self, unit: Unit, *, row: MeterReading) -> None:
        u = self._load(unit)
        at, hours = row.taken_at, row.hours
        if at in u.rows:
            u.hours[bisect_left(u.times, at)] = hours
        else:
            index = bisect_right(u.times, at)
            u.times.insert(index, at)
            u.hours.insert(index, hours)
        u.rows[at] = row


def _any_between(times: list[datetime], start: datetime, end: datetime) -> bool:
    """Whether a time lies in (start, end]."""
    index = bisect_right(times, start)
    return index < len(times) and times[index] <= end
