"""The service history's hash chain, as pure functions.

Each entry's hash is SHA-256 over a canonical serialisation of its content followed by the
previous entry's hash (the first entry of a unit's chain follows GENESIS). Canonical form:
JSON (RFC 8259) with keys sorted, no insignificant white space, UTF-8, floats written by
Python's shortest round-trip repr, datetimes as ISO 8601 UTC with a trailing 'Z'. Anyone with
the exported rows can recompute it with a few lines in any language (see the README).
"""

from __future__ import annotations

import hashlib
import json
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from datetime import UTC, date, datetime

GENESIS = "0" * 64


def _canonical_value(value: object) -> object:
    if isinstance(value, datetime):
        if value.tzinfo is None:
            raise ValueError("ledger datetimes must be timezone-aware")
        return value.astimezone(UTC).strftime("%Y-%m-%dT%H:%M:%S.%fZ")
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, float) and value.is_integer():
        # 12.0 and 12 hash alike whatever the database hands back.
        return int(value)
    return value


def canonical_bytes(content: Mapping[str, object]) -> bytes:
    """The bytes that are hashed for one entry's content."""
    normalised = {key: _canonical_value(val) for key, val in content.items()}
    return json.dumps(
        normalised, sort_keys=True, separators=(",", ":"), ensure_ascii=False, allow_nan=False
    ).encode("utf-8")


def entry_hash(*, content: Mapping[str, object], prev_hash: str) -> str:
    """SHA-256 (FIPS 180-4) of the canonical content followed by the previous hash (ASCII hex)."""
    if len(prev_hash) != 64:
        raise ValueError("prev_hash must be 64 hexadecimal characters")
    digest = hashlib.sha256()
    digest.update(canonical_bytes(content))
    digest.update(prev_hash.encode("ascii"))
    return digest.hexdigest()


@dataclass(frozen=True, slots=True)
class ChainEntry:
    ident: str  # how a person finds it (e.g. the event id)
    seq: int
    content: Mapping[str, object]
    prev_hash: str
    hash: str


@dataclass(frozen=True, slots=True)
class ChainBreak:
    ident: str
    seq: int
    problem: str  # what differs, in words


def chain_verify(entries: Iterable[ChainEntry]) -> ChainBreak | None:
    """Walk one unit's chain in seq order; return the first broken link, or None."""
    expected_prev = GENESIS
    expected_seq = 1
    for entry in entries:
        if entry.seq != expected_seq:
            return ChainBreak(
                entry.ident, entry.seq, f"sequence jumps to {entry.seq}, expected {expected_seq}"
            )
        if entry.prev_hash != expected_prev:
            return ChainBreak(
                entry.ident,
                entry.seq,
                f"prev_hash {entry.prev_hash[:12]}… does not match the previous entry's hash "
                f"{expected_prev[:12]}…",
            )
        recomputed = entry_hash(content=entry.content, prev_hash=entry.prev_hash)
        if recomputed != entry.hash:
            return ChainBreak(
                entry.ident,
                entry.seq,
                f"content does not match its stored hash (stored {entry.hash[:12]}…, "
                f"recomputed {recomputed[:12]}…): the entry was changed after it was recorded",
            )
        expected_prev = entry.hash
        expected_seq += 1
    return None


def canonical_value(value: object) -> object:
    """One value as it appears in the canonical JSON (what exports write for hashed fields)."""
    return _canonical_value(value)


# 49 CFR 396.3(c): the records "shall be retained where the vehicle is either housed or
# maintained for a period of 1 year and for 6 months after the motor vehicle leaves the motor
# carrier's control". Two clocks: each record 1 year from when it is made, and all of a unit's
# records 6 months past its disposal. fleetfuel keeps whichever runs longer.
# Beside it, in Great Britain an operator licence holder keeps maintenance records for at least
# 15 months (DVSA, Guide to maintaining roadworthiness): shown, not computed.
RETENTION_MONTHS_PER_RECORD = 12
RETENTION_MONTHS_AFTER_DISPOSAL = 6
UK_OPERATOR_RECORD_MONTHS = 15


def months_add(day: date, months: int) -> date:
    """The same day of the month ``months`` later, clamped to the month's last day."""
    index = day.month - 1 + months
    year, month = day.year + index // 12, index % 12 + 1
    next_first = date(year + month // 12, month % 12 + 1, 1)
    last_day = (next_first - date.resolution).day
    return date(year, month, min(day.day, last_day))


def retention_ends_on(*, disposed_on: date, last_record_on: date | None) -> date:
    """The first day a disposed unit's history is past its 49 CFR 396.3(c) retention period.

    The later of 6 months after disposal and 1 year after the unit's newest record
    (``last_record_on``, the day its newest service event was performed; None when it has
    none).
    """
    after_disposal = months_add(disposed_on, RETENTION_MONTHS_AFTER_DISPOSAL)
    if last_record_on is None:
        return after_disposal
    return max(after_disposal, months_add(last_record_on, RETENTION_MONTHS_PER_RECORD))
