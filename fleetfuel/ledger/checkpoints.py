"""Signed checkpoints of each unit's chain head (HMAC-SHA256 keyed from SECRET_KEY)."""

from __future__ import annotations

from datetime import datetime

from django.db.models import OuterRef, QuerySet, Subquery
from django.utils.crypto import constant_time_compare, salted_hmac

from fleetfuel.fleet.models import Unit

from .models import ChainCheckpoint, ServiceEvent

_SALT = "fleetfuel.ledger.ChainCheckpoint"
BATCH = 500


def checkpoint_sign(*, unit_id: int, seq: int, head_hash: str, recorded_at: datetime) -> str:
    message = f"{unit_id}|{seq}|{head_hash}|{recorded_at.isoformat()}"
    return salted_hmac(_SALT, message, algorithm="sha256").hexdigest()


def checkpoint_signature_valid(checkpoint: ChainCheckpoint) -> bool:
    expected = checkpoint_sign(
        unit_id=checkpoint.unit_id,
        seq=checkpoint.seq,
        head_hash=checkpoint.head_hash,
        recorded_at=checkpoint.recorded_at,
    )
    return constant_time_compare(expected, checkpoint.signature)


def units_with_heads(units: QuerySet[Unit]) -> QuerySet[Unit]:
    """Units annotated with their chain head (``head_seq``, ``head_hash``; None when empty)."""
    latest = ServiceEvent.objects.filter(unit_id=OuterRef("pk")).order_by("-seq")
    return units.annotate(
        head_seq=Subquery(latest.values("seq")[:1]),
        head_hash=Subquery(latest.values("hash")[:1]),
    )


def chain_checkpoints_record(*, now: datetime) -> int:
    """Note every unit's chain head, once per head: a rerun adds nothing. Returns rows added."""
    heads = (
        units_with_heads(Unit.objects.order_by("pk"))
        .filter(head_seq__isnull=False)
        .values_list("pk", "head_seq", "head_hash")
    )
    added = 0
    batch: list[ChainCheckpoint] = []
    for unit_id, seq, head_hash in heads.iterator(chunk_size=BATCH):
        batch.append(
            ChainCheckpoint(
                unit_id=unit_id,
                seq=seq,
                head_hash=head_hash,
                recorded_at=now,
                signature=checkpoint_sign(
                    unit_id=unit_id, seq=seq, head_hash=head_hash, recorded_at=now
                ),
            )
        )
        if len(batch) >= BATCH:
            added += _batch_store(batch)
            batch = []
    return added + _batch_store(batch)


def _batch_store(batch: list[ChainCheckpoint]) -> int:
    if not batch:
        return 0
    known = set(
        ChainCheckpoint.objects.filter(
            unit_id__in=[c.unit_id for c in batch], seq__in=[c.seq for c in batch]
        ).values_list("unit_id", "seq")
    )
    fresh = [c for c in batch if (c.unit_id, c.seq) not in known]
    # ignore_conflicts covers a second beat racing this one between the read and the insert.
    ChainCheckpoint.objects.bulk_create(fresh, ignore_conflicts=True)
    return len(fresh)
