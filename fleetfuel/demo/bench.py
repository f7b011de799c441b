"""What ``manage.py benchmark`` measures on the synthetic fleet, each beside its floor: the same
work stripped to what cannot be avoided, timed in the same run, alternately, so that the ratio
does not depend on the machine's mood.

- the projection of every unit (the nightly run: its batches, then its end) against the
  plain SQL that reads the same inputs (the tables and time windows of
  ``planning.selectors.batch_inputs_load``), row tuples fetched and dropped;
- the CSV export of every synthetic service event against ``COPY (the same query) TO STDOUT``;
- the pages (bench_pages.py) against the floor page (floor.py).
"""

from __future__ import annotations

import statistics
import time
from collections.abc import Callable
from datetime import datetime, timedelta
from typing import Any

from django.conf import settings
from django.db import connection
from django.db.models import Max

from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
    Delivery,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    FuelSource,
    MeterReading,
    MeterReplacement,
    ServicePlan,
    Unit,
)
from fleetfuel.ledger.benchmark import export_measure
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.selectors import HistoryScope
from fleetfuel.planning.runs import batch_recompute, run_start
from fleetfuel.planning.selectors import LOOKBACK_DAYS
from services.usage import FORECAST_WINDOW_DAYS


def ms(fn: Callable[[], Any]) -> float:
    started = time.perf_counter()
    fn()
    return (time.perf_counter() - started) * 1000


def paired(
    subject: Callable[[], Any], floor: Callable[[], Any], *, runs: int, warm: bool = True
) -> dict[str, Any]:
    """Warm both once (the subject only if ``warm``), then ``runs`` rounds of floor then
    subject; medians in milliseconds and their ratio (subject / floor)."""
    if warm:
        subject()
    floor()
    floors, subjects = [], []
    for _ in range(runs):
        floors.append(ms(floor))
        subjects.append(ms(subject))
    median, floor_median = statistics.median(subjects), statistics.median(floors)
    return {
        "median_ms": round(median, 2),
        "min_ms": round(min(subjects), 2),
        "max_ms": round(max(subjects), 2),
        "floor_ms": round(floor_median, 2),
        "ratio": round(median / floor_median, 2) if floor_median else None,
        "runs": runs,
    }


def _batches(ids: list[int]) -> list[list[int]]:
    size = settings.PLANNING_BATCH_SIZE
    return [ids[i : i + size] for i in range(0, len(ids), size)]


def projection_run(unit_ids: list[int], now: datetime) -> None:
    """The nightly run's work, in one process: its start (the class life budgets), its
    batches, and its end (the sources' decisions once, with the litres burned; runs.py)."""
    for batch_id in run_start(
        now=now, trigger="benchmark", size=settings.PLANNING_BATCH_SIZE, unit_ids=unit_ids
    ):
        batch_recompute(batch_id=batch_id, now=now)


def _table(model: Any) -> str:
    return str(model._meta.db_table)


