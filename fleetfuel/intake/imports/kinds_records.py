"""Layouts of records with their own references: fuel samples (lab results) and past
service events (appended through the ledger, so each unit's hash chain stays whole)."""

from __future__ import annotations

from collections.abc import Iterator
from typing import Any

from django.core.exceptions import ValidationError

from fleetfuel.fleet.models import ComponentKind, Delivery, FuelSample
from fleetfuel.ledger.effective import in_effect
from fleetfuel.ledger.models import ServiceEvent
from services.units import fahrenheit_to_celsius, psi_to_bar, us_fl_oz_to_ml

from .columns import Column
from .kind import (
    CREATED,
    UNCHANGED,
    Context,
    Layout,
    RowRefused,
    model_check,
    unit_columns,
    validation_refusal,
)
from .kinds_observations import component_fitted

SAMPLE_FIELDS = (
    "iso4406", "count_4_per_ml", "count_6_per_ml", "count_14_per_ml", "water_mg_kg",
    "fame_pct_v", "temperature_c", "lab_method", "total_contamination_mg_kg", "appearance",
    "microbial", "lab", "report_ref",
)  # fmt: skip

SAMPLES = (
    Column("reference", "reference", max_length=40, note="the lab's sample reference"),
    Column("source", "source", required=False, max_length=100, note="fuel source name, or"),
    Column("unit", "unit", required=False, max_length=30, note="fleet number (a unit's tank)"),
    Column("site", "site", required=False, max_length=20),
    Column("sampled_at", "sampled_at", "datetime"),
    Column("iso4406", "iso4406", required=False, max_length=20, note="e.g. 18/16/13, >=22/18/13"),
    Column("count_4_per_ml", "count_4um_per_ml", "number", required=False, low=0),
    Column("count_6_per_ml", "count_6um_per_ml", "number", required=False, low=0),
    Column("count_14_per_ml", "count_14um_per_ml", "number", required=False, low=0),
    Column("water_mg_kg", "water_mg_kg", "number", required=False, low=0,
           note="Karl Fischer, EN ISO 12937 / ASTM D6304"),
    Column("fame_pct_v", "fame_pct_v", "number", required=False, low=0, high=100),
    Column("temperature_c", "temperature_c", "number", required=False,
           alternatives=(("temperature_f", fahrenheit_to_celsius),)),
    Column("lab_method", "lab_method", required=False, max_length=80),
    Column("delivery", "delivery_ticket", required=False, max_length=60,
           note="ticket of the source's delivery sampled"),
    Column("total_contamination_mg_kg", "total_contamination_mg_kg", "number", required=False,
           low=0, note="EN 12662 / ASTM D6217"),
    Column("appearance", "appearance", required=False, max_length=40, note="ASTM D4176"),
    Column("microbial", "microbial", required=False, max_length=80),
    Column("lab", "lab", required=False, max_length=100),
    Column("report_ref", "report_ref", required=False, max_length=60),
)  # fmt: skip


def sample_store(values: dict[str, Any], ctx: Context) -> str:
    if bool(values["source"]) == bool(values["unit"]):
        raise RowRefused("source", "give a fuel source or a unit (one of the two)")
    source = ctx.source_get(values["source"]) if values["source"] else None
    unit = ctx.unit_get(values) if values["unit"] else None
    site = unit.site if unit else source.site if source else None
    zone = site.time_zone if site else "UTC"
    at = ctx.instant(values["sampled_at"], time_zone=zone, column="sampled_at", what="sample")
    delivery = None
    if values["delivery"]:
        delivery = Delivery.objects.filter(source=source, ticket=values["delivery"]).first()
        if delivery is None:
            raise RowRefused("delivery", f"no delivery with ticket {values['delivery']!r} "
                             "into this sample's source")  # fmt: skip
    existing = FuelSample.objects.filter(reference=values["reference"]).first()
    fields = {n: values[n] for n in SAMPLE_FIELDS}
    if existing is not None:
        # A lab reference names one sample: the same row again changes nothing.
        same = all(getattr(existing, n) == v for n, v in fields.items() if n != "iso4406")
        if same and existing.sampled_at == at:
            return UNCHANGED
        raise RowRefused("reference", f"sample {values['reference']!r} is already recorded "
                         "with other values")  # fmt: skip
    sample = FuelSample(reference=values["reference"], source=source, unit=unit, sampled_at=at,
                        delivery=delivery, **fields)  # fmt: skip
    model_check(sample, columns={"__all__": "iso4406"})
    sample.save()
    return CREATED


def sample_rows() -> Iterator[dict[str, Any]]:
    qs = FuelSample.objects.select_related("source", "unit__site", "delivery")
    for s in qs.order_by("sampled_at", "reference"):
        yield {
            "reference": s.reference, "source": s.source.name if s.source else "",
            "unit": s.unit.fleet_number if s.unit else "",
            "site": s.unit.site.code if s.unit else "", "sampled_at": s.sampled_at,
            "delivery": s.delivery.ticket if s.delivery else "",
            **{n: getattr(s, n) for n in SAMPLE_FIELDS},
        }  # fmt: skip


