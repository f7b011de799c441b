"""The feed's hour readings checked by the one plausibility rule, a batch at a time.

A batch brings readings of many units at many instants, some of the same unit: each is checked
against its nearest readings in time, stored ones and the batch's own accepted ones alike, so
a batch whose second reading jumps ahead of its first is refused as a page would refuse it.
What the rule needs is loaded in a fixed number of queries, whatever the batch's size: every
reading of the batch's units between its first and last instant (1), the nearest one on either
side of that span (4, through ``fleetfuel.fleet.checks.surroundings_load``) and the meter
replacements among them (1).
"""

from __future__ import annotations

import bisect
from collections.abc import Sequence
from dataclasses import dataclass, field
from datetime import datetime

from fleetfuel.fleet.checks import Surroundings, surroundings_load, surroundings_refusal
from fleetfuel.fleet.models import MeterReading, MeterReplacement
from services.plausibility import Neighbour


@dataclass
class ReadingTimeline:
    """Known readings of each unit (sorted by time) and the instants its meter was replaced."""

    readings: dict[int, list[Neighbour]] = field(default_factory=dict)
    replaced: dict[int, list[datetime]] = field(default_factory=dict)

    def surroundings(self, *, unit_id: int, at: datetime) -> Surroundings:
        known = self.readings.get(unit_id, [])
        # At or before ``at`` counts as before, as the stored neighbours are found.
        split = bisect.bisect_right(known, at, key=lambda n: n.at)
        before = known[split - 1] if split else None
        after = known[split] if split < len(known) else None
        times = self.replaced.get(unit_id, [])
        return Surroundings(
            before=before,
            after=after,
            replaced_before=before is not None and any(before.at < t <= at for t in times),
            replaced_after=after is not None and any(at < t <= after.at for t in times),
        )

    def refusal(self, *, unit_id: int, at: datetime, hours: float, now: datetime) -> str | None:
        """Why the reading is implausible among the known ones (the one rule), or None."""
        around = self.surroundings(unit_id=unit_id, at=at)
        return surroundings_refusal(around, at=at, hours=hours, now=now)

    def add(self, *, unit_id: int, at: datetime, hours: float) -> None:
        """An accepted reading, a neighbour of the batch's readings checked after it."""
        bisect.insort(
            self.readings.setdefault(unit_id, []), Neighbour(at=at, hours=hours), key=lambda n: n.at
        )


def timeline_load(*, unit_ids: Sequence[int], times: Sequence[datetime]) -> ReadingTimeline:
    """The readings around ``times`` of these units, and replacements among them."""
    timeline = ReadingTimeline()
    if not unit_ids or not times:
        return timeline
    first, last = min(times), max(times)
    # Query: every stored reading of these units within the batch's span.
    inside = MeterReading.objects.filter(
        unit_id__in=unit_ids, taken_at__gt=first, taken_at__lte=last
    ).values_list("unit_id", "taken_at", "hours")
    for unit_id, at, hours in inside:
        timeline.readings.setdefault(unit_id, []).append(Neighbour(at=at, hours=hours))
    # Queries (2 + 2): the nearest reading at or before the span, and the nearest after it.
    below = surroundings_load(unit_ids=unit_ids, at=first)
    above = surroundings_load(unit_ids=unit_ids, at=last)
    low, high = first, last
    for unit_id in unit_ids:
        known = timeline.readings.setdefault(unit_id, [])
        edge_before = below[unit_id].before if unit_id in below else None
        edge_after = above[unit_id].after if unit_id in above else None
        if edge_before is not None:
            known.append(edge_before)
            low = min(low, edge_before.at)
        if edge_after is not None:
            known.append(edge_after)
            high = max(high, edge_after.at)
        known.sort(key=lambda n: n.at)
    # Query: the meter replacements between the outermost neighbours.
    replacements = MeterReplacement.objects.filter(
        unit_id__in=unit_ids, replaced_at__gt=low, replaced_at__lte=high
    ).values_list("unit_id", "replaced_at")
    for unit_id, replaced_at in replacements:
        timeline.replaced.setdefault(unit_id, []).append(replaced_at)
    return timeline
