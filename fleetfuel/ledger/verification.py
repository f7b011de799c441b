"""Recompute every unit's chain from the database and compare it with its latest checkpoint.

Beyond each chain's own links, four checks catch rows removed behind the app's back:

- a chain shorter than its latest checkpoint says (entries removed);
- a unit whose head was recorded before the latest checkpoint run, but whose latest checkpoint
  is older than that head, or missing (the run noted every head: checkpoints were removed);
- against the last verification that found nothing wrong (a signed ``VerificationMark``): fewer
  entries, fewer checkpoints, or an older latest checkpoint than it saw, and any unit whose
  latest checkpoint then is gone now (named);
- a checkpoint or mark whose signature fails under every accepted key.

What the checks cannot catch is said in the README ("The service history").
"""

from __future__ import annotations

from collections.abc import Iterable, Iterator
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from itertools import groupby
from operator import itemgetter
from typing import Any

from django.db.models import Max, OuterRef, Subquery

from services.ledger import ChainEntry, chain_verify

from .actions import CONTENT_FIELDS, event_content
from .checkpoints import checkpoint_signature_problem, mark_sign, mark_signature_problem
from .models import ChainCheckpoint, ServiceEvent, VerificationMark

CHUNK = 2000
# A checkpoint run reads the heads after taking its time: an entry recorded just before and
# committed just after is noted by the next run (every 15 minutes), so allow one hour.
RUN_GRACE = timedelta(hours=1)


@dataclass(frozen=True, slots=True)
class ChainProblem:
    unit_id: int | None  # None when the problem is the whole ledger's (a table emptier)
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
    head_seq: int = 0
    head_recorded_at: datetime | None = None


def _entries(rows: Iterable[dict[str, Any]], walk: _Walk) -> Iterator[ChainEntry]:
    for row in rows:
        walk.count += 1
        walk.head_seq, walk.head_recorded_at = row["seq"], row["recorded_at"]
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
    signature = checkpoint_signature_problem(cp)
    if signature:
        return ChainProblem(
            unit_id, None, cp.seq, f"the checkpoint of {when} at seq {cp.seq} {signature}"
        )
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


def _missing_checkpoint(
    unit_id: int, cp: ChainCheckpoint | None, walk: _Walk, last_run: datetime | None
) -> ChainProblem | None:
    """The latest checkpoint run noted every head recorded before it: is this one noted?"""
    if last_run is None or walk.head_recorded_at is None:
        return None  # no checkpoint run yet: nothing was noted
    if walk.head_recorded_at > last_run - RUN_GRACE or (cp and cp.seq >= walk.head_seq):
        return None
    had = f"its latest checkpoint is at seq {cp.seq}" if cp else "it has no checkpoint"
    return ChainProblem(
        unit_id, None, walk.head_seq,
        f"the chain's head (seq {walk.head_seq}) predates the checkpoint run of "
        f"{last_run:%Y-%m-%d %H:%M} UTC, but {had}: checkpoints were removed",
    )  # fmt: skip


def _mark_compare(mark: VerificationMark, unit_ids: list[int] | None) -> list[ChainProblem]:
    """Compare the tables with what the last clean verification saw (see the module's doc)."""
    when = f"{mark.verified_at:%Y-%m-%d %H:%M} UTC"
    signature = mark_signature_problem(mark)
    if signature:
        return [ChainProblem(None, None, None, f"the verification mark of {when} {signature}")]
    problems: list[ChainProblem] = []
    heads = {int(k): v for k, v in mark.heads.items()}
    if unit_ids is None:
        events, checkpoints = ServiceEvent.objects.count(), ChainCheckpoint.objects.count()
        latest = ChainCheckpoint.objects.aggregate(at=Max("recorded_at"))["at"]
        for what, now_n, then_n in (
            ("entries in the service history", events, mark.events),
            ("checkpoints", checkpoints, mark.checkpoints),
        ):
            if now_n < then_n:
                problems.append(ChainProblem(
                    None, None, None,
                    f"{now_n} {what} now, but the verification of {when} counted {then_n}: "
                    "rows were removed",
                ))  # fmt: skip
        if mark.latest_checkpoint_at and (latest is None or latest < mark.latest_checkpoint_at):
            problems.append(ChainProblem(
                None, None, None,
                f"the latest checkpoint is older than the one the verification of {when} saw "
                f"({mark.latest_checkpoint_at:%Y-%m-%d %H:%M} UTC): checkpoints were removed",
            ))  # fmt: skip
    else:
        heads = {k: v for k, v in heads.items() if k in unit_ids}
    present = set(
        ChainCheckpoint.objects.filter(pk__in=[v[0] for v in heads.values()]).values_list(
            "pk", flat=True
        )
    )
    for unit_id, (checkpoint_id, seq) in sorted(heads.items()):
        if checkpoint_id not in present:
            problems.append(ChainProblem(
                unit_id, None, seq,
                f"the checkpoint at seq {seq} that the verification of {when} saw is gone: "
                "checkpoints were removed",
            ))  # fmt: skip
    return problems


def ledger_verify(*, unit_ids: list[int] | None = None) -> LedgerReport:
    """Walk every chain (or those of ``unit_ids``) in constant memory; report each unit's
    first broken link, then compare intact chains with their latest signed checkpoint, and
    the tables with the last clean verification's mark."""
    checkpoints = latest_checkpoints(unit_ids)
    mark = VerificationMark.objects.first()
    runs = [ChainCheckpoint.objects.aggregate(at=Max("recorded_at"))["at"]]
    runs.append(mark.latest_checkpoint_at if mark and not mark_signature_problem(mark) else None)
    last_run = max((run for run in runs if run is not None), default=None)
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
            continue
        problem = _checkpoint_compare(unit_id, cp, walk) if cp is not None else None
        if cp is not None and problem is None:
            report.checkpoints += 1
        problem = problem or _missing_checkpoint(unit_id, cp, walk, last_run)
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
    if mark is not None:
        report.problems.extend(_mark_compare(mark, unit_ids))
    return report


def verification_mark_record(*, now: datetime) -> VerificationMark:
    """Note what a clean full verification saw, for the next one to compare (signed)."""
    heads = {str(cp.unit_id): [cp.pk, cp.seq] for cp in latest_checkpoints(None).values()}
    mark = VerificationMark(
        verified_at=now,
        events=ServiceEvent.objects.count(),
        checkpoints=ChainCheckpoint.objects.count(),
        latest_checkpoint_at=ChainCheckpoint.objects.aggregate(at=Max("recorded_at"))["at"],
        heads=heads,
    )
    mark_sign(mark).save()
    return mark