_IMPORTED_KINDS = tuple(
    k for k in ServiceEvent.Kind.values
    if k not in (ServiceEvent.Kind.CORRECTION, ServiceEvent.Kind.RULE_OVERRIDE)
)  # fmt: skip
EVENT_FIELDS = (
    "hour_meter", "component_kind", "cylinder", "part_number", "old_serial", "new_serial",
    "water_ml", "water_appearance", "measurement_name", "value", "low_limit", "high_limit",
    "passed", "dp_before_bar", "parts_used", "notes",
)  # fmt: skip
SERVICE_EVENTS = (
    *unit_columns(),
    Column("kind", "kind", "choice", choices=_IMPORTED_KINDS),
    Column("performed_at", "performed_at", "datetime"),
    Column("hour_meter", "hour_meter", "number", required=False, low=0),
    Column("component_kind", "component", "choice", required=False,
           choices=tuple(ComponentKind.values)),
    Column("cylinder", "cylinder", "integer", required=False, low=1, high=24),
    Column("part_number", "part_number", required=False, max_length=60),
    Column("old_serial", "old_serial", required=False, max_length=60),
    Column("new_serial", "new_serial", required=False, max_length=60),
    Column("water_ml", "water_ml", "number", required=False, low=0,
           alternatives=(("water_us_fl_oz", us_fl_oz_to_ml),)),
    Column("water_appearance", "water_appearance", "choice", required=False,
           choices=tuple(ServiceEvent.Appearance.values)),
    Column("measurement_name", "measurement", required=False, max_length=80),
    Column("value", "value", "number", required=False, note="in the limit's quantity, SI"),
    Column("low_limit", "low_limit", "number", required=False),
    Column("high_limit", "high_limit", "number", required=False),
    Column("passed", "passed", "choice", required=False, choices=("yes", "no")),
    Column("dp_before_bar", "dp_before_bar", "number", required=False, low=0,
           alternatives=(("dp_before_psi", psi_to_bar),)),
    Column("parts_used", "parts_used", required=False),
    Column("notes", "notes", required=False),
    Column("recorded_by", "recorded_by", max_length=150, note="username"),
    Column("recorded_at", "recorded_at", "datetime", required=False),
)  # fmt: skip


EVENT_COLUMNS = {"component": "component_kind", "unit": "unit", "recorded_by": "recorded_by"}


def service_event_store(values: dict[str, Any], ctx: Context) -> str:
    unit = ctx.unit_get(values)
    zone = unit.site.time_zone
    at = ctx.instant(
        values["performed_at"], time_zone=zone, column="performed_at", what="service event"
    )
    recorded_at = (
        ctx.instant(values["recorded_at"], time_zone=zone, column="recorded_at", what="record")
        if values["recorded_at"] else at
    )  # fmt: skip
    fields = {n: values[n] for n in EVENT_FIELDS}
    fields["passed"] = {"yes": True, "no": False}.get(values["passed"])
    key = (values["kind"], at, *(fields[n] for n in _KEY_FIELDS))
    recorded = ctx.found("service_events", unit.pk, lambda: _events_recorded(unit))
    if key in recorded:
        return UNCHANGED  # events are never changed: a correction is recorded in fleetfuel
    if fields["component_kind"]:
        fields["component"] = component_fitted(
            ctx, unit=unit, kind=fields["component_kind"], position=fields["cylinder"],
            column="component_kind",
        )  # fmt: skip
    recorded_by = ctx.user_get(values["recorded_by"], column="recorded_by")
    try:  # the ledger validates the event before it seals it
        ctx.writes.event_append(unit=unit, entry={
            "kind": values["kind"], "performed_at": at, "recorded_by": recorded_by,
            "recorded_at": recorded_at, **fields,
        })  # fmt: skip
    except ValidationError as exc:
        raise validation_refusal(exc, columns=EVENT_COLUMNS) from None
    recorded.add(key)
    return CREATED


_KEY_FIELDS = ("component_kind", "cylinder", "measurement_name")


def _events_recorded(unit: Any) -> set[tuple[Any, ...]]:
    """What names an event of the unit already recorded: (kind, performed_at, *_KEY_FIELDS)."""
    rows = ServiceEvent.objects.filter(unit=unit).values_list("kind", "performed_at", *_KEY_FIELDS)
    return set(rows)


def service_event_rows() -> Iterator[dict[str, Any]]:
    """The corrected view (fleetfuel/ledger/effective.py): each entry as last corrected, under
    the kind it stands for; the corrections themselves stay with the chain (the ledger's own
    export), and so do rule overrides."""
    qs = in_effect().select_related("unit__site", "recorded_by")
    for e in qs.order_by("unit_id", "seq").iterator(chunk_size=2000):
        if e.effective_kind in (ServiceEvent.Kind.CORRECTION, ServiceEvent.Kind.RULE_OVERRIDE):
            continue
        yield {
            "unit": e.unit.fleet_number, "site": e.unit.site.code, "kind": e.effective_kind,
            "performed_at": e.performed_at, "recorded_by": e.recorded_by.username,
            "recorded_at": e.recorded_at, **{n: getattr(e, n) for n in EVENT_FIELDS},
            "passed": {True: "yes", False: "no"}.get(e.passed, ""),  # type: ignore[arg-type]
        }  # fmt: skip


LAYOUTS = (
    Layout("samples", "Fuel samples and lab results", SAMPLES, ("reference",), sample_store,
           sample_rows),
    Layout("service_events", "Past service events", SERVICE_EVENTS,
           ("unit", "site", "kind", "performed_at", "component_kind", "cylinder",
            "measurement_name"), service_event_store, service_event_rows, bulk=True,
           note="Appended to each unit's hash chain in file order; never updated. "
                "Each entry is exported as last corrected; corrections themselves and rule "
                "overrides are not imported."),
)  # fmt: skip
