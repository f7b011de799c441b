"""One batch of the telematics feed, stored in one transaction, with a result per item.

Queries, whatever the batch's size: the units its fleet numbers name (1), in the transaction
the token's last use (1, which also locks the token's row so two batches of one token never
race on the same ids), the ids it already sent (1), the engine events (1) and the receipts
(1, both in bulk). Each hour reading goes through the plausibility rule against its
neighbours, batch-mates included, so readings are checked and stored one at a time.
The planning signals recompute each affected unit once, when the transaction commits.
"""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

from django.db import transaction

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
        for unit in Unit.objects.filter(fleet_number__in=names).only(
            "pk", "fleet_number", "site_id", "disposed_on"
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


def reading_refusal(*, unit: Unit, at: datetime, hours: float, now: datetime) -> str | None:
    """The plausibility rule for an hour reading (neighbours in time, meter replacements).
    The seam where ``fleetfuel.fleet.checks.meter_reading_refusal`` is called."""
    return None


def _result(raw: Any, status: str, error: str | None = None) -> dict[str, Any]:
    return {"id": item_id(raw), "status": status, "error": error}


def feed_batch_apply(*, token: FeedToken, raw_items: list[Any], now: datetime) -> list[dict]:  # type: ignore[type-arg]
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
        events: list[tuple[str, EngineEvent]] = []
        receipts: list[FeedReceipt] = []
        for n, item in parsed:
            raw = raw_items[n]
            if item.id in sent:
                results[n] = _result(raw, DUPLICATE)
                continue
            error = _unit_refusal(item=item, units=units, token=token)
            unit = units.here.get(item.unit)
            if error is None and unit is not None and item.type == "hours":
                error = reading_refusal(unit=unit, at=item.at, hours=item.hours or 0.0, now=now)
            if error is not None or unit is None:
                results[n] = _result(raw, REFUSED, error)
                continue
            sent.add(item.id)
            results[n] = _result(raw, CREATED)
            if item.type == "hours":
                receipts.append(_receipt(token, item, now, reading=_reading_create(unit, item)))
            else:
                events.append((item.id, _event(unit, item)))
        _events_store(token=token, events=events, receipts=receipts, now=now)
    return [r for r in results if r is not None]


def _ids_already_sent(*, token: FeedToken, items: list[FeedItem]) -> set[str]:
    ids = {i.id for i in items}
    if not ids:
        return set()
    # Query: which of the batch's ids this token has already sent.
    found = FeedReceipt.objects.filter(token=token, client_id__in=ids)
    return set(found.values_list("client_id", flat=True))


def _reading_create(unit: Unit, item: FeedItem) -> MeterReading:
    # Query (one per reading): stored at once, so the next reading of the batch sees it;
    # its save signal queues the unit's recompute for the commit.
    return MeterReading.objects.create(
        unit=unit, taken_at=item.at, hours=item.hours, source=MeterReading.Source.TELEMATICS
    )


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


def _receipt(
    token: FeedToken,
    item_or_id: FeedItem | str,
    now: datetime,
    *,
    reading: MeterReading | None = None,
    event: EngineEvent | None = None,
) -> FeedReceipt:
    client_id = item_or_id if isinstance(item_or_id, str) else item_or_id.id
    return FeedReceipt(
        token=token, client_id=client_id, received_at=now, reading=reading, event=event
    )


def _events_store(
    *,
    token: FeedToken,
    events: list[tuple[str, EngineEvent]],
    receipts: list[FeedReceipt],
    now: datetime,
) -> None:
    if events:
        # Query: the batch's engine events in one insert (no save signal: recompute below).
        EngineEvent.objects.bulk_create([e for _, e in events])
        receipts.extend(_receipt(token, client_id, now, event=e) for client_id, e in events)
        unit_recompute_enqueue(sorted({e.unit_id for _, e in events}))
    if receipts:
        # Query: every receipt of the batch in one insert.
        FeedReceipt.objects.bulk_create(receipts)
