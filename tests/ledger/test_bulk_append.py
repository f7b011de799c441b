"""service_events_append: several entries on one unit in one insert, sealed exactly as
service_event_append seals them one by one, and refused whole by the database's constraints."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.db import IntegrityError, transaction

from fleetfuel.fleet.models import ComponentKind
from fleetfuel.ledger.actions import service_event_append, service_events_append
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.verification import ledger_verify
from tests.factories import NOW

pytestmark = pytest.mark.django_db


def drains(unit: Any, by: Any, count: int) -> list[dict[str, Any]]:
    primary = unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    return [
        {
            "kind": ServiceEvent.Kind.SEPARATOR_DRAINED,
            "performed_at": NOW - timedelta(days=count - i),
            "recorded_at": NOW - timedelta(days=count - i, minutes=-5),
            "recorded_by": by,
            "hour_meter": 1000.0 + 10 * i,
            "component": primary,
            "component_kind": ComponentKind.PRIMARY_FILTER,
            "water_ml": 12.5 + i,
            "water_appearance": ServiceEvent.Appearance.CLEAR,
            "notes": None,  # stored as "", as service_event_append stores it
        }
        for i in range(count)
    ]


def test_bulk_append_seals_the_same_chain_as_one_by_one(unit: Any, mechanic: Any) -> None:
    service_event_append(
        unit=unit, kind=ServiceEvent.Kind.INSPECTION, performed_at=NOW - timedelta(days=30),
        recorded_by=mechanic, recorded_at=NOW - timedelta(days=30),
    )  # fmt: skip
    entries = drains(unit, mechanic, 4)
    with transaction.atomic():
        one_by_one = [(e.seq, e.prev_hash, e.hash) for e in
                      (service_event_append(unit=unit, **entry) for entry in entries)]  # fmt: skip
        transaction.set_rollback(True)
    bulk = service_events_append(unit=unit, entries=entries)
    assert [(e.seq, e.prev_hash, e.hash) for e in bulk] == one_by_one
    assert [e.seq for e in bulk] == [2, 3, 4, 5]
    stored = ServiceEvent.objects.filter(unit=unit).order_by("seq")
    assert [e.hash for e in stored][1:] == [h for _, _, h in one_by_one]
    assert stored.last().notes == ""  # type: ignore[union-attr]
    report = ledger_verify(unit_ids=[unit.pk])
    assert (report.units, report.events, report.problems) == (1, 5, [])


def test_bulk_append_refuses_the_whole_batch_on_a_broken_constraint(
    unit: Any, mechanic: Any
) -> None:
    entries = drains(unit, mechanic, 3)
    # A correction must name the event it corrects (the table's check constraint).
    entries[2] = {**entries[2], "kind": ServiceEvent.Kind.CORRECTION, "reason": "typo"}
    with pytest.raises(IntegrityError), transaction.atomic():
        service_events_append(unit=unit, entries=entries)
    assert not ServiceEvent.objects.filter(unit=unit).exists()
