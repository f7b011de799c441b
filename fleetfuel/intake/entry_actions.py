"""Writes of the entry pages, each in one transaction.

Every write recomputes the affected units' due items once the transaction commits, once per
unit (``planning.signals``): readings of a round are inserted together and enqueued
together; a single fueling, sample or engine event is saved and its ``post_save`` signal
enqueues its unit (a source's sample: every unit fuelled from the source in the look-back).
A delivery without a sample changes no projection and recomputes nothing.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import datetime, tzinfo
from typing import Any

from django.db import transaction

from fleetfuel.fleet.checks import surroundings_load, surroundings_refusal
from fleetfuel.fleet.models import (
    Delivery,
    EngineEvent,
    Fueling,
    FuelSample,
    FuelSource,
    MeterReading,
    Unit,
)
from fleetfuel.planning.signals import unit_recompute_enqueue


@dataclass
class RoundOutcome:
    saved: list[int] = field(default_factory=list)  # unit ids
    unchanged: list[int] = field(default_factory=list)  # the same reading was already stored
    refused: dict[int, str] = field(default_factory=dict)  # unit id -> reason


def meter_round_record(
    *, hours_by_unit: dict[int, float], at: datetime, now: datetime, zone: tzinfo | None = None
) -> RoundOutcome:
    """Record a depot's round of hour-meter readings, all read at ``at``.

    Each reading is checked against its unit's neighbours (``fleet.checks``); the plausible
    ones are inserted together, the others come back with the reason. A reading already
    stored (same unit, time and hours: a form sent twice) is not stored again. Three queries
    and one insert, whatever the number of units.
    """
    outcome = RoundOutcome()
    with transaction.atomic():
        around = surroundings_load(unit_ids=hours_by_unit, at=at)
        rows = []
        for unit_id, hours in hours_by_unit.items():
            s = around.get(unit_id)
            if s and s.before and s.before.at == at and s.before.hours == hours:
                outcome.unchanged.append(unit_id)
                continue
            reason = surroundings_refusal(s, at=at, hours=hours, now=now, zone=zone)
            if reason:
                outcome.refused[unit_id] = reason
                continue
            rows.append(
                MeterReading(
                    unit_id=unit_id, taken_at=at, hours=hours, source=MeterReading.Source.MANUAL
                )
            )
            outcome.saved.append(unit_id)
        MeterReading.objects.bulk_create(rows)  # no post_save: enqueued here, once per unit
        unit_recompute_enqueue(outcome.saved)
    return outcome


def fueling_record(
    *, unit: Unit, source: FuelSource | None, at: datetime, litres: float
) -> Fueling:
    with transaction.atomic():
        return Fueling.objects.create(unit=unit, source=source, fueled_at=at, litres=litres)


def sample_record(*, sample: FuelSample, tie: dict[str, Any]) -> FuelSample:
    """Store a lab result tied to a source, a delivery or a unit (``tie``)."""
    for name, value in tie.items():
        setattr(sample, name, value)
    with transaction.atomic():
        sample.save()
    return sample


def delivery_record(
    *,
    source: FuelSource,
    at: datetime,
    litres: float,
    supplier: str,
    ticket: str,
    sample: FuelSample | None,
) -> Delivery:
    """Store a bulk delivery and, when given, the sample taken from it, together."""
    with transaction.atomic():
        delivery = Delivery.objects.create(
            source=source, delivered_at=at, litres=litres, supplier=supplier, ticket=ticket
        )
        if sample is not None:
            sample_record(sample=sample, tie={"source": source, "delivery": delivery})
    return delivery


def engine_event_record(
    *,
    unit: Unit,
    at: datetime,
    hours: float | None,
    spn: int,
    fmi: int,
    occurrences: int,
    kind: str,
) -> EngineEvent:
    """Store an engine-controller event as reported; a proprietary SPN (above 520,191 in
    SAE J1939-71) is stored as given."""
    with transaction.atomic():
        return EngineEvent.objects.create(
            unit=unit,
            occurred_at=at,
            hours=hours,
            spn=spn,
            fmi=fmi,
            occurrences=occurrences,
            kind=kind,
        )
