"""services/ledger.py against SHA-256 itself (FIPS 180-4), computed outside the code."""

from __future__ import annotations

import hashlib
from datetime import UTC, date, datetime

from services.ledger import (
    GENESIS,
    ChainEntry,
    canonical_bytes,
    chain_verify,
    entry_hash,
    months_add,
    retention_ends_on,
)

TINY = {"t": datetime(2026, 1, 2, 3, 4, 5, tzinfo=UTC), "b": 1.0, "a": "x"}
# The bytes the canonical form promises: keys sorted, no spaces, integral float as integer,
# time as ISO 8601 UTC with microseconds and a Z.
TINY_BYTES = b'{"a":"x","b":1,"t":"2026-01-02T03:04:05.000000Z"}'
# printf '%s' '<TINY_BYTES><64 zeros>' | sha256sum   (GNU coreutils, FIPS 180-4)
TINY_SHA256 = "8c4f3ac40252e72a87d33839fffe40f9a7baa60a8ce10bf1aed8498b3411038f"


def test_canonical_form_of_a_tiny_record_is_the_expected_bytes() -> None:
    assert canonical_bytes(TINY) == TINY_BYTES


def test_entry_hash_equals_sha256_of_canonical_bytes_then_previous_hash() -> None:
    by_hashlib = hashlib.sha256(TINY_BYTES + b"0" * 64).hexdigest()
    assert by_hashlib == TINY_SHA256
    assert entry_hash(content=TINY, prev_hash=GENESIS) == TINY_SHA256


def test_non_ascii_text_is_hashed_as_utf8_not_escaped() -> None:
    content = {"notes": "Kraftstoff trüb"}
    expected = hashlib.sha256('{"notes":"Kraftstoff trüb"}'.encode() + b"0" * 64).hexdigest()
    assert entry_hash(content=content, prev_hash=GENESIS) == expected


def test_chain_verify_names_the_first_entry_whose_content_changed() -> None:
    first = {"seq": 1, "v": 1}
    h1 = entry_hash(content=first, prev_hash=GENESIS)
    second = {"seq": 2, "v": 2}
    h2 = entry_hash(content=second, prev_hash=h1)
    chain = [
        ChainEntry("e1", 1, first, GENESIS, h1),
        ChainEntry("e2", 2, {"seq": 2, "v": 3}, h1, h2),  # content altered after hashing
    ]
    broken = chain_verify(chain)
    assert broken is not None and broken.ident == "e2" and broken.seq == 2
    assert "content does not match" in broken.problem


def test_months_add_clamps_to_the_end_of_a_short_month() -> None:
    assert months_add(date(2024, 8, 31), 18) == date(2026, 2, 28)
    assert months_add(date(2023, 8, 31), 6) == date(2024, 2, 29)


def test_retention_is_six_months_after_disposal_or_a_year_after_the_newest_record() -> None:
    # 49 CFR 396.3(c): kept "for a period of 1 year and for 6 months after the motor vehicle
    # leaves the motor carrier's control". Not 18 months after disposal.
    assert retention_ends_on(disposed_on=date(2025, 3, 15), last_record_on=None) == date(
        2025, 9, 15
    )
    # newest record long before disposal: the 6 months after disposal decide
    assert retention_ends_on(
        disposed_on=date(2025, 3, 15), last_record_on=date(2024, 1, 10)
    ) == date(2025, 9, 15)
    # a record a month before disposal is kept its full year
    assert retention_ends_on(
        disposed_on=date(2025, 3, 15), last_record_on=date(2025, 2, 14)
    ) == date(2026, 2, 14)
