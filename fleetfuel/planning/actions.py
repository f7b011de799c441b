"""Writes of the planning app: store the engine's projections and flags for units."""

from __future__ import annotations

import gc
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from datetime import datetime
from typing import Any

from django.db import connection, transaction
from django.db.models import Q

from services.common import Basis, DueStatus, Projection
from services.filter_life import LifeBudget
from services.urgency import estimate_overrun_hours, lateness, urgency_tier

from .engine import UnitResult, unit_compute
from .models import DueItem, StaleProjection, UnitFlag, UnitForecast
from .selectors import batch_inputs_load
from .source_decisions import source_decisions_recompute
from .source_models import SourceDecisionUnit

STATUS_RANK = {s: rank for rank, s in enumerate(DueStatus)}  # in DueStatus's order of urgency
DUE_FIELDS = [
    "unit",
    "site",
    "sort_fleet_number",
    "status",
    "rank",
    "urgency",
    "late_hours",
    "late_from",
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
    key: tuple[str, ...],
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
    if not rows:
        return
    if connection.vendor == "postgresql":
        rows_upsert_copy(model=model, rows=rows, key=key, update_fields=update_fields)
    else:
        model.objects.bulk_create(
            rows,
            update_conflicts=True,
            unique_fields=[k.removesuffix("_id") for k in key],
            update_fields=update_fields,
        )


def rows_upsert_copy(
    *, model: Any, rows: list[Any], key: tuple[str, ...], update_fields: list[str]
) -> None:
    """``bulk_create(rows, update_conflicts=True, ...)`` on PostgreSQL, by COPY into a scratch
    table of the session and one INSERT ... ON CONFLICT from it: the same statement's work,
    but each value is sent once as COPY text. ``bulk_create`` sends each column as an array
    literal, and a due item's explanation and inputs (several kB of JSON) are escaped into
    it and parsed out again (measured, 200 synthetic units' 600 due items: 0.3-0.45 s by
    ``bulk_create``, 0.2 s by COPY). Same rows, same statement semantics."""
    fields = [f for f in model._meta.concrete_fields if not f.primary_key]
    quote = connection.ops.quote_name
    table = quote(model._meta.db_table)
    scratch = quote(f"upsert_{model._meta.db_table}")
    columns = ", ".join(quote(f.column) for f in fields)
    changed = [model._meta.get_field(name).column for name in update_fields]
    # In a transaction (the scratch table is emptied at its commit), no savepoint of its own
    with transaction.atomic(savepoint=False), connection.cursor() as cursor:
        cursor.execute(
            f"CREATE TEMPORARY TABLE IF NOT EXISTS {scratch} ON COMMIT DELETE ROWS "
            f"AS SELECT {columns} FROM {table} WITH NO DATA"
        )
        cursor.execute(f"TRUNCATE {scratch}")  # an earlier call in this transaction's rows
        with cursor.cursor.copy(f"COPY {scratch} ({columns}) FROM STDIN") as copy:
            for row in rows:
                copy.write_row(
                    [f.get_db_prep_save(getattr(row, f.attname), connection) for f in fields]
                )
        cursor.execute(
            f"INSERT INTO {table} ({columns}) SELECT {columns} FROM {scratch} "
            f"ON CONFLICT ({', '.join(quote(k) for k in key)}) DO UPDATE SET "
            + ", ".join(f"{quote(c)} = EXCLUDED.{quote(c)}" for c in changed)
        )


def _overrun_hours(p: Projection) -> float:
    """Hours since an exhausted dirt estimate ran out (0 for anything else)."""
    i = p.inputs
    if p.basis is not Basis.CONTAMINANT_BUDGET or p.status not in (
        DueStatus.CHECK,
        DueStatus.OVERDUE,
    ):
        return 0.0
    keys = ("loading", "budget", "burn_l_per_h", "current_concentration_per_ml")
    numbers = [i.get(k) for k in (*keys, "hours_since_change")]
    if not all(isinstance(n, int | float) for n in numbers):
        return 0.0
    loading, budget, burn, conc, since = (float(n) for n in numbers)  # type: ignore[arg-type]
    return estimate_overrun_hours(
        loading=loading,
        budget=budget,
        burn_l_per_h=burn,
        concentration_per_ml=conc,
        hours_since_change=since,
    )


def due_item_make(
    result: UnitResult, component_id: int, p: Projection, stood_down: bool, now: datetime
) -> DueItem:
    """One projection as a due item, with its urgency and lateness (services.urgency)."""
    hours_left = round(
        p.due.hours - result.current_hours
        if p.due.hours is not None
        else (p.due.on - now.date()).days * result.rate,
        1,
    )
    late = lateness(
        due_on=p.due.on,
        hours_left=hours_left,
        overrun_hours=_overrun_hours(p),
        rate=result.rate,
        today=now.date(),
    )
    return DueItem(
        unit_id=result.unit_id,
        site_id=result.site_id,
        component_id=component_id,
        task=p.task.value,
        status=p.status.value,
        rank=STATUS_RANK[p.status],
        urgency=int(urgency_tier(status=p.status, basis=p.basis, unit_stood_down=stood_down)),
        late_hours=late.hours,
        late_from=late.since,
        basis=p.basis.value,
        due_hours=round(p.due.hours, 1) if p.due.hours is not None else None,
        hours_left=hours_left,
        due_on=p.due.on,
        earliest_on=p.due.earliest,
        latest_on=p.due.latest,
        explanation=list(p.explanation),
        inputs=dict(p.inputs),
        computed_at=now,
    )


@dataclass(frozen=True)
class RecomputeResult:
    units: int
    items: int
    flags: int


@contextmanager
def collector_paused() -> Iterator[None]:
    """Python's cyclic garbage collector off for one batch. A batch holds its units' rows and
    results at once (tens of thousands of objects), and every full collection walked them
    all: about a fifth of a batch's time (measured, 1,000 synthetic units). What the batch
    frees goes by reference counting as before; cycles wait for the collector, back on after
    the batch (its memory is bounded by the batch size)."""
    was_on = gc.isenabled()
    gc.disable()
    try:
        yield
    finally:
        if was_on:
            gc.enable()


def due_items_recompute(
    *,
    unit_ids: list[int],
    now: datetime,
    sources: bool = True,
    lives: dict[tuple[int, str], LifeBudget] | None = None,
) -> RecomputeResult:
    """Project every task of the given units and store the latest word on each.

    Idempotent: the same inputs give the same rows (upserts keyed on component and task, so
    a due item keeps its id, and the work-order tasks that point at it stay linked).
    A fixed number of queries per call, whatever the number of units.
    The units' stale marks read before their inputs are removed after (a mark made since
    stays, for the sweep). With ``sources`` (the default) the fuel sources' decisions are
    refreshed after; a full run's batches leave that to the run's end (runs.py), and pass
    the class life budgets the run worked out at its start (``lives``).
    """
    with collector_paused():
        return _recompute(unit_ids=unit_ids, now=now, sources=sources, lives=lives)


def _recompute(
    *,
    unit_ids: list[int],
    now: datetime,
    sources: bool,
    lives: dict[tuple[int, str], LifeBudget] | None,
) -> RecomputeResult:
    marks = list(
        StaleProjection.objects.filter(unit_id__in=unit_ids).values_list("unit_id", "marked_at")
    )
    batch = batch_inputs_load(unit_ids=unit_ids, now=now, lives=lives)
    items: list[DueItem] = []
    flags: list[UnitFlag] = []
    forecasts: list[UnitForecast] = []
    burned: dict[int, dict[int, float]] = {}  # litres of each fueling burned, by unit
    for bundle in batch.units:
        result = unit_compute(bundle, batch, now)
        if result.forecast is not None:
            forecasts.append(
                UnitForecast.of(unit_id=result.unit_id, forecast=result.forecast, computed_at=now)
            )
        if result.burned:
            burned[result.unit_id] = result.burned
        stood_down = any(f.high_pressure for f in result.flags)
        for cp in result.projections:
            item = due_item_make(result, cp.component_id, cp.projection, stood_down, now)
            item.sort_fleet_number = bundle.unit.fleet_number  # for the list's sorts
            items.append(item)
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
        rows_replace(
            model=UnitForecast,
            unit_ids=ids,
            rows=forecasts,
            key=("unit_id",),
            update_fields=UnitForecast.FIELDS,
        )
        if marks:
            seen = Q()
            for unit_id, marked_at in marks:
                seen |= Q(unit_id=unit_id, marked_at=marked_at)
            StaleProjection.objects.filter(seen).delete()
    if sources:
        source_decisions_recompute(now=now, burned=burned)  # the sources' decisions, after units
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


def source_decisions_refresh(*, now: datetime) -> None:
    """The sources' decisions once a full run's batches are done, with the litres burned of
    every unit an open decision lists: the batches skip the decisions (one query over the
    whole fleet's fuelings each), so the units the decisions name are worked out again here
    (their tank runs; a few units, not the fleet) and the decisions refreshed with them."""
    with collector_paused():
        _sources_refresh(now=now)


def _sources_refresh(*, now: datetime) -> None:
    source_decisions_recompute(now=now)  # opens and closes decisions on the batches' rows
    listed = list(
        SourceDecisionUnit.objects.filter(decision__resolved_at__isnull=True)
        .values_list("unit_id", flat=True)
        .distinct()
    )
    if not listed:
        return
    batch = batch_inputs_load(unit_ids=listed, now=now)
    burned: dict[int, dict[int, float]] = {}
    for bundle in batch.units:
        result = unit_compute(bundle, batch, now)
        if result.burned:
            burned[result.unit_id] = result.burned
    source_decisions_recompute(now=now, burned=burned)
