"""Reads of the planning app: the engine's inputs, a unit's usage forecast, the due list.

``batch_inputs_load`` makes the same number of queries whatever the batch size (asserted in
tests/planning/test_recompute.py); the result is plain per-unit bundles of rows that
fleetfuel/planning/engine.py turns into services/ calls. The due list's queries do not grow
with the fleet either (tests/pages/test_due_list.py); its paging fetches one row more than a
page to know whether a next page exists, so it never counts the whole table.
"""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Mapping
from dataclasses import dataclass, field
from datetime import date, datetime, timedelta
from typing import Any

from django.db.models import Count, Exists, OuterRef, QuerySet, Subquery, Sum

from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
    Delivery,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    FuelSource,
    MeterReading,
    MeterReplacement,
    ServicePlan,
    Unit,
)
from fleetfuel.ledger.models import ServiceEvent
from services import usage
from services.common import UsageForecast

from .models import DueItem, UnitFlag

# How far back the engine looks for fuel, events and drains. Plans longer than this are
# still honoured for calendar limits (the last change date comes from its own query).
LOOKBACK_DAYS = 400

# --------------------------------------------------------------------------- engine inputs


@dataclass
class UnitInputs:
    unit: Unit
    latest_reading: usage.MeterReading | None
    filters: dict[str, Component] = field(default_factory=dict)
    plans: dict[str, ServicePlan] = field(default_factory=dict)
    readings: list[usage.MeterReading] = field(default_factory=list)  # the forecast window
    replacements: list[usage.MeterReplacement] = field(default_factory=list)
    last_change: dict[str, tuple[datetime, float | None, int]] = field(default_factory=dict)
    drains: list[tuple[datetime, float | None, float | None]] = field(default_factory=list)
    fuelings: list[Fueling] = field(default_factory=list)
    unit_samples: list[FuelSample] = field(default_factory=list)
    events: list[EngineEvent] = field(default_factory=list)
    lifetime_relief_openings: int = 0
    dp_readings: dict[int, list[FilterPressureReading]] = field(default_factory=dict)


@dataclass
class BatchInputs:
    units: list[UnitInputs]
    source_samples: list[FuelSample]
    sources: dict[int, FuelSource]
    deliveries: list[Delivery] = field(default_factory=list)  # into the sources, oldest first


def unit_forecast(b: UnitInputs, *, now: datetime) -> UsageForecast:
    """A unit's usage forecast: the one its due dates use and its page draws."""
    return usage.unit_usage_forecast(
        window_readings=b.readings,
        latest=b.latest_reading,
        replacements=b.replacements,
        now=now,
        class_rate=b.unit.unit_class.typical_hours_per_day,
    )


def unit_forecast_get(*, unit_id: int, now: datetime) -> UsageForecast:
    """One unit's usage forecast, as the engine computes it (three queries)."""
    bundles = _units_load(unit_ids=[unit_id])  # 1. the unit with its class and latest reading
    _readings_load(bundles=bundles, now=now)  # 2. its readings in the forecast window
    _replacements_load(bundles=bundles)  # 3. its meter replacements
    return unit_forecast(bundles[unit_id], now=now)


def batch_inputs_load(*, unit_ids: list[int], now: datetime) -> BatchInputs:
    """Twelve queries for any number of units (each named below)."""
    since = now - timedelta(days=LOOKBACK_DAYS)
    bundles = _units_load(unit_ids=unit_ids)  # 1. units, class, site and latest reading
    ids = list(bundles)
    # 2. fitted filters
    for comp in Component.objects.filter(
        unit_id__in=ids,
        kind__in=[ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER],
        removed_on__isnull=True,
    ):
        bundles[comp.unit_id].filters[comp.kind] = comp
    # 3. service plans of the classes in the batch
    plans_by_class: dict[int, dict[str, ServicePlan]] = defaultdict(dict)
    class_ids = {b.unit.unit_class_id for b in bundles.values()}
    for plan in ServicePlan.objects.filter(unit_class_id__in=class_ids):
        plans_by_class[plan.unit_class_id][plan.component_kind] = plan
    for b in bundles.values():
        b.plans = plans_by_class.get(b.unit.unit_class_id, {})
    _readings_load(bundles=bundles, now=now)  # 4. readings in the forecast window
    _replacements_load(bundles=bundles)  # 5. meter replacements (all: offsets accumulate)
    _ledger_load(bundles=bundles, now=now, since=since)  # 6. filter changes and drains
    # 7. fuelings in the look-back
    for f in Fueling.objects.filter(
        unit_id__in=ids, fueled_at__gte=since, fueled_at__lte=now
    ).order_by("unit_id", "fueled_at"):
        bundles[f.unit_id].fuelings.append(f)
    source_samples = _samples_load(bundles=bundles, now=now, since=since)  # 8. samples
    _events_load(bundles=bundles, now=now, since=since)  # 9, 10. engine events, relief total
    _dp_load(bundles=bundles, now=now, since=since)  # 11. dP readings of the fitted filters
    sources = {s.pk: s for s in FuelSource.objects.all()}  # 12. fuel sources (a handful)
    # 13. deliveries into the sources in the look-back (each source's tank model)
    deliveries = list(
        Delivery.objects.filter(delivered_at__gte=since, delivered_at__lte=now).order_by(
            "delivered_at", "pk"
        )
    )
    return BatchInputs(
        units=[bundles[i] for i in ids],
        source_samples=source_samples,
        sources=sources,
        deliveries=deliveries,
    )


