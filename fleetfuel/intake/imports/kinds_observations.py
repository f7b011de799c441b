"""Layouts of what is observed of units: hour readings, fuelings, bulk deliveries, engine
events, filter differential pressures."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from django.db.models import F

from fleetfuel.fleet.checks import fueling_refusal_for
from fleetfuel.fleet.models import (
    FILTER_KINDS,
    Component,
    Delivery,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    MeterReading,
)
from services.units import psi_to_bar, us_gal_to_litres

from .columns import Column
from .kind import Context, Layout, RowRefused, row_save, unit_columns

READINGS = (
    *unit_columns(),
    Column("taken_at", "taken_at", "datetime"),
    Column("hours", "hours", "number", low=0, high=1_000_000, note="the meter as read"),
    Column("source", "source", "choice", required=False, choices=tuple(MeterReading.Source.values)),
)


def reading_store(values: dict[str, Any], ctx: Context) -> str:
    unit = ctx.unit_get(values)
    at = ctx.instant(
        values["taken_at"], time_zone=unit.site.time_zone, column="taken_at", what="reading"
    )
    existing = ctx.readings.existing(unit, at)
    refusal = ctx.readings.refusal(unit, at=at, hours=values["hours"], now=ctx.now)
    if refusal:
        raise RowRefused("hours", refusal)
    fields = {"hours": values["hours"], "source": values["source"] or MeterReading.Source.MANUAL}
    reading = MeterReading(unit=unit, taken_at=at, **fields)
    # The rule above is what MeterReading.clean would ask again: only the fields are checked.
    outcome = row_save(reading, fields, existing, ctx, exclude=["unit"], fields_only=True)
    ctx.readings.stored(unit, row=existing or reading)
    return outcome


def reading_rows() -> Iterator[dict[str, Any]]:
    qs = MeterReading.objects.select_related("unit__site").order_by("unit_id", "taken_at")
    for r in qs.iterator(chunk_size=2000):
        yield {"unit": r.unit.fleet_number, "site": r.unit.site.code, "taken_at": r.taken_at,
               "hours": r.hours, "source": r.source}  # fmt: skip


FUELINGS = (
    *unit_columns(),
    Column("fueled_at", "fueled_at", "datetime"),
    Column("litres", "litres", "number", low=0.1, high=20_000,
           alternatives=(("us_gal", us_gal_to_litres),)),
    Column("source", "source", required=False, max_length=100, note="fuel source name"),
)  # fmt: skip


def fueling_store(values: dict[str, Any], ctx: Context) -> str:
    unit = ctx.unit_get(values)
    at = ctx.instant(
        values["fueled_at"], time_zone=unit.site.time_zone, column="fueled_at", what="fueling"
    )
    refusal = fueling_refusal_for(unit=unit, litres=values["litres"])
    if refusal:
        raise RowRefused("litres", refusal)
    source = ctx.source_get(values["source"]) if values["source"] else None
    fields = {"litres": values["litres"], "source": source}
    stored = ctx.found("fuelings", unit.pk, lambda: _fuelings_at(unit))
    existing = stored.get(at)
    fueling = Fueling(unit=unit, fueled_at=at, **fields)
    outcome = row_save(fueling, fields, existing, ctx, exclude=["unit", "source"])  # both read
    stored.setdefault(at, fueling)
    return outcome


def _fuelings_at(unit: Any) -> dict[Any, Fueling]:
    """The unit's fuelings by instant (the first stored, where two share one)."""
    found: dict[Any, Fueling] = {}
    for fueling in Fueling.objects.filter(unit=unit).select_related("source").order_by("pk"):
        fueling.unit = unit
        found.setdefault(fueling.fueled_at, fueling)
    return found


def fueling_rows() -> Iterator[dict[str, Any]]:
    qs = Fueling.objects.select_related("unit__site", "source").order_by("unit_id", "fueled_at")
    for f in qs.iterator(chunk_size=2000):
        yield {"unit": f.unit.fleet_number, "site": f.unit.site.code, "fueled_at": f.fueled_at,
               "litres": f.litres, "source": f.source.name if f.source else ""}  # fmt: skip


DELIVERIES = (
    Column("source", "source", max_length=100, note="fuel source name"),
    Column("delivered_at", "delivered_at", "datetime"),
    Column("litres", "litres", "number", low=1, high=1_000_000,
           alternatives=(("us_gal", us_gal_to_litres),)),
    Column("supplier", "supplier", required=False, max_length=100),
    Column("ticket", "ticket", required=False, max_length=60),
)  # fmt: skip


def delivery_store(values: dict[str, Any], ctx: Context) -> str:
    source = ctx.source_get(values["source"])
    zone = source.site.time_zone if source.site else "UTC"
    at = ctx.instant(values["delivered_at"], time_zone=zone, column="delivered_at", what="delivery")
    fields = {n: values[n] for n in ("litres", "supplier", "ticket")}
    existing = Delivery.objects.filter(source=source, delivered_at=at).first()
    return row_save(Delivery(source=source, delivered_at=at, **fields), fields, existing, ctx)


