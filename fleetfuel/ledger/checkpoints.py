"""Signed checkpoints of each unit's chain head, and the signed marks of past verifications.

Both are signed (HMAC-SHA256) with ``LEDGER_SIGNING_KEY``, a key of the ledger's own: rotating
SECRET_KEY changes nothing here. Each row names its key by a short fingerprint (``key_id``), so
a row signed with an older key verifies while that key is listed in
``LEDGER_SIGNING_KEY_FALLBACKS``. Rows from before the ledger had its own key (``key_id`` empty)
were signed with SECRET_KEY; they verify while it, or one of SECRET_KEY_FALLBACKS, is set.
"""

from __future__ import annotations

import hashlib
import json
from datetime import datetime

from django.conf import settings
from django.db.models import OuterRef, QuerySet, Subquery
from django.utils.crypto import constant_time_compare, salted_hmac

from fleetfuel.fleet.models import Unit

from .models import ChainCheckpoint, ServiceEvent, VerificationMark

_SALT = "fleetfuel.ledger.ChainCheckpoint"
_MARK_SALT = "fleetfuel.ledger.VerificationMark"
BATCH = 500


def key_id_of(key: str) -> str:
    """A short public fingerprint of a signing key (it does not reveal the key)."""
    return hashlib.sha256(f"fleetfuel ledger key id|{key}".encode()).hexdigest()[:16]


def signing_keys() -> dict[str, str]:
    """The keys that verify, by fingerprint: the current key first, then the fallbacks."""
    keys = [settings.LEDGER_SIGNING_KEY, *settings.LEDGER_SIGNING_KEY_FALLBACKS]
    return {key_id_of(key): key for key in reversed(keys)}


def _sign(salt: str, message: str, key: str) -> str:
    return salted_hmac(salt, message, secret=key, algorithm="sha256").hexdigest()


def _message(*, unit_id: int, seq: int, head_hash: str, recorded_at: datetime) -> str:
    return f"{unit_id}|{seq}|{head_hash}|{recorded_at.isoformat()}"


def checkpoint_sign(
    *, unit_id: int, seq: int, head_hash: str, recorded_at: datetime
) -> tuple[str, str]:
    """(key_id, signature) of a checkpoint, signed with the current ledger key."""
    key = settings.LEDGER_SIGNING_KEY
    message = _message(unit_id=unit_id, seq=seq, head_hash=head_hash, recorded_at=recorded_at)
    return key_id_of(key), _sign(_SALT, message, key)


def _candidate_keys(key_id: str) -> list[str]:
    if not key_id:  # signed before the ledger had a key of its own
        return [settings.SECRET_KEY, *getattr(settings, "SECRET_KEY_FALLBACKS", [])]
    key = signing_keys().get(key_id)
    return [key] if key else []


def signature_problem(*, salt: str, message: str, key_id: str, signature: str) -> str | None:
    """None when ``signature`` is valid under a key still accepted; otherwise why not."""
    keys = _candidate_keys(key_id)
    if not keys:
        return (
            f"is signed with key {key_id}, which is neither LEDGER_SIGNING_KEY nor among "
            "LEDGER_SIGNING_KEY_FALLBACKS"
        )
    if any(constant_time_compare(_sign(salt, message, key), signature) for key in keys):
        return None
    if not key_id:
        return (
            "has an invalid signature under SECRET_KEY and SECRET_KEY_FALLBACKS (it predates "
            "LEDGER_SIGNING_KEY): the table was altered, or the SECRET_KEY that signed it is "
            "no longer listed"
        )
    return "has an invalid signature: the checkpoint table was altered"


def checkpoint_signature_problem(checkpoint: ChainCheckpoint) -> str | None:
    message = _message(
        unit_id=checkpoint.unit_id,
        seq=checkpoint.seq,
        head_hash=checkpoint.head_hash,
        recorded_at=checkpoint.recorded_at,
    )
    return signature_problem(
        salt=_SALT, message=message, key_id=checkpoint.key_id, signature=checkpoint.signature
    )


def checkpoint_signature_valid(checkpoint: ChainCheckpoint) -> bool:
    return checkpoint_signature_problem(checkpoint) is None


def _mark_message(mark: VerificationMark) -> str:
    latest = mark.latest_checkpoint_at.isoformat() if mark.latest_checkpoint_at else ""
    heads = hashlib.sha256(json.dumps(mark.heads, sort_keys=True).encode()).hexdigest()
    return f"{mark.verified_at.isoformat()}|{mark.events}|{mark.checkpoints}|{latest}|{heads}"


def mark_sign(mark: VerificationMark) -> VerificationMark:
    key = settings.LEDGER_SIGNING_KEY
    mark.key_id, mark.signature = key_id_of(key), _sign(_MARK_SALT, _mark_message(mark), key)
    return mark


def mark_signature_problem(mark: VerificationMark) -> str | None:
    return signature_problem(
        salt=_MARK_SALT, message=_mark_message(mark), key_id=mark.key_id, signature=mark.signature
    )


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
        key_id, signature = checkpoint_sign(
            unit_id=unit_id, seq=seq, head_hash=head_hash, recorded_at=now
        )
        batch.append(
            ChainCheckpoint(
                unit_id=unit_id,
                seq=seq,
                head_hash=head_hash,
                recorded_at=now,
                key_id=key_id,
                signature=signature,
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