def _units_load(*, unit_ids: list[int]) -> dict[int, UnitInputs]:
    """One query: the units with class and site, and each one's latest meter reading."""
    latest = MeterReading.objects.filter(unit_id=OuterRef("pk")).order_by("-taken_at")
    units = (
        Unit.objects.filter(pk__in=unit_ids)
        .select_related("unit_class", "site")
        .annotate(
            latest_at=Subquery(latest.values("taken_at")[:1]),
            latest_hours=Subquery(latest.values("hours")[:1]),
        )
        .order_by("pk")
    )
    return {
        u.pk: UnitInputs(
            unit=u,
            latest_reading=(
                usage.MeterReading(at=u.latest_at, hours=u.latest_hours)  # type: ignore[attr-defined]
                if u.latest_at is not None  # type: ignore[attr-defined]
                else None
            ),
        )
        for u in units
    }


def _readings_load(*, bundles: dict[int, UnitInputs], now: datetime) -> None:
    window_start = now - timedelta(days=usage.FORECAST_WINDOW_DAYS)
    for unit_id, at, hours in (
        MeterReading.objects.filter(
            unit_id__in=list(bundles), taken_at__gte=window_start, taken_at__lte=now
        )
        .order_by("unit_id", "taken_at")
        .values_list("unit_id", "taken_at", "hours")
    ):
        bundles[unit_id].readings.append(usage.MeterReading(at=at, hours=hours))


def _replacements_load(*, bundles: dict[int, UnitInputs]) -> None:
    for rep in MeterReplacement.objects.filter(unit_id__in=list(bundles)).order_by("replaced_at"):
        bundles[rep.unit_id].replacements.append(
            usage.MeterReplacement(
                at=rep.replaced_at,
                old_meter_final=rep.old_meter_final,
                new_meter_start=rep.new_meter_start,
            )
        )


def _ledger_load(*, bundles: dict[int, UnitInputs], now: datetime, since: datetime) -> None:
    """Filter changes and drains from the ledger (latest change per kind; recent drains)."""
    rows = (
        ServiceEvent.objects.filter(
            unit_id__in=list(bundles),
            kind__in=[ServiceEvent.Kind.FILTER_CHANGED, ServiceEvent.Kind.SEPARATOR_DRAINED],
            performed_at__lte=now,
        )
        .order_by("unit_id", "performed_at")
        .values_list(
            "unit_id", "kind", "component_kind", "performed_at", "hour_meter", "water_ml", "id"
        )
    )
    for unit_id, kind, comp_kind, at, hours, water, event_id in rows:
        b = bundles[unit_id]
        if kind == ServiceEvent.Kind.FILTER_CHANGED:
            b.last_change[comp_kind] = (at, hours, event_id)
        elif at >= since:
            b.drains.append((at, hours, water))


def _samples_load(
    *, bundles: dict[int, UnitInputs], now: datetime, since: datetime
) -> list[FuelSample]:
    """Every source sample in the look-back (few), and the batch's tank samples."""
    source_samples: list[FuelSample] = []
    for s in FuelSample.objects.filter(
        sampled_at__lte=now, sampled_at__gte=since - timedelta(days=LOOKBACK_DAYS)
    ).filter(source__isnull=False) | FuelSample.objects.filter(
        unit_id__in=list(bundles), sampled_at__lte=now
    ):
        if s.unit_id is not None:
            bundles[s.unit_id].unit_samples.append(s)
        else:
            source_samples.append(s)
    return source_samples


