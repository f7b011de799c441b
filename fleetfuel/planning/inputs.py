"""Load everything the engine needs for a batch of units, in a fixed number of queries.

``batch_inputs_load`` makes the same number of queries whatever the batch size (asserted in
tests/planning/test_recompute.py); the result is plain per-unit bundles of rows that
fleetfuel/planning/engine.py turns into services/ calls.
"""

from __future__ import annotations

from collections import defaultdict
from dataclasses import dataclass, field
from datetime import datetime, timedelta

from django.db.models import OuterRef, Subquery, Sum

from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
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

FORECAST_WINDOW_DAYS = 90
# How far back the engine looks for fuel, events and drains. Plans longer than this are
# still honoured for calendar limits (the last change date comes from its own query).
LOOKBACK_DAYS = 400


@dataclass
class UnitInputs:
    unit: Unit
    latest_reading: tuple[datetime, float] | None
    filters: dict[str, Component] = field(default_factory=dict)
    plans: dict[str, ServicePlan] = field(default_factory=dict)
    readings: list[tuple[datetime, float]] = field(default_factory=list)
    replacements: list[MeterReplacement] = field(default_factory=list)
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


def batch_inputs_load(*, unit_ids: list[int], now: datetime) -> BatchInputs:
    """Twelve queries for any number of units (each named below)."""
    since = now - timedelta(days=LOOKBACK_DAYS)
    window_start = now - timedelta(days=FORECAST_WINDOW_DAYS)
    latest = MeterReading.objects.filter(unit_id=OuterRef("pk")).order_by("-taken_at")
    # 1. units with class and site, and each unit's latest reading
    units = list(
        Unit.objects.filter(pk__in=unit_ids)
        .select_related("unit_class", "site")
        .annotate(
            latest_at=Subquery(latest.values("taken_at")[:1]),
            latest_hours=Subquery(latest.values("hours")[:1]),
        )
        .order_by("pk")
    )
    bundles = {
        u.pk: UnitInputs(
            unit=u,
            latest_reading=(u.latest_at, u.latest_hours) if u.latest_at is not None else None,  # type: ignore[attr-defined]
        )
        for u in units
    }
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
    for plan in ServicePlan.objects.filter(unit_class_id__in={u.unit_class_id for u in units}):
        plans_by_class[plan.unit_class_id][plan.component_kind] = plan
    for b in bundles.values():
        b.plans = plans_by_class.get(b.unit.unit_class_id, {})
    # 4. readings in the forecast window
    for r in MeterReading.objects.filter(
        unit_id__in=ids, taken_at__gte=window_start, taken_at__lte=now
    ).order_by("unit_id", "taken_at"):
        bundles[r.unit_id].readings.append((r.taken_at, r.hours))
    # 5. meter replacements (all: offsets accumulate)
    for rep in MeterReplacement.objects.filter(unit_id__in=ids).order_by("replaced_at"):
        bundles[rep.unit_id].replacements.append(rep)
    # 6. filter changes and drains from the ledger (latest change per kind; recent drains)
    rows = (
        ServiceEvent.objects.filter(
            unit_id__in=ids,
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
    # 7. fuelings in the look-back
    for f in Fueling.objects.filter(
        unit_id__in=ids, fueled_at__gte=since, fueled_at__lte=now
    ).order_by("unit_id", "fueled_at"):
        bundles[f.unit_id].fuelings.append(f)
    # 8. samples: every source sample in the look-back (few), and the batch's tank samples
    source_samples: list[FuelSample] = []
    for s in FuelSample.objects.filter(
        sampled_at__lte=now, sampled_at__gte=since - timedelta(days=LOOKBACK_DAYS)
    ).filter(source__isnull=False) | FuelSample.objects.filter(
        unit_id__in=ids, sampled_at__lte=now
    ):
        if s.unit_id is not None:
            bundles[s.unit_id].unit_samples.append(s)
        else:
            source_samples.append(s)
    # 9. engine events in the look-back
    for e in EngineEvent.objects.filter(
        unit_id__in=ids, occurred_at__gte=since, occurred_at__lte=now
    ).order_by("unit_id", "occurred_at"):
        bundles[e.unit_id].events.append(e)
    # 10. lifetime relief-valve openings per unit
    for unit_id, total in (
        EngineEvent.objects.filter(
            unit_id__in=ids, kind=EngineEvent.Kind.RELIEF_VALVE_OPENED, occurred_at__lte=now
        )
        .values("unit_id")
        .annotate(total=Sum("occurrences"))
        .values_list("unit_id", "total")
    ):
        bundles[unit_id].lifetime_relief_openings = total or 0
    # 11. differential-pressure readings of the fitted filters
    comp_to_unit = {c.pk: c.unit_id for b in bundles.values() for c in b.filters.values()}
    for dp in FilterPressureReading.objects.filter(
        component_id__in=list(comp_to_unit), taken_at__gte=since, taken_at__lte=now
    ).order_by("component_id", "taken_at"):
        bundles[comp_to_unit[dp.component_id]].dp_readings.setdefault(dp.component_id, []).append(
            dp
        )
    # 12. fuel sources (a handful)
    sources = {s.pk: s for s in FuelSource.objects.all()}
    return BatchInputs(
        units=[bundles[i] for i in ids], source_samples=source_samples, sources=sources
    )
