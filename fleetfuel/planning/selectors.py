"""Reads of the planning app for the engine: its inputs and a unit's usage forecast (the due
list's reads are in due_selectors.py).

``batch_inputs_load`` makes the same number of queries whatever the batch size (asserted in
tests/planning/test_recompute.py); the result is plain per-unit bundles of rows that
fleetfuel/planning/engine.py turns into services/ calls.
"""

from __future__ import annotations

import math
import zlib
from collections import defaultdict
from dataclasses import dataclass, field
from datetime import date, datetime, time, timedelta
from typing import Any

from django.db.models import Exists, OuterRef, Q, QuerySet, Subquery, Sum

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
from fleetfuel.ledger.effective import effective_events, in_effect
from fleetfuel.ledger.models import ServiceEvent
from services import usage
from services.common import UsageForecast
from services.filter_life import LifeBudget

from .engine_tank import BatchSources
from .models import UnitForecast
from .rows import (
    DeliveryRow,
    DpRow,
    EngineEventRow,
    FuelingRow,
    FuelSampleRow,
    rows_of,
)

# How far back the engine looks for fuel, events and drains. Plans longer than this are
# still honoured for calendar limits (the last change date comes from its own query).
LOOKBACK_DAYS = 400

# --------------------------------------------------------------------------- engine inputs


def ledger_events(*kinds: str) -> QuerySet[ServiceEvent]:
    """The service history as the engine reads it: the entries in effect, each with its
    corrections applied (a correction can move an entry to another part, kind or time:
    fleetfuel/ledger/effective.py), of these kinds (all kinds when none is given). Every
    read of the ledger below goes through here; filter by ``effective_kind``, not ``kind``."""
    return effective_events(*kinds) if kinds else in_effect()


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
    fuelings: list[FuelingRow] = field(default_factory=list)
    unit_samples: list[FuelSampleRow] = field(default_factory=list)
    events: list[EngineEventRow] = field(default_factory=list)
    lifetime_relief_openings: int = 0  # since the relief valve's last replacement
    dp_readings: dict[int, list[DpRow]] = field(default_factory=dict)
    # Evidence for the unit's current hours beside its readings (see services/usage.carry):
    latest_fueled_at: datetime | None = None  # the latest fueling: the unit worked until then
    latest_service: tuple[datetime, float] | None = None  # latest ledger hour meter (meter)
    latest_fitted: tuple[date, float] | None = None  # latest part fitted, at meter hours
    valve_replaced_at: datetime | None = None  # the relief valve's last replacement or fitting
    refused: list[str] = field(default_factory=list)  # rows services/ refused, with the reason


# One recorded filter change as life evidence: unit id, when, hour meter, dP before (bar).
ChangeRow = tuple[int, datetime, float | None, float | None]


@dataclass
class BatchInputs:
    units: list[UnitInputs]
    source_samples: list[FuelSampleRow]
    sources: dict[int, FuelSource]
    # Every filter change on record for the batch's unit classes, by (class id, filter kind),
    # ordered by unit and time: the evidence services/filter_life.py fits the life from.
    filter_changes: dict[tuple[int, str], list[ChangeRow]] = field(default_factory=dict)
    lives: dict[tuple[int, str], LifeBudget] = field(default_factory=dict)  # the engine's, once
    deliveries: list[DeliveryRow] = field(default_factory=list)  # into the sources, oldest first
    # The source samples as services read them, and the sources' tank inputs: the same for
    # every unit, so the engine reads them once a batch (engine_samples.batch_source_fuel).
    source_fuel: BatchSources | None = None


