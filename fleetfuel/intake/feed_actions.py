"""One batch of the telematics feed, stored in one transaction, with a result per item.

A fixed number of queries, whatever the batch's size: the units its fleet numbers name (1);
in the transaction, the token's last use (1, which also locks the token's row, so two batches
of one token never race on the same ids), the ids it already sent (1), what the plausibility
rule needs for the hour readings (3, ``fleetfuel.fleet.checks.meter_readings_check``: each
reading against its nearest readings, stored or in the batch), then the readings, the engine
events and the receipts in one insert each (3). The bulk inserts send no save signals, so each
affected unit's recompute is queued here, once, for when the transaction commits.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from datetime import UTC, datetime
from typing import Any

from django.db import transaction

from fleetfuel.fleet.checks import ReadingRow, meter_readings_check
from fleetfuel.fleet.models import EngineEvent, MeterReading, Unit
from fleetfuel.planning.signals import unit_recompute_enqueue
from services.flags import event_kind_classify

from .feed_items import FeedItem, item_id, item_parse
from .models import FeedReceipt, FeedToken

CREATED, DUPLICATE, REFUSED = "created", "duplicate", "refused"


@dataclass
class _Units:
    """The batch's fleet numbers: those at the token's site, and those only elsewhere."""

    here: dict[str, Unit]
    elsewhere: set[str]


def _units_load(*, token: FeedToken, items: list[FeedItem]) -> _Units:
    names = {i.unit for i in items}
    here: dict[str, Unit] = {}
    elsewhere: set[str] = set()
    if names:
        # Query: every unit with one of the batch's fleet numbers, at any site.
        for unit in (
            Unit.objects.filter(fleet_number__in=names)
            .order_by()
            .only("pk", "fleet_number", "site_id", "disposed_on")
        ):
            if unit.site_id == token.site_id:
                here[unit.fleet_number] = unit
            else:
                elsewhere.add(unit.fleet_number)
    return _Units(here=here, elsewhere=elsewhere - set(here))


def _unit_refusal(*, item: FeedItem, units: _Units, token: FeedToken) -> str | None:
    if item.unit in units.elsewhere:
        return f"Unit {item.unit!r} is not at this token's site ({token.site.code})."
    unit = units.here.get(item.unit)
    if unit is None:
        return f"No unit has fleet number {item.unit!r}."
    if unit.disposed_on is not None and item.at.date() > unit.disposed_on:
        return f"Unit {item.unit!r} was disposed of on {unit.disposed_on:%Y-%m-%d}."
    return None


def _result(raw: Any, status: str, error: str | None = None) -> dict[str, Any]:
    return {"id": item_id(raw), "status": status, "error": error}


def feed_batch_apply(
    *, token: FeedToken, raw_items: list[Any], now: datetime
) -> list[dict[str, Any]]:
    """Store what is acceptable of one batch; one result per item, in the batch's order."""
    results: list[dict[str, Any] | None] = [None] * len(raw_items)
    parsed: list[tuple[int, FeedItem]] = []
    for n, raw in enumerate(raw_items):
        try:
            parsed.append((n, item_parse(raw, now=now)))
        except ValueError as exc:
            results[n] = _result(raw, REFUSED, str(exc))
    units = _units_load(token=token, items=[item for _, item in parsed])
    with transaction.atomic():
        # Query: the token's last use; the row stays locked until this batch commits.
        FeedToken.objects.filter(pk=token.pk).update(last_used_at=now)
        sent = _ids_already_sent(token=token, items=[item for _, item in parsed])
        first: dict[str, int] = {}  # each id's first item in the batch
        candidates: list[tuple[int, FeedItem, Unit]] = []
        for n, item in parsed:
            if item.id in sent:
                results[n] = _result(raw_items[n], DUPLICATE)
            elif item.id not in first:
                first[item.id] = n
                unit = units.here.get(item.unit)
                error = _unit_refusal(item=item, units=units, token=token)
                if error is not None or unit is None:
                    results[n] = _result(raw_items[n], REFUSED, error)
                else:
                    candidates.append((n, item, unit))
        made = _Made()
        for (n, item, unit), error in zip(
            candidates, _plausibility(candidates, now=now), strict=True
        ):
            results[n] = _result(raw_items[n], REFUSED if error else CREATED, error)
            if not error:
                made.add(unit=unit, item=item)
        made.store(token=token, now=now)
    for n, item in parsed:  # an id sent twice in the batch: the second follows the first
        if results[n] is None:
            earlier = results[first[item.id]]
            assert earlier is not None
            again = "The same id came earlier in this batch and was refused."
            status = DUPLICATE if earlier["status"] == CREATED else REFUSED
            results[n] = _result(raw_items[n], status, again if status == REFUSED else None)
    return [r for r in results if r is not None]