def _events_load(*, bundles: dict[int, UnitInputs], now: datetime, since: datetime) -> None:
    """Two queries: engine events in the look-back, and lifetime relief-valve openings."""
    ids = list(bundles)
    for e in EngineEvent.objects.filter(
        unit_id__in=ids, occurred_at__gte=since, occurred_at__lte=now
    ).order_by("unit_id", "occurred_at"):
        bundles[e.unit_id].events.append(e)
    for unit_id, total in (
        EngineEvent.objects.filter(
            unit_id__in=ids, kind=EngineEvent.Kind.RELIEF_VALVE_OPENED, occurred_at__lte=now
        )
        .values("unit_id")
        .annotate(total=Sum("occurrences"))
        .values_list("unit_id", "total")
    ):
        bundles[unit_id].lifetime_relief_openings = total or 0


def _dp_load(*, bundles: dict[int, UnitInputs], now: datetime, since: datetime) -> None:
    comp_to_unit = {c.pk: c.unit_id for b in bundles.values() for c in b.filters.values()}
    for dp in FilterPressureReading.objects.filter(
        component_id__in=list(comp_to_unit), taken_at__gte=since, taken_at__lte=now
    ).order_by("component_id", "taken_at"):
        readings = bundles[comp_to_unit[dp.component_id]].dp_readings
        readings.setdefault(dp.component_id, []).append(dp)


# --------------------------------------------------------------------------- the due list

PAGE_SIZE = 50
SORTS = {
    "due": ["due_on", "id"],  # walks the (site, [status,] due_on, id) index
    "unit": ["unit__fleet_number", "due_on", "task", "id"],
    "task": ["task", "due_on", "unit__fleet_number", "id"],
    "status": ["rank", "due_on", "unit__fleet_number", "id"],
}


@dataclass
class DuePage:
    items: list[DueItem]
    counts: dict[str, int]
    page: int
    has_next: bool
    flags_by_unit: dict[int, list[UnitFlag]] = field(default_factory=dict)


def due_items_filtered(
    *, site_ids: list[int], data: dict[str, Any], today: date
) -> QuerySet[DueItem]:
    # Disposed units have no due items: the recompute skips them and clears their rows.
    qs = DueItem.objects.filter(site_id__in=site_ids)
    if data.get("site"):
        qs = qs.filter(site_id=data["site"].pk)
    if data.get("unit_class"):
        qs = qs.filter(unit__unit_class=data["unit_class"])
    if data.get("task"):
        qs = qs.filter(task=data["task"])
    if data.get("within_days") is not None:
        qs = qs.filter(due_on__lte=today + timedelta(days=data["within_days"]))
    if data.get("within_hours") is not None:
        # Hours left = due hours minus the engine hours the projection started from.
        qs = qs.filter(hours_left__lte=data["within_hours"])
    if data.get("flagged"):
        qs = qs.filter(Exists(UnitFlag.objects.filter(unit_id=OuterRef("unit_id"))))
    if data.get("q"):
        qs = qs.filter(unit__fleet_number__icontains=data["q"].strip())
    return qs


def due_page(
    *,
    site_ids: list[int],
    data: dict[str, Any],
    today: date,
    annotations: Mapping[str, Any] | None = None,
) -> DuePage:
    """The page of due items for these filters: three queries whatever the fleet size.

    ``annotations`` are added to each row in the page's query (the composing page passes
    what other apps say of an item, such as whether it is in an open work order).
    """
    base = due_items_filtered(site_ids=site_ids, data=data, today=today)
    # Query 1: counts by status over the filtered set (without the status filter itself).
    counts = dict.fromkeys(DueItem.Status.values, 0)
    for row in base.values("status").annotate(n=Count("id")).order_by():
        counts[row["status"]] = row["n"]
    qs = base.filter(status=data["status"]) if data.get("status") else base
    page = data.get("page") or 1
    # Query 2: one page of rows (+1 to know if there is a next page), with unit, site,
    # class and component joined, and the caller's annotations.
    rows = list(
        qs.select_related("unit", "unit__site", "unit__unit_class", "component")
        .annotate(**(annotations or {}))
        .order_by(*SORTS.get(data.get("sort") or "due", SORTS["due"]))
        .defer("inputs")[(page - 1) * PAGE_SIZE : page * PAGE_SIZE + 1]
    )
    has_next = len(rows) > PAGE_SIZE
    rows = rows[:PAGE_SIZE]
    # Query 3: the flags of the units on this page.
    flags: dict[int, list[UnitFlag]] = {}
    for flag in UnitFlag.objects.filter(unit_id__in={r.unit_id for r in rows}).order_by("code"):
        flags.setdefault(flag.unit_id, []).append(flag)
    return DuePage(items=rows, counts=counts, page=page, has_next=has_next, flags_by_unit=flags)