def unit_forecast(b: UnitInputs, *, now: datetime) -> UsageForecast:
    """A unit's usage forecast: the one its due dates use and its page draws.

    Its hours never fall below the latest hour meter the ledger recorded or the hours at
    which a fitted part went on (engine hours), and are carried past the last reading only
    as far as the latest fueling allows (services/usage.py). Seeded by the unit's id.
    """
    floors = []
    if b.latest_service is not None:
        at, meter = b.latest_service
        floors.append(
            (at, usage.meter_to_engine_hours(meter=meter, at=at, replacements=b.replacements))
        )
    if b.latest_fitted is not None:
        on, meter = b.latest_fitted
        at = datetime.combine(on, time(), tzinfo=now.tzinfo)
        floors.append(
            (at, usage.meter_to_engine_hours(meter=meter, at=at, replacements=b.replacements))
        )
    return usage.unit_usage_forecast(
        window_readings=b.readings,
        latest=b.latest_reading,
        replacements=b.replacements,
        now=now,
        class_rate=b.unit.unit_class.typical_hours_per_day,
        floor=max(floors, key=lambda f: f[1]) if floors else None,
        evidence_at=b.latest_fueled_at,
        # Seeded by what names the unit (depot and fleet number), not its database id, so the
        # same fleet gives the same band in any installation (export_data / import_data).
        seed=zlib.crc32(f"{b.unit.site.code}/{b.unit.fleet_number}".encode()),
    )


def unit_forecast_stored(*, unit_id: int) -> UsageForecast | None:
    """The usage forecast the unit's latest projection was made from (one query), or None
    before its first projection or when its readings gave none."""
    stored = UnitForecast.objects.filter(unit_id=unit_id).first()
    return stored.usage() if stored is not None else None


def batch_inputs_load(
    *,
    unit_ids: list[int],
    now: datetime,
    lives: dict[tuple[int, str], LifeBudget] | None = None,
) -> BatchInputs:
    """Thirteen queries for any number of units (each named below); twelve with ``lives``,
    the class life budgets a full run worked out at its start (then query 13, the whole
    classes' filter changes, is not needed)."""
    since = now - timedelta(days=LOOKBACK_DAYS)
    bundles = _units_load(unit_ids=unit_ids, now=now)  # 1. units, class, site, latest records
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
    for f in rows_of(
        Fueling.objects.filter(unit_id__in=ids, fueled_at__gte=since, fueled_at__lte=now).order_by(
            "unit_id", "fueled_at"
        ),
        FuelingRow,
    ):
        bundles[f.unit_id].fuelings.append(f)
    source_samples = _samples_load(bundles=bundles, now=now, since=since)  # 8. samples
    _events_load(bundles=bundles, now=now, since=since)  # 9, 10. engine events, relief total
    _dp_load(bundles=bundles, now=now, since=since)  # 11. dP readings of the fitted filters
    sources = {s.pk: s for s in FuelSource.objects.all()}  # 12. fuel sources (a handful)
    # 13. every filter change of the batch's unit classes: the life evidence
    filter_changes = {} if lives is not None else filter_changes_load(class_ids=class_ids, now=now)
    # 14. deliveries into the sources in the look-back (each source's tank model)
    deliveries = rows_of(
        Delivery.objects.filter(delivered_at__gte=since, delivered_at__lte=now).order_by(
            "delivered_at", "pk"
        ),
        DeliveryRow,
    )
    return BatchInputs(
        units=[bundles[i] for i in ids],
        source_samples=source_samples,
        sources=sources,
        filter_changes=filter_changes,
        lives=dict(lives or {}),
        deliveries=deliveries,
    )


def filter_changes_load(
    *, class_ids: set[int], now: datetime
) -> dict[tuple[int, str], list[ChangeRow]]:
    """One query: the filter changes recorded up to ``now`` on every unit of these classes
    (disposed units too: their history is evidence), by (class, filter kind)."""
    out: dict[tuple[int, str], list[ChangeRow]] = defaultdict(list)
    for class_id, kind, unit_id, at, meter, dp in (
        ledger_events(ServiceEvent.Kind.FILTER_CHANGED)
        .filter(
            unit__unit_class_id__in=class_ids,
            component_kind__in=[ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER],
            performed_at__lte=now,
        )
        .order_by("unit_id", "performed_at", "id")
        .values_list(
            "unit__unit_class_id",
            "component_kind",
            "unit_id",
            "performed_at",
            "hour_meter",
            "dp_before_bar",
        )
    ):
        out[(class_id, kind)].append((unit_id, at, meter, dp))
    return dict(out)


