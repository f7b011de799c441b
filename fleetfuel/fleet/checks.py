"""The plausibility rule (``services.plausibility``) applied to stored rows.

Loads each reading's neighbours and the meter replacements between them in a fixed number of
queries (two, for any number of units), and calls the rule. Every path that stores a reading
or a fueling (the model's ``clean``, the entry pages, imports, the feed, the work-order close)
asks here, so the same readings are refused everywhere.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import datetime, tzinfo

from django.db.models import OuterRef, Subquery

from services.plausibility import Neighbour, fueling_refusal, reading_refusal

# The models module, not its names: ``MeterReading.clean`` calls this module, so the names
# are looked up when a check runs, after both modules are loaded.
from . import models


@dataclass(frozen=True)
class Surroundings:
    """A unit's readings on either side of an instant, and replacements between them."""

    before: Neighbour | None
    after: Neighbour | None
    replaced_before: bool
    replaced_after: bool


def _neighbour(at: datetime | None, hours: float | None) -> Neighbour | None:
    return None if at is None or hours is None else Neighbour(at=at, hours=hours)


def surroundings_load(
    *, unit_ids: Iterable[int], at: datetime, exclude_pk: int | None = None
) -> dict[int, Surroundings]:
    """Each unit's nearest reading at or before ``at`` and after it, and whether a meter
    replacement lies between either and ``at``. Two queries, whatever the number of units."""
    ids = list(unit_ids)
    if not ids:
        return {}
    readings = models.MeterReading.objects.filter(unit_id=OuterRef("pk"))
    if exclude_pk is not None:
        readings = readings.exclude(pk=exclude_pk)
    earlier = readings.filter(taken_at__lte=at).order_by("-taken_at", "-pk")
    later = readings.filter(taken_at__gt=at).order_by("taken_at", "pk")
    # Query 1: the units with both neighbours, four correlated subqueries in one statement.
    rows = list(
        models.Unit.objects.filter(pk__in=ids)
        .annotate(
            b_at=Subquery(earlier.values("taken_at")[:1]),
            b_hours=Subquery(earlier.values("hours")[:1]),
            a_at=Subquery(later.values("taken_at")[:1]),
            a_hours=Subquery(later.values("hours")[:1]),
        )
        .values_list("pk", "b_at", "b_hours", "a_at", "a_hours")
    )
    # Query 2: every replacement of these units between the earliest and latest neighbour.
    low = min([at, *(b_at for _, b_at, _, _, _ in rows if b_at is not None)])
    high = max([at, *(a_at for _, _, _, a_at, _ in rows if a_at is not None)])
    replaced: dict[int, list[datetime]] = {}
    if low < high:
        span = models.MeterReplacement.objects.filter(
            unit_id__in=ids, replaced_at__gt=low, replaced_at__lte=high
        ).order_by()
        for unit_id, replaced_at in span.values_list("unit_id", "replaced_at"):
            replaced.setdefault(unit_id, []).append(replaced_at)
    found = {}
    for pk, b_at, b_hours, a_at, a_hours in rows:
        times = replaced.get(pk, [])
        found[pk] = Surroundings(
            before=_neighbour(b_at, b_hours),
            after=_neighbour(a_at, a_hours),
            replaced_before=b_at is not None and any(b_at < t <= at for t in times),
            replaced_after=a_at is not None and any(at < t <= a_at for t in times),
        )
    return found


def _in_zone(n: Neighbour | None, zone: tzinfo | None) -> Neighbour | None:
    return n if n is None or zone is None else Neighbour(at=n.at.astimezone(zone), hours=n.hours)


def surroundings_refusal(
    s: Surroundings | None,
    *,
    at: datetime,
    hours: float,
    now: datetime,
    zone: tzinfo | None = None,
) -> str | None:
    """The rule for a reading among surroundings already loaded (None: no neighbours).
    ``zone``: the time zone the refusal's times are written in (the depot's)."""
    s = s or Surroundings(before=None, after=None, replaced_before=False, replaced_after=False)
    if zone is not None:
        at, now = at.astimezone(zone), now.astimezone(zone)
    return reading_refusal(
        at=at,
        hours=hours,
        before=_in_zone(s.before, zone),
        after=_in_zone(s.after, zone),
        replaced_before=s.replaced_before,
        replaced_after=s.replaced_after,
        now=now,
    )


def meter_readings_refusals(
    *,
    hours_by_unit: Mapping[int, float],
    at: datetime,
    now: datetime,
    zone: tzinfo | None = None,
) -> dict[int, str]:
    """Why each refused reading of a round (unit id -> hours, all read at ``at``) is refused;
    units whose reading is plausible are absent. Two queries, whatever the number of units."""
    around = surroundings_load(unit_ids=hours_by_unit, at=at)
    refusals = {}
    for unit_id, hours in hours_by_unit.items():
        reason = surroundings_refusal(around.get(unit_id), at=at, hours=hours, now=now, zone=zone)
        if reason:
            refusals[unit_id] = reason
    return refusals


def meter_reading_refusal(
    *,
    unit: models.Unit,
    at: datetime,
    hours: float,
    now: datetime,
    exclude_pk: int | None = None,
    zone: tzinfo | None = None,
) -> str | None:
    """Why one reading of ``unit`` is implausible among its stored neighbours, or None.
    ``exclude_pk`` leaves the reading itself out when it is being edited; ``zone`` is the
    time zone the refusal's times are written in (UTC when None)."""
    around = surroundings_load(unit_ids=[unit.pk], at=at, exclude_pk=exclude_pk)
    return surroundings_refusal(around.get(unit.pk), at=at, hours=hours, now=now, zone=zone)


def unit_tank_l(unit: models.Unit) -> float | None:
    """The unit's own tank capacity, else its class's typical tank (None if neither)."""
    return unit.tank_capacity_l or unit.unit_class.typical_tank_l


def fueling_refusal_for(*, unit: models.Unit, litres: float) -> str | None:
    """Why fuelling ``litres`` into ``unit`` is implausible, or None."""
    return fueling_refusal(litres=litres, tank_l=unit_tank_l(unit))
