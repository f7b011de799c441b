"""Layouts of the fleet itself: units, their fitted components, hour-meter replacements."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from fleetfuel.fleet.models import Component, ComponentKind, MeterReplacement, Unit, UnitClass
from services.units import us_gal_to_litres

from .columns import Column
from .kind import (
    CREATED,
    UNCHANGED,
    UPDATED,
    Context,
    Layout,
    RowRefused,
    fields_update,
    model_check,
    row_save,
    unit_columns,
)

UNIT_FIELDS = (
    "make", "model", "serial_number", "year", "engine_serial", "cylinders", "tire_size",
    "owner", "tank_capacity_l", "in_service_on", "disposed_on",
)  # fmt: skip

UNITS = (
    Column("site", "site", max_length=20, note="site code"),
    Column("fleet_number", "fleet_number", max_length=30),
    Column("unit_class", "unit_class", max_length=100, note="unit class name"),
    Column("make", "make", max_length=60),
    Column("model", "model", max_length=60),
    Column("serial_number", "serial_number", max_length=40),
    Column("year", "year", "integer", low=1950, high=2100),
    Column("engine_serial", "engine_serial", required=False, max_length=40),
    Column("cylinders", "cylinders", "integer", low=1, high=24),
    Column("tire_size", "tire_size", required=False, max_length=40),
    Column("owner", "owner", required=False, max_length=120),
    Column(
        "tank_capacity_l", "tank_litres", "number", required=False, low=1, high=100_000,
        alternatives=(("tank_us_gal", us_gal_to_litres),),
    ),
    Column("in_service_on", "in_service_on", "date"),
    Column("disposed_on", "disposed_on", "date", required=False),
)  # fmt: skip


def unit_store(values: dict[str, Any], ctx: Context) -> str:
    site = ctx.site_get(values["site"])
    unit_class = UnitClass.objects.filter(name=values["unit_class"]).first()
    if unit_class is None:
        raise RowRefused("unit_class", f"no unit class named {values['unit_class']!r}")
    unit = Unit.objects.filter(site=site, fleet_number=values["fleet_number"]).first()
    fields = {name: values[name] for name in UNIT_FIELDS}
    if unit is not None:
        if not fields_update(unit, {**fields, "unit_class_id": unit_class.pk}):
            return UNCHANGED
        model_check(unit)
        unit.save()
        return UPDATED
    unit = Unit(site=site, fleet_number=values["fleet_number"], unit_class=unit_class, **fields)
    model_check(unit)
    unit.save()
    ctx.unit_forget(unit.fleet_number)
    return CREATED


def unit_rows() -> Iterator[dict[str, Any]]:
    for unit in Unit.objects.select_related("site", "unit_class").order_by("site__code", "pk"):
        yield {
            "site": unit.site.code, "fleet_number": unit.fleet_number,
            "unit_class": unit.unit_class.name, **{n: getattr(unit, n) for n in UNIT_FIELDS},
        }  # fmt: skip


COMPONENTS = (
    *unit_columns(),
    Column("kind", "kind", "choice", choices=tuple(ComponentKind.values)),
    Column("position", "cylinder", "integer", required=False, low=1, high=24),
    Column("part_number", "part_number", required=False, max_length=60),
    Column("serial", "serial", required=False, max_length=60),
    Column("rating_um", "rating_um", "number", required=False, low=0.5, high=200),
    Column("installed_on", "installed_on", "date"),
    Column("installed_hours", "installed_hours", "number", low=0),
    Column("removed_on", "removed_on", "date", required=False),
    Column("removed_hours", "removed_hours", "number", required=False, low=0),
)
COMPONENT_FIELDS = ("part_number", "serial", "rating_um", "installed_hours", "removed_on",
                    "removed_hours")  # fmt: skip


def component_store(values: dict[str, Any], ctx: Context) -> str:
    unit = ctx.unit_get(values)
    key = {"kind": values["kind"], "position": values["position"]}
    fields = {name: values[name] for name in COMPONENT_FIELDS}
    stored = ctx.found("components", unit.pk, lambda: _components_of(unit))
    where = (values["installed_on"], key["kind"], key["position"])
    new = Component(unit=unit, installed_on=values["installed_on"], **key, **fields)
    outcome = row_save(new, fields, stored.get(where), ctx, columns={"__all__": "kind"})
    stored.setdefault(where, new)
    return outcome


def _components_of(unit: Unit) -> dict[tuple[Any, ...], Component]:
    """The unit's components by (installed_on, kind, position), the first stored of a kind."""
    found: dict[tuple[Any, ...], Component] = {}
    for component in Component.objects.filter(unit=unit).order_by("pk"):
        component.unit = unit
        found.setdefault((component.installed_on, component.kind, component.position), component)
    return found


def component_rows() -> Iterator[dict[str, Any]]:
    qs = Component.objects.select_related("unit__site").order_by("unit_id", "kind", "position")
    for c in qs:
        yield {
            "unit": c.unit.fleet_number, "site": c.unit.site.code, "kind": c.kind,
            "position": c.position, "installed_on": c.installed_on,
            **{n: getattr(c, n) for n in COMPONENT_FIELDS},
        }  # fmt: skip


METER_REPLACEMENTS = (
    *unit_columns(),
    Column("replaced_at", "replaced_at", "datetime"),
    Column("old_meter_final", "old_meter_final_hours", "number", low=0),
    Column("new_meter_start", "new_meter_start_hours", "number", low=0),
    Column("note", "note", required=False, max_length=200),
)


def replacement_store(values: dict[str, Any], ctx: Context) -> str:
    unit = ctx.unit_get(values)
    at = ctx.instant(
        values["replaced_at"],
        time_zone=unit.site.time_zone,
        column="replaced_at",
        what="meter replacement",
    )
    fields = {n: values[n] for n in ("old_meter_final", "new_meter_start", "note")}
    existing = MeterReplacement.objects.filter(unit=unit, replaced_at=at).first()
    return row_save(MeterReplacement(unit=unit, replaced_at=at, **fields), fields, existing, ctx)


def replacement_rows() -> Iterator[dict[str, Any]]:
    for r in MeterReplacement.objects.select_related("unit__site").order_by("unit_id", "pk"):
        yield {
            "unit": r.unit.fleet_number, "site": r.unit.site.code, "replaced_at": r.replaced_at,
            "old_meter_final": r.old_meter_final, "new_meter_start": r.new_meter_start,
            "note": r.note,
        }  # fmt: skip


LAYOUTS = (
    Layout("units", "Units", UNITS, ("site", "fleet_number"), unit_store, unit_rows,
           note="Sites and unit classes are reference data: they must exist (the admin)."),
    Layout("components", "Fitted fuel-system components", COMPONENTS,
           ("unit", "site", "kind", "position", "installed_on"), component_store, component_rows,
           bulk=True),
    Layout("meter_replacements", "Hour-meter replacements", METER_REPLACEMENTS,
           ("unit", "site", "replaced_at"), replacement_store, replacement_rows),
)  # fmt: skip