def _units_load(*, unit_ids: list[int], now: datetime) -> dict[int, UnitInputs]:
    """One query: the units with class and site, and each one's latest meter reading,
    fueling, ledger hour meter, fitted part and relief-valve replacement (all up to now)."""
    latest = MeterReading.objects.filter(unit_id=OuterRef("pk"), taken_at__lte=now).order_by(
        "-taken_at"
    )
    fueled = Fueling.objects.filter(unit_id=OuterRef("pk"), fueled_at__lte=now)
    service = (
        ledger_events()
        .filter(unit_id=OuterRef("pk"), performed_at__lte=now, hour_meter__isnull=False)
        .order_by("-performed_at")
    )
    fitted = Component.objects.filter(
        unit_id=OuterRef("pk"), installed_on__lte=now.date(), removed_on__isnull=True
    ).order_by("-installed_on", "-installed_hours")
    valve = (
        ledger_events(ServiceEvent.Kind.RELIEF_VALVE_REPLACED)
        .filter(unit_id=OuterRef("pk"), performed_at__lte=now)
        .order_by("-performed_at")
    )
    valve_fitted = fitted.filter(kind=ComponentKind.RELIEF_VALVE)
    units = (
        Unit.objects.filter(pk__in=unit_ids)
        .select_related("unit_class", "site")
        .annotate(
            latest_at=Subquery(latest.values("taken_at")[:1]),
            latest_hours=Subquery(latest.values("hours")[:1]),
            fueled_at=Subquery(fueled.order_by("-fueled_at").values("fueled_at")[:1]),
            service_at=Subquery(service.values("performed_at")[:1]),
            service_meter=Subquery(service.values("hour_meter")[:1]),
            fitted_on=Subquery(fitted.values("installed_on")[:1]),
            fitted_hours=Subquery(fitted.values("installed_hours")[:1]),
            valve_at=Subquery(valve.values("performed_at")[:1]),
            valve_on=Subquery(valve_fitted.values("installed_on")[:1]),
        )
        .order_by("pk")
    )
    return {u.pk: _unit_inputs(u, now=now) for u in units}


def _unit_inputs(u: Any, *, now: datetime) -> UnitInputs:
    valve = [u.valve_at] if u.valve_at is not None else []
    if u.valve_on is not None:
        valve.append(datetime.combine(u.valve_on, time(), tzinfo=now.tzinfo))
    b = UnitInputs(
        unit=u,
        latest_reading=None,
        latest_fueled_at=u.fueled_at,
        latest_service=(u.service_at, u.service_meter) if _hours_ok(u.service_meter) else None,
        latest_fitted=(u.fitted_on, u.fitted_hours) if _hours_ok(u.fitted_hours) else None,
        valve_replaced_at=max(valve) if valve else None,
    )
    if u.latest_at is not None:
        b.latest_reading = _reading_make(b, at=u.latest_at, hours=u.latest_hours)
    return b


def _hours_ok(hours: float | None) -> bool:
    """A recorded hour meter that can stand as the unit's floor (a number, not negative)."""
    return hours is not None and math.isfinite(hours) and hours >= 0


def _reading_make(b: UnitInputs, *, at: datetime, hours: float) -> usage.MeterReading | None:
    """A meter reading as services/ takes it, or None with the reason kept on the unit."""
    try:
        return usage.MeterReading(at=at, hours=hours)
    except ValueError as exc:
        if str(exc) not in b.refused:
            b.refused.append(str(exc))
        return None


def _readings_load(*, bundles: dict[int, UnitInputs], now: datetime) -> None:
    window_start = now - timedelta(days=usage.FORECAST_WINDOW_DAYS)
    for unit_id, at, hours in (
        MeterReading.objects.filter(
            unit_id__in=list(bundles), taken_at__gte=window_start, taken_at__lte=now
        )
        .order_by("unit_id", "taken_at")
        .values_list("unit_id", "taken_at", "hours")
    ):
        reading = _reading_make(bundles[unit_id], at=at, hours=hours)
        if reading is not None:
            bundles[unit_id].readings.append(reading)