def _floor_batch(cursor: Any, ids: list[int], now: datetime) -> int:
    """The projection's inputs for one batch, read by plain SQL (every column of the rows the
    engine reads: the same tables, kinds and time windows): rows fetched and counted."""
    since = now - timedelta(days=LOOKBACK_DAYS)
    marks = ", ".join(["%s"] * len(ids))
    within = f"unit_id IN ({marks})"
    filters = ", ".join(f"'{k}'" for k in (ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER))
    statements: list[tuple[str, list[Any]]] = [
        (f"SELECT * FROM {_table(Unit)} WHERE id IN ({marks})", ids),
        (f"SELECT * FROM {_table(Component)} WHERE {within} AND removed_on IS NULL "
         f"AND kind IN ({filters})", ids),
        (f"SELECT * FROM {_table(ServicePlan)} WHERE unit_class_id IN "
         f"(SELECT unit_class_id FROM {_table(Unit)} WHERE id IN ({marks}))", ids),
        (f"SELECT * FROM {_table(MeterReading)} WHERE {within} AND taken_at >= %s "
         "AND taken_at <= %s", [*ids, now - timedelta(days=FORECAST_WINDOW_DAYS), now]),
        (f"SELECT * FROM {_table(MeterReplacement)} WHERE {within}", ids),
        (f"SELECT * FROM {_table(ServiceEvent)} WHERE {within} AND performed_at <= %s "
         "AND kind IN ('filter_changed', 'separator_drained', 'correction')", [*ids, now]),
        (f"SELECT * FROM {_table(Fueling)} WHERE {within} AND fueled_at >= %s "
         "AND fueled_at <= %s", [*ids, since, now]),
        (f"SELECT * FROM {_table(FuelSample)} WHERE ({within} OR source_id IS NOT NULL) "
         "AND sampled_at >= %s AND sampled_at <= %s",
         [*ids, since - timedelta(days=LOOKBACK_DAYS), now]),
        (f"SELECT * FROM {_table(EngineEvent)} WHERE {within} AND occurred_at >= %s "
         "AND occurred_at <= %s", [*ids, since, now]),
        (f"SELECT * FROM {_table(FilterPressureReading)} WHERE component_id IN (SELECT id FROM "
         f"{_table(Component)} WHERE {within} AND removed_on IS NULL) AND taken_at >= %s "
         "AND taken_at <= %s", [*ids, since, now]),
        (f"SELECT * FROM {_table(FuelSource)}", []),
        (f"SELECT * FROM {_table(Delivery)} WHERE delivered_at >= %s AND delivered_at <= %s",
         [since, now]),
    ]  # fmt: skip
    return _rows_read(cursor, statements)


def _rows_read(cursor: Any, statements: list[tuple[str, list[Any]]]) -> int:
    """Run each statement, fetch its rows and drop them: how many there were."""
    rows = 0
    for sql, params in statements:
        cursor.execute(sql, params)
        rows += len(cursor.fetchall())
    return rows


def _floor_run(cursor: Any, ids: list[int], now: datetime) -> int:
    """What a run reads once: every filter change of its units' classes (the life evidence).
    The run's end (the sources' decisions) reads more, left out of the floor: the ratio errs
    against the projection."""
    marks = ", ".join(["%s"] * len(ids))
    statements: list[tuple[str, list[Any]]] = [
        (f"SELECT e.unit_id, e.component_kind, e.performed_at, e.hour_meter, e.dp_before_bar "
         f"FROM {_table(ServiceEvent)} e JOIN {_table(Unit)} u ON u.id = e.unit_id WHERE "
         f"e.kind = 'filter_changed' AND e.performed_at <= %s AND u.unit_class_id IN "
         f"(SELECT unit_class_id FROM {_table(Unit)} WHERE id IN ({marks}))", [now, *ids]),
    ]  # fmt: skip
    return _rows_read(cursor, statements)


def projection_floor(unit_ids: list[int], now: datetime) -> int:
    with connection.cursor() as cursor:
        run = _floor_run(cursor, unit_ids, now)
        return run + sum(_floor_batch(cursor, batch, now) for batch in _batches(unit_ids))


def projection_measure(unit_ids: list[int], *, now: datetime, runs: int) -> dict[str, Any]:
    out = paired(
        lambda: projection_run(unit_ids, now),
        lambda: projection_floor(unit_ids, now),
        runs=runs,
        warm=False,  # a projection is long enough to need no warming, and costly
    )
    seconds = out["median_ms"] / 1000
    return {
        "units": len(unit_ids),
        "input_rows": projection_floor(unit_ids, now),
        "units_per_s": round(len(unit_ids) / seconds) if seconds else None,
        **out,
    }


def export_all(site_ids: list[int]) -> dict[str, Any]:
    """Every service event of the synthetic depots as CSV (rows/s, peak memory) beside COPY."""
    units = Unit.objects.filter(site_id__in=site_ids)
    heads = dict(
        ServiceEvent.objects.filter(unit__in=units)
        .values("unit_id")
        .annotate(head=Max("seq"))
        .values_list("unit_id", "head")
    )
    scope = HistoryScope(allowed_site_ids=tuple(site_ids))
    return export_measure(scope=scope, heads=heads, rows=sum(heads.values()))
