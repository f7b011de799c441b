"""Writes to the service history. The only way a ServiceEvent is created."""

from __future__ import annotations

from datetime import datetime
from typing import Any

from django.db import transaction
from django.utils import timezone

from fleetfuel.fleet.models import Unit
from services.ledger import GENESIS, entry_hash

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
)


def event_content(event: ServiceEvent | dict[str, Any]) -> dict[str, object]:
    """The hashed content of an event (from a model instance or a values() row)."""
    if isinstance(event, dict):
        return {name: event[name] for name in CONTENT_FIELDS}
    return {name: getattr(event, name) for name in CONTENT_FIELDS}


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
        Unit.objects.select_for_update().filter(pk=unit.pk).values_list("pk", flat=True).get()
        head = (
            ServiceEvent.objects.filter(unit_id=unit.pk)
            .order_by("-seq")
            .values_list("seq", "hash")
            .first()
        )
        seq, prev_hash = (head[0] + 1, head[1]) if head else (1, GENESIS)
        event = ServiceEvent(
            unit_id=unit.pk,
            kind=kind,
            performed_at=performed_at,
            recorded_by=recorded_by,
            recorded_at=recorded_at or timezone.now(),
            seq=seq,
            prev_hash=prev_hash,
            **fields,
        )
        # Normalise text fields the way the database hands them back, before hashing.
        for name in (
            "component_kind",
            "part_number",
            "old_serial",
            "new_serial",
            "water_appearance",
            "measurement_name",
            "parts_used",
            "notes",
            "reason",
        ):
            if getattr(event, name) is None:
                setattr(event, name, "")
        event.full_clean(exclude=["hash", "prev_hash", "seq"])
        event.hash = entry_hash(content=event_content(event), prev_hash=prev_hash)
        event.save(force_insert=True)
        return event