def delivery_rows() -> Iterator[dict[str, Any]]:
    for d in Delivery.objects.select_related("source").order_by("source__name", "delivered_at"):
        yield {"source": d.source.name, "delivered_at": d.delivered_at, "litres": d.litres,
               "supplier": d.supplier, "ticket": d.ticket}  # fmt: skip


EVENTS = (
    *unit_columns(),
    Column("occurred_at", "occurred_at", "datetime"),
    Column("hours", "hours", "number", required=False, low=0),
    Column("spn", "spn", "integer", low=0, high=524_287, note="SAE J1939 SPN, stored as given"),
    Column("fmi", "fmi", "integer", low=0, high=31, note="SAE J1939 FMI"),
    Column("occurrences", "count", "integer", low=1),
    Column("kind", "kind", "choice", required=False, choices=tuple(EngineEvent.Kind.values)),
)


def event_store(values: dict[str, Any], ctx: Context) -> str:
    unit = ctx.unit_get(values)
    at = ctx.instant(
        values["occurred_at"],
        time_zone=unit.site.time_zone,
        column="occurred_at",
        what="engine event",
    )
    key = {"unit": unit, "occurred_at": at, "spn": values["spn"], "fmi": values["fmi"]}
    fields = {"hours": values["hours"], "occurrences": values["occurrences"],
              "kind": values["kind"] or EngineEvent.Kind.OTHER}  # fmt: skip
    existing = EngineEvent.objects.filter(**key).first()
    return row_save(EngineEvent(**key, **fields), fields, existing, ctx)


def event_rows() -> Iterator[dict[str, Any]]:
    qs = EngineEvent.objects.select_related("unit__site").order_by("unit_id", "occurred_at", "pk")
    for e in qs:
        yield {"unit": e.unit.fleet_number, "site": e.unit.site.code,
               "occurred_at": e.occurred_at, "hours": e.hours, "spn": e.spn, "fmi": e.fmi,
               "occurrences": e.occurrences, "kind": e.kind}  # fmt: skip


FILTER_DP = (
    *unit_columns(),
    Column("filter", "filter", "choice", choices=tuple(sorted(FILTER_KINDS))),
    Column("taken_at", "taken_at", "datetime"),
    Column("hours", "hours", "number", low=0, note="the meter as read"),
    Column("dp_bar", "dp_bar", "number", low=0, high=50, alternatives=(("dp_psi", psi_to_bar),)),
)


def component_fitted(
    ctx: Context, *, unit: Any, kind: str, position: int | None, column: str
) -> Component:
    """The unit's part of that kind (and cylinder): the one fitted now, else the last one
    (read once per file: neither file that asks for it stores components)."""
    found = ctx.found(
        "fitted",
        (unit.pk, kind, position),
        lambda: (
            Component.objects.filter(unit=unit, kind=kind, position=position)
            .order_by(F("removed_on").asc(nulls_first=True), "-installed_on")  # fitted first
            .first()
        ),
    )
    if found is None:
        where = f" at cylinder {position}" if position else ""
        raise RowRefused(column, f"{unit.fleet_number} has no {kind}{where} recorded")
    return found


def dp_store(values: dict[str, Any], ctx: Context) -> str:
    unit = ctx.unit_get(values)
    at = ctx.instant(
        values["taken_at"],
        time_zone=unit.site.time_zone,
        column="taken_at",
        what="pressure reading",
    )
    comp = component_fitted(ctx, unit=unit, kind=values["filter"], position=None, column="filter")
    fields = {"hours": values["hours"], "dp_bar": values["dp_bar"]}
    existing = FilterPressureReading.objects.filter(component=comp, taken_at=at).first()
    obj = FilterPressureReading(component=comp, taken_at=at, **fields)
    return row_save(obj, fields, existing, ctx, columns={"component": "filter"})


def dp_rows() -> Iterator[dict[str, Any]]:
    qs = FilterPressureReading.objects.select_related("component__unit__site")
    for p in qs.order_by("component__unit_id", "taken_at"):
        unit = p.component.unit
        yield {"unit": unit.fleet_number, "site": unit.site.code, "filter": p.component.kind,
               "taken_at": p.taken_at, "hours": p.hours, "dp_bar": p.dp_bar}  # fmt: skip


LAYOUTS = (
    Layout("readings", "Hour-meter readings", READINGS, ("unit", "site", "taken_at"),
           reading_store, reading_rows, bulk=True),
    Layout("fuelings", "Fuelings", FUELINGS, ("unit", "site", "fueled_at"), fueling_store,
           fueling_rows, bulk=True),
    Layout("deliveries", "Bulk deliveries", DELIVERIES, ("source", "delivered_at"),
           delivery_store, delivery_rows,
           note="Fuel sources are reference data: they must exist (the admin)."),
    Layout("engine_events", "Engine-controller events", EVENTS,
           ("unit", "site", "occurred_at", "spn", "fmi"), event_store, event_rows),
    Layout("filter_dp", "Filter differential pressures", FILTER_DP,
           ("unit", "site", "filter", "taken_at"), dp_store, dp_rows),
)  # fmt: skip
