"""Recompute every unit's chain from the database and compare it with its latest checkpoint."""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from itertools import groupby
from operator import itemgetter
from typing import Any

from django.db.models import OuterRef, Subquery

from services.ledger import ChainEntry, chain_verify

from .actions import CONTENT_FIELDS, event_content
from .checkpoints import checkpoint_signature_valid
from .models import ChainCheckpoint, ServiceEvent

CHUNK = 2000


@dataclass(frozen=True, slots=True)
class ChainProblem:
    unit_id: int
    event_id: int | None  # None when the problem is the chain's length or the checkpoint
    seq: int | None
    problem: str


@dataclass(slots=True)
class LedgerReport:
    units: int = 0
    events: int = 0
    checkpoints: int = 0
    problems: list[ChainProblem] = field(default_factory=list)

    @property
    def ok(self) -> bool:
        return not self.problems


@dataclass(slots=True)
class _Walk:
    """What a walk through one chain saw: its length and the hash at the checkpoint's seq."""

    at_seq: int | None
    count: int = 0
    hash_at_seq: str | None = None
    event_at_seq: int | None = None


def _entries(rows: Iterable[dict[str, Any]], walk: _Walk) -> Iterator[ChainEntry]:
    for row in rows:
        walk.count += 1
        if row["seq"] == walk.at_seq:
            walk.hash_at_seq, walk.event_at_seq = row["hash"], row["id"]
        yield ChainEntry(
            ident=str(row["id"]),
            seq=row["seq"],
            content=event_content(row),
            prev_hash=row["prev_hash"],
            hash=row["hash"],
        )


def latest_checkpoints(unit_ids: list[int] | None) -> dict[int, ChainCheckpoint]:
    latest = (
        ChainCheckpoint.objects.filter(unit_id=OuterRef("unit_id")).order_by("-seq").values("pk")
    )
    rows = ChainCheckpoint.objects.filter(pk=Subquery(latest[:1]))
    if unit_ids is not None:
        rows = rows.filter(unit_id__in=unit_ids)
    return {cp.unit_id: cp for cp in rows}


def _checkpoint_compare(unit_id: int, cp: ChainCheckpoint, walk: _Walk) -> ChainProblem | None:
    when = f"{cp.recorded_at:%Y-%m-%d %H:%M} UTC"
    if not checkpoint_signature_valid(cp):
        return ChainProblem(
            unit_id, None, cp.seq,
            f"the checkpoint of {when} at seq {cp.seq} has an invalid signature: "
            "the checkpoint table was altered",
        )  # fmt: skip
    if walk.count < cp.seq:
        return ChainProblem(
            unit_id, None, cp.seq,
            f"the chain ends at seq {walk.count} but the checkpoint of {when} saw seq {cp.seq}: "
            "entries were removed",
        )  # fmt: skip
    if walk.hash_at_seq != cp.head_hash:
        return ChainProblem(
            unit_id, walk.event_at_seq, cp.seq,
            f"hash {str(walk.hash_at_seq)[:12]}… differs from the checkpoint of {when} "
            f"({cp.head_hash[:12]}…): the chain was rewritten",
        )  # fmt: skip
    return None


def ledger_verify(*, unit_ids: list[int] | None = None) -> LedgerReport:
    """Walk every chain (or those of ``unit_ids``) in constant memory; report each unit's
    first broken link, then compare intact chains with their latest signed checkpoint."""
    checkpoints = latest_checkpoints(unit_ids)
    rows = ServiceEvent.objects.order_by("unit_id", "seq").values(
        "id", "prev_hash", "hash", *CONTENT_FIELDS
    )
    if unit_ids is not None:
        rows = rows.filter(unit_id__in=unit_ids)
    report = LedgerReport()
    seen: set[int] = set()
    for unit_id, group in groupby(rows.iterator(chunk_size=CHUNK), key=itemgetter("unit_id")):
        seen.add(unit_id)
        cp = checkpoints.get(unit_id)
        walk = _Walk(at_seq=cp.seq if cp else None)
        broken = chain_verify(_entries(group, walk))
        report.units += 1
        report.events += walk.count
        if broken is not None:
            report.problems.append(
                ChainProblem(unit_id, int(broken.ident), broken.seq, broken.problem)
            )
        elif cp is not None:
            report.checkpoints += 1
            problem = _checkpoint_compare(unit_id, cp, walk)
            if problem:
                report.problems.append(problem)
    for unit_id, cp in checkpoints.items():
        if unit_id not in seen:
            report.problems.append(
                ChainProblem(
                    unit_id,
                    None,
                    cp.seq,
                    f"the chain is empty but a checkpoint saw seq {cp.seq}: entries were removed",
                )  # fmt: skip
            )
    return report