def _replacements_load(*, bundles: dict[int, UnitInputs]) -> None:
    for rep in MeterReplacement.objects.filter(unit_id__in=list(bundles)).order_by("replaced_at"):
        try:
            bundles[rep.unit_id].replacements.append(
                usage.MeterReplacement(
                    at=rep.replaced_at,
                    old_meter_final=rep.old_meter_final,
                    new_meter_start=rep.new_meter_start,
                )
            )
        except ValueError as exc:
            bundles[rep.unit_id].refused.append(str(exc))


def _ledger_load(*, bundles: dict[int, UnitInputs], now: datetime, since: datetime) -> None:
    """Filter changes and drains from the ledger (latest change per kind; recent drains)."""
    rows = (
        ledger_events(ServiceEvent.Kind.FILTER_CHANGED, ServiceEvent.Kind.SEPARATOR_DRAINED)
        .filter(unit_id__in=list(bundles), performed_at__lte=now)
        .order_by("unit_id", "performed_at")
        .values_list(
            "unit_id",
            "effective_kind",
            "component_kind",
            "performed_at",
            "hour_meter",
            "water_ml",
            "id",
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
) -> list[FuelSampleRow]:
    """Every source sample in the look-back (few), and the batch's tank samples."""
    source_samples: list[FuelSampleRow] = []
    for s in rows_of(
        FuelSample.objects.filter(
            sampled_at__lte=now, sampled_at__gte=since - timedelta(days=LOOKBACK_DAYS)
        ).filter(source__isnull=False)
        | FuelSample.objects.filter(unit_id__in=list(bundles), sampled_at__lte=now),
        FuelSampleRow,
    ):
        if s.unit_id is not None:
            bundles[s.unit_id].unit_samples.append(s)
        else:
            source_samples.append(s)
    return source_samples


def _events_load(*, bundles: dict[int, UnitInputs], now: datetime, since: datetime) -> None:
    """Two queries: engine events in the look-back, and lifetime relief-valve openings."""
    ids = list(bundles)
    for e in rows_of(
        EngineEvent.objects.filter(
            unit_id__in=ids, occurred_at__gte=since, occurred_at__lte=now
        ).order_by("unit_id", "occurred_at"),
        EngineEventRow,
    ):
        bundles[e.unit_id].events.append(e)
    # Openings since the valve's last replacement (a ledger event) or fitting (a component).
    replaced_since = ledger_events(ServiceEvent.Kind.RELIEF_VALVE_REPLACED).filter(
        unit_id=OuterRef("unit_id"),
        performed_at__gte=OuterRef("occurred_at"),
        performed_at__lte=now,
    )
    fitted_since = Component.objects.filter(
        unit_id=OuterRef("unit_id"),
        kind=ComponentKind.RELIEF_VALVE,
        removed_on__isnull=True,
        installed_on__gt=OuterRef("occurred_at"),  # midnight of the day it went on
        installed_on__lte=now.date(),
    )
    for unit_id, total in (
        EngineEvent.objects.filter(
            Q(unit_id__in=ids, kind=EngineEvent.Kind.RELIEF_VALVE_OPENED, occurred_at__lte=now),
            ~Exists(replaced_since),
            ~Exists(fitted_since),
        )
        .values("unit_id")
        .annotate(total=Sum("occurrences"))
        .values_list("unit_id", "total")
    ):
        bundles[unit_id].lifetime_relief_openings = total or 0


def _dp_load(*, bundles: dict[int, UnitInputs], now: datetime, since: datetime) -> None:
    comp_to_unit = {c.pk: c.unit_id for b in bundles.values() for c in b.filters.values()}
    for dp in rows_of(
        FilterPressureReading.objects.filter(
            component_id__in=list(comp_to_unit), taken_at__gte=since, taken_at__lte=now
        ).order_by("component_id", "taken_at"),
        DpRow,
    ):
        readings = bundles[comp_to_unit[dp.component_id]].dp_readings
        readings.setdefault(dp.component_id, []).append(dp)
