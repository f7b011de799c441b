"""Writes of the planning app: store the engine's projections and flags for units."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import datetime
from typing import Any

from django.db import transaction
from django.db.models import Q

from services.common import DueStatus

from .engine import unit_compute
from .models import DueItem, StaleProjection, UnitFlag
from .selectors import batch_inputs_load
from .source_decisions import source_decisions_recompute

STATUS_RANK = {s: rank for rank, s in enumerate(DueStatus)}  # in DueStatus's order of urgency
DUE_FIELDS = [
    "unit",
    "site",
    "status",
    "rank",
    "basis",
    "due_hours",
    "hours_left",
    "due_on",
    "earliest_on",
    "latest_on",
    "explanation",
    "inputs",
    "computed_at",
    "projection_stale",
]


FLAG_FIELDS = ["title", "reason", "checks", "since", "high_pressure", "computed_at"]


def rows_replace(
    *,
    model: Any,
    unit_ids: list[int],
    rows: list[Any],
    key: tuple[str, str],
    update_fields: list[str],
) -> None:
    """Make the units' rows exactly ``rows``: delete the ones no longer produced, upsert the
    rest on ``key`` (so a row keeps its id, and whatever points at it stays linked)."""
    keep = {tuple(getattr(r, k) for k in key) for r in rows}
    stale = [
        pk
        for pk, *values in model.objects.filter(unit_id__in=unit_ids).values_list("pk", *key)
        if tuple(values) not in keep
    ]
    if stale:
        model.objects.filter(pk__in=stale).delete()
    if rows:
        model.objects.bulk_create(
            rows,
            update_conflicts=True,
            unique_fields=[k.removesuffix("_id") for k in key],
            update_fields=update_fields,
        )


@dataclass(frozen=True)
class RecomputeResult:
    units: int
    items: int
    flags: int


def due_items_recompute(
    *, unit_ids: list[int], now: datetime, sources: bool = True
) -> RecomputeResult:
    """Project every task of the given units and store the latest word on each.

    Idempotent: the same inputs give the same rows (upserts keyed on component and task, so
    a due item keeps its id, and the work-order tasks that point at it stay linked).
    A fixed number of queries per call, whatever the number of units.
    The units' stale marks read before their inputs are removed after (a mark made since
    stays, for the sweep). With ``sources`` (the default) the fuel sources' decisions are
    refreshed after; a full run's batches leave that to the run's end (runs.py).
    """
    marks = list(
        StaleProjection.objects.filter(unit_id__in=unit_ids).values_list("unit_id", "marked_at")
    )
    batch = batch_inputs_load(unit_ids=unit_ids, now=now)
    items: list[DueItem] = []
    flags: list[UnitFlag] = []
    for bundle in batch.units:
        result = unit_compute(bundle, batch, now)
        for cp in result.projections:
            p = cp.projection
            items.append(
                DueItem(
                    unit_id=result.unit_id,
                    site_id=result.site_id,
                    component_id=cp.component_id,
                    task=p.task.value,
                    status=p.status.value,
                    rank=STATUS_RANK[p.status],
                    basis=p.basis.value,
                    due_hours=round(p.due.hours, 1) if p.due.hours is not None else None,
                    hours_left=round(
                        p.due.hours - result.current_hours
                        if p.due.hours is not None
                        else (p.due.on - now.date()).days * result.rate,
                        1,
                    ),
                    due_on=p.due.on,
                    earliest_on=p.due.earliest,
                    latest_on=p.due.latest,
                    explanation=list(p.explanation),
                    inputs=dict(p.inputs),
                    computed_at=now,
                )
            )
        for f in result.flags:
            flags.append(
                UnitFlag(
                    unit_id=result.unit_id,
                    code=f.code,
                    title=f.title,
                    reason=f.reason,
                    checks=list(f.checks),
                    since=f.since,
                    high_pressure=f.high_pressure,
                    computed_at=now,
                )
            )
    ids = [b.unit.pk for b in batch.units]
    with transaction.atomic():
        rows_replace(
            model=DueItem,
            unit_ids=ids,
            rows=items,
            key=("component_id", "task"),
            update_fields=DUE_FIELDS,
        )
        rows_replace(
            model=UnitFlag,
            unit_ids=ids,
            rows=flags,
            key=("unit_id", "code"),
            update_fields=FLAG_FIELDS,
        )
        if marks:
            seen = Q()
            for unit_id, marked_at in marks:
                seen |= Q(unit_id=unit_id, marked_at=marked_at)
            StaleProjection.objects.filter(seen).delete()
    if sources:
        source_decisions_recompute(now=now)  # the sources' decisions, after their units
    return RecomputeResult(units=len(ids), items=len(items), flags=len(flags))


def units_mark_stale(*, unit_ids: list[int], now: datetime, reason: str) -> None:
    """Mark units whose recompute could not be queued: the sweep and the pages see it."""
    if not unit_ids:
        return
    with transaction.atomic():
        StaleProjection.objects.bulk_create(
            [StaleProjection(unit_id=u, marked_at=now, reason=reason[:1000]) for u in unit_ids],
            update_conflicts=True,
            unique_fields=["unit"],
            update_fields=["marked_at", "reason"],
        )
        DueItem.objects.filter(unit_id__in=unit_ids).update(projection_stale=True)


def stale_units_recompute(*, now: datetime, limit: int) -> RecomputeResult:
    """Recompute up to ``limit`` units marked stale, oldest mark first (the sweep's work)."""
    ids = list(
        StaleProjection.objects.order_by("marked_at").values_list("unit_id", flat=True)[:limit]
    )
    if not ids:
        return RecomputeResult(units=0, items=0, flags=0)
    return due_items_recompute(unit_ids=ids, now=now)
