"""Writes to the service history. The only way a ServiceEvent is created."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from datetime import date, datetime
from typing import Any

from django.core.exceptions import ValidationError
from django.db import transaction
from django.utils import timezone

from fleetfuel.fleet.models import Unit
from services.ledger import GENESIS, entry_hash, retention_ends_on
from services.rules import cylinder_exists

from .effective import effective_kind_of, version_in_effect
from .models import ServiceEvent

# The fields sealed by the hash, in the export's order. Adding a field here changes every
# hash computed from then on: add it at the end and never reorder (see DEVELOPERS.md).
CONTENT_FIELDS = (
    "unit_id",
    "seq",
    "kind",
    "performed_at",
    "recorded_at",
    "recorded_by_id",
    "hour_meter",
    "component_id",
    "component_kind",
    "cylinder",
    "part_number",
    "old_serial",
    "new_serial",
    "water_ml",
    "water_appearance",
    "measurement_name",
    "value",
    "low_limit",
    "high_limit",
    "passed",
    "dp_before_bar",
    "parts_used",
    "notes",
    "work_order_id",
    "corrects_id",
    "reason",
    "corrected_kind",
)
# Fields added to CONTENT_FIELDS after entries were recorded without them: each is hashed only
# when it is set (not empty), so every entry recorded before it keeps its hash and its chain
# verifies. A field added from now on goes here too.
HASHED_WHEN_SET = ("corrected_kind",)


def event_content(event: ServiceEvent | dict[str, Any]) -> dict[str, object]:
    """The hashed content of an event (from a model instance or a values() row)."""
    if isinstance(event, dict):
        content = {name: event[name] for name in CONTENT_FIELDS}
    else:
        content = {name: getattr(event, name) for name in CONTENT_FIELDS}
    for name in HASHED_WHEN_SET:
        if content[name] in ("", None):
            del content[name]
    return content


def service_event_append(
    *,
    unit: Unit,
    kind: str,
    performed_at: datetime,
    recorded_by: Any,
    recorded_at: datetime | None = None,
    **fields: Any,
) -> ServiceEvent:
    """Append one event to the unit's chain.

    Locks the unit row, so two writers on one unit queue up and the chain never forks;
    writers on different units do not contend.
    """
    with transaction.atomic():
        seq, prev_hash = _chain_head_lock(unit=unit)
        event = ServiceEvent(
            unit_id=unit.pk,
            kind=kind,
            performed_at=performed_at,
            recorded_by=recorded_by,
            recorded_at=recorded_at or timezone.now(),
            seq=seq + 1,
            prev_hash=prev_hash,
            **fields,
        )
        _event_seal(event)
        event.save(force_insert=True)
        return event


def _chain_head_lock(*, unit: Unit) -> tuple[int, str]:
    """Lock the unit row (writers on one unit queue up, so the chain never forks) and read
    its chain head: (seq, hash), or (0, GENESIS) for an empty chain."""
    Unit.objects.select_for_update().filter(pk=unit.pk).values_list("pk", flat=True).get()
    head = ServiceEvent.objects.filter(unit_id=unit.pk).order_by("-seq").values_list("seq", "hash")
    return head.first() or (0, GENESIS)


# Text fields stored as "" when not given, the way the database hands them back.
BLANK_TEXT_FIELDS = (
    "component_kind",
    "part_number",
    "old_serial",
    "new_serial",
    "water_appearance",
    "measurement_name",
    "parts_used",
    "notes",
    "reason",
    "corrected_kind",
)
# Checked by the database at the insert; full_clean would ask it once per row and relation.
_RELATIONS = ["unit", "component", "work_order", "recorded_by", "corrects"]


def _event_seal(event: ServiceEvent, *, relations_checked_by_database: bool = False) -> None:
    """Normalise and validate ``event`` (its seq and prev_hash set), then seal its hash."""
    _event_clean(event, relations_checked_by_database=relations_checked_by_database)
    event.hash = entry_hash(content=event_content(event), prev_hash=event.prev_hash)


def service_event_check(
    *,
    unit: Unit,
    kind: str,
    performed_at: datetime,
    recorded_by: Any,
    recorded_at: datetime | None = None,
    **fields: Any,
) -> None:
    """Validate one entry as service_events_append will before it seals it (a ValidationError
    by field), writing nothing: a caller gathering entries for it refuses a bad one first."""
    event = ServiceEvent(unit_id=unit.pk, kind=kind, performed_at=performed_at,
                         recorded_by=recorded_by, recorded_at=recorded_at or timezone.now(),
                         seq=0, prev_hash="", **fields)  # fmt: skip
    _event_clean(event, relations_checked_by_database=True)


def _event_clean(event: ServiceEvent, *, relations_checked_by_database: bool) -> None:
    for name in BLANK_TEXT_FIELDS:
        if getattr(event, name) is None:
            setattr(event, name, "")
    exclude = ["hash", "prev_hash", "seq"]
    if relations_checked_by_database:
        event.full_clean(
            exclude=exclude + _RELATIONS, validate_unique=False, validate_constraints=False
        )
    else:
        event.full_clean(exclude=exclude)


def service_events_append(
    *, unit: Unit, entries: Sequence[Mapping[str, Any]]
) -> list[ServiceEvent]:
    """Append several events to one unit's chain, in the order given, with the hashes
    service_event_append would give them one by one: one lock of the unit row, one read of
    its head, one insert. Each entry holds service_event_append's keyword arguments
    (kind, performed_at, recorded_by, recorded_at and the fields); recorded_at defaults to now.

    The fields are validated as there; the relations, the (unit, seq) and hash uniqueness and
    the correction check are left to the database's constraints, which refuse the whole insert.

    Unlike service_event_append, a bulk insert sends no ``post_save``, so planning queues no
    recompute of the unit: the caller recomputes (the demo projects every unit at its ``now``
    once the build is done, which is why it writes in bulk).
    """
    with transaction.atomic():
        seq, prev_hash = _chain_head_lock(unit=unit)
        events = []
        for entry in entries:
            seq += 1
            fields = {**entry, "recorded_at": entry.get("recorded_at") or timezone.now()}
            event = ServiceEvent(unit_id=unit.pk, seq=seq, prev_hash=prev_hash, **fields)
            _event_seal(event, relations_checked_by_database=True)
            prev_hash = event.hash
            events.append(event)
        return ServiceEvent.objects.bulk_create(events)


# What a correction may restate: the hashed fields less the unit, the chain fields, the author,
# the work order and the correction's own fields; the kind it restates is its ``kind`` argument.
_FIXED_ON_CORRECTION = frozenset(
    {"unit_id", "seq", "kind", "recorded_at", "recorded_by_id", "work_order_id", "corrects_id",
     "reason", "corrected_kind"}
)  # fmt: skip
CORRECTABLE_FIELDS = tuple(
    name.removesuffix("_id") for name in CONTENT_FIELDS if name not in _FIXED_ON_CORRECTION
)


def service_event_correct(
    *,
    event: ServiceEvent,
    reason: str,
    recorded_by: Any,
    kind: str | None = None,
    **changed_fields: Any,
) -> ServiceEvent:
    """Record a correction of ``event`` as a new entry at the head of the unit's chain.

    The correction corrects the version in effect (``event`` itself, or the end of its line of
    corrections: effective.py) and restates it in full: that version's values with ``kind``
    (the kind of entry it really was) and ``changed_fields`` put over them. Every earlier
    version stays as it was, so the history keeps the original and says why it changed.
    A component must be the unit's; giving one sets ``component_kind`` to its kind unless
    that is given too. A cylinder must be one of the unit's.
    """
    reason = (reason or "").strip()
    if not reason:
        raise ValidationError({"reason": "Say why the entry is being corrected."})
    unknown = sorted(set(changed_fields) - set(CORRECTABLE_FIELDS))
    if unknown:
        raise ValidationError(f"These fields cannot be corrected: {', '.join(unknown)}.")
    with transaction.atomic():
        _chain_head_lock(unit=event.unit)  # no other correction of the unit meanwhile
        current = version_in_effect(event)
        values = {name: getattr(current, name) for name in CORRECTABLE_FIELDS}
        values["corrected_kind"] = effective_kind_of(current)
        changed = {k: v for k, v in changed_fields.items() if v != values[k]}
        if kind is not None and kind != values["corrected_kind"]:
            changed["corrected_kind"] = kind
        _correction_check(event.unit, changed)
        if not changed:
            raise ValidationError("Nothing to correct: give at least one value that differs.")
        values.update(changed)
        return service_event_append(
            unit=event.unit,
            kind=ServiceEvent.Kind.CORRECTION,
            recorded_by=recorded_by,
            corrects=current,
            reason=reason,
            work_order=event.work_order,
            **values,
        )


def _correction_check(unit: Unit, changed: dict[str, Any]) -> None:
    """Refuse a kind, component or cylinder the unit cannot have (errors by field)."""
    kind = changed.get("corrected_kind")
    if kind is not None and (
        kind not in ServiceEvent.Kind.values or kind == ServiceEvent.Kind.CORRECTION
    ):
        raise ValidationError({"kind": f"{kind!r} is not a kind of entry."})
    component = changed.get("component")
    if component is not None:
        if component.unit_id != unit.pk:
            raise ValidationError({"component": f"That part is not on {unit.fleet_number}."})
        if changed.setdefault("component_kind", component.kind) != component.kind:
            raise ValidationError({"component": "The part chosen is of another kind."})
    cylinder = changed.get("cylinder")
    if cylinder is not None and not cylinder_exists(cylinder=cylinder, cylinders=unit.cylinders):
        raise ValidationError(
            {"cylinder": f"{unit.fleet_number} has cylinders 1 to {unit.cylinders}."}
        )


class RetentionError(Exception):
    """A purge of service history that fleetfuel refuses, with the reason in words."""


def unit_history_purge(*, unit: Unit, today: date) -> None:
    """Refuse, always: fleetfuel does not purge service history.

    49 CFR 396.3(c) asks for the records to be kept where the unit is housed or maintained for
    1 year, and for 6 months after the unit leaves the operator's control; fleetfuel keeps a
    disposed unit's history until the later of 6 months after disposal and 1 year after its
    newest record, and after that still refuses: the history is append-only and hash-chained,
    and a removed entry would break the chain. Export the unit's history and archive it instead.
    (In Great Britain, operator licence holders keep maintenance records for 15 months: DVSA,
    Guide to maintaining roadworthiness.)
    """
    if unit.disposed_on is None:
        raise RetentionError(
            f"{unit.fleet_number} is still in service: its history must be kept (49 CFR "
            "396.3(c): 1 year where the unit is housed or maintained, and 6 months after it "
            "leaves your control; in Great Britain 15 months, DVSA Guide to maintaining "
            "roadworthiness)."
        )
    newest = (
        ServiceEvent.objects.filter(unit=unit)
        .order_by("-performed_at")
        .values_list("performed_at", flat=True)
        .first()
    )
    last_record_on = None if newest is None else timezone.localdate(newest)
    ends_on = retention_ends_on(disposed_on=unit.disposed_on, last_record_on=last_record_on)
    if today < ends_on:
        raise RetentionError(
            f"{unit.fleet_number} was disposed of on {unit.disposed_on:%Y-%m-%d}: its history "
            f"must be kept until {ends_on:%Y-%m-%d} (49 CFR 396.3(c): 6 months after disposal "
            "and 1 year after the newest record, whichever is later). Purging is refused."
        )
    raise RetentionError(
        f"The retention period of {unit.fleet_number} ended on {ends_on:%Y-%m-%d}, but fleetfuel "
        "does not purge service history: it is append-only and hash-chained. Export the unit's "
        "history (CSV or XLSX with its manifest) to archive it."
    )