def _plausibility(
    candidates: list[tuple[int, FeedItem, Unit]], *, now: datetime
) -> list[str | None]:
    """Each candidate's refusal by the hour-meter rule (None for faults and plausible
    readings). Queries (3): the rule's neighbours of every reading, batch-mates included."""
    rows = [
        ReadingRow(unit_id=unit.pk, at=item.at, hours=item.hours)
        for _, item, unit in candidates
        if item.type == "hours" and item.hours is not None
    ]
    refusals = iter(meter_readings_check(rows=rows, now=now, zone=UTC))
    return [next(refusals) if item.type == "hours" else None for _, item, _ in candidates]


@dataclass
class _Made:
    """The rows a batch creates, each with the client's id, inserted in bulk at the end."""

    readings: list[tuple[str, MeterReading]] = field(default_factory=list)
    events: list[tuple[str, EngineEvent]] = field(default_factory=list)

    def add(self, *, unit: Unit, item: FeedItem) -> None:
        if item.type == "hours":
            reading = MeterReading(
                unit=unit, taken_at=item.at, hours=item.hours, source=MeterReading.Source.TELEMATICS
            )
            self.readings.append((item.id, reading))
        else:
            self.events.append((item.id, _event(unit, item)))

    def store(self, *, token: FeedToken, now: datetime) -> None:
        receipts: list[FeedReceipt] = []
        if self.readings:
            # Query: the batch's hour readings in one insert (no save signal: recompute below).
            MeterReading.objects.bulk_create([r for _, r in self.readings])
            receipts.extend(
                FeedReceipt(token=token, client_id=i, received_at=now, reading=r)
                for i, r in self.readings
            )
        if self.events:
            # Query: the batch's engine events in one insert.
            EngineEvent.objects.bulk_create([e for _, e in self.events])
            receipts.extend(
                FeedReceipt(token=token, client_id=i, received_at=now, event=e)
                for i, e in self.events
            )
        if receipts:
            # Query: every receipt of the batch in one insert.
            FeedReceipt.objects.bulk_create(receipts)
        # Each unit's recompute queued once, for when the transaction commits.
        rows = [*(r for _, r in self.readings), *(e for _, e in self.events)]
        unit_recompute_enqueue(sorted({row.unit_id for row in rows}))


def _ids_already_sent(*, token: FeedToken, items: list[FeedItem]) -> set[str]:
    ids = {i.id for i in items}
    if not ids:
        return set()
    # Query: which of the batch's ids this token has already sent.
    found = FeedReceipt.objects.filter(token=token, client_id__in=ids)
    return set(found.values_list("client_id", flat=True))


def _event(unit: Unit, item: FeedItem) -> EngineEvent:
    assert item.spn is not None and item.fmi is not None
    return EngineEvent(
        unit=unit,
        occurred_at=item.at,
        hours=item.hours,
        spn=item.spn,
        fmi=item.fmi,
        occurrences=item.count,
        kind=event_kind_classify(spn=item.spn, fmi=item.fmi),
    )
