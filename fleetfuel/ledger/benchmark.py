"""Benchmark of the CSV export: rows per second and peak Python memory of the Python path
(csv module) and, on PostgreSQL, of the COPY path (csv_copy.py) against a plain COPY of the
same query. Called by ``manage.py benchmark``.

The rows are made for the run inside a transaction that is rolled back at the end, so the
database is left as it was (the append-only trigger does not stand in the way of a rollback).
On PostgreSQL they are made by one INSERT ... SELECT over generate_series: linked (each
prev_hash is the previous hash) but not sealed (each hash is a digest of the row's number,
not of its content), which the export neither checks nor needs.
"""

from __future__ import annotations

import hashlib
import time
import tracemalloc
import uuid
from collections.abc import Callable
from datetime import UTC, date, datetime, timedelta
from typing import Any

from django.contrib.auth import get_user_model
from django.db import connection, transaction

from fleetfuel.fleet.models import Site, Unit, UnitClass
from services.ledger import GENESIS, entry_hash

from .actions import event_content
from .csv_copy import copy_csv_stream
from .exports import _LOOKUPS, csv_stream, export_rows, view_annotate
from .models import ServiceEvent
from .selectors import HistoryScope

BATCH = 5000


def _chain_fill(*, unit: Unit, user: Any, rows: int) -> None:
    """``rows`` entries on one unit, hash-chained as service_event_append would chain them."""
    start = datetime(2020, 1, 1, tzinfo=UTC)
    prev = GENESIS
    batch: list[ServiceEvent] = []
    for seq in range(1, rows + 1):
        at = start + timedelta(minutes=seq)
        event = ServiceEvent(
            unit=unit, kind=ServiceEvent.Kind.SEPARATOR_DRAINED, performed_at=at, recorded_at=at,
            recorded_by=user, hour_meter=1000 + seq / 10, water_ml=float(seq % 40),
            water_appearance="clear", notes=f"benchmark entry {seq}", seq=seq, prev_hash=prev,
        )  # fmt: skip
        event.hash = prev = entry_hash(content=event_content(event), prev_hash=prev)
        batch.append(event)
        if len(batch) == BATCH:
            ServiceEvent.objects.bulk_create(batch)
            batch = []
    ServiceEvent.objects.bulk_create(batch)


def _sql_fill(*, unit: Unit, user: Any, rows: int) -> None:
    """``rows`` entries like _chain_fill's, made by PostgreSQL in one statement."""
    table = ServiceEvent._meta.db_table
    digest = "encode(sha256(convert_to(%s || ':' || {n}, 'UTF8')), 'hex')"
    blank = ("component_kind", "part_number", "old_serial", "new_serial", "measurement_name",
             "parts_used", "reason", "corrected_kind")  # fmt: skip
    sql = (
        f"INSERT INTO {table} (unit_id, recorded_by_id, kind, performed_at, recorded_at, "
        f"hour_meter, water_ml, water_appearance, notes, seq, prev_hash, hash, {', '.join(blank)})"
        " SELECT %s, %s, %s, t, t, 1000 + g::float8 / 10, mod(g, 40)::float8, 'clear', "
        f"'benchmark entry ' || g, g, "
        f"CASE WHEN g = 1 THEN %s ELSE {digest.format(n='(g - 1)')} END, {digest.format(n='g')}, "
        f"{', '.join(repr('') for _ in blank)} "
        "FROM generate_series(1, %s) AS g, "
        "LATERAL (SELECT %s::timestamptz + g * interval '1 minute') AS at(t)"
    )
    tag = unit.serial_number
    params = [unit.pk, user.pk, ServiceEvent.Kind.SEPARATOR_DRAINED, GENESIS, tag, tag, rows,
              datetime(2020, 1, 1, tzinfo=UTC)]  # fmt: skip
    with connection.cursor() as cursor:
        cursor.execute(sql, params)
        cursor.execute(f"ANALYZE {table}")


def _measure(run: Callable[[], tuple[int, str]], rows: int) -> dict[str, Any]:
    """Time one pass; measure peak traced memory on a second pass (tracing slows Python)."""
    started = time.perf_counter()
    size, sha256 = run()
    seconds = time.perf_counter() - started
    tracemalloc.start()
    try:
        run()
        _, peak = tracemalloc.get_traced_memory()
    finally:
        tracemalloc.stop()
    return {
        "seconds": round(seconds, 3),
        "rows_per_s": round(rows / seconds) if seconds else 0,
        "peak_mib": round(peak / 2**20, 2),
        "bytes": size,
        "sha256": sha256,
    }


def _csv_run(scope: HistoryScope, heads: dict[int, int]) -> tuple[int, str]:
    size, digest = 0, hashlib.sha256()
    for chunk in csv_stream(
        export_rows(events=scope.events(with_kind=False), heads=heads),
        on_done=lambda count, digest: None,
    ):
        size += len(chunk)
        digest.update(chunk)
    return size, digest.hexdigest()


def _csv_copy_run(scope: HistoryScope, heads: dict[int, int]) -> tuple[int, str]:
    size, done = 0, []
    for chunk in copy_csv_stream(
        events=scope.events(with_kind=False),
        heads=heads,
        on_done=lambda count, digest: done.append(digest),
    ):
        size += len(chunk)
    return size, done[0]


def _copy_run(scope: HistoryScope) -> tuple[int, str]:
    """COPY (the same query) TO STDOUT as CSV, read in the chunks psycopg hands over."""
    events = view_annotate(scope.events(with_kind=False))
    query = events.order_by("unit_id", "seq").values(*_LOOKUPS).query
    sql, params = query.sql_with_params()
    digest, size = hashlib.sha256(), 0
    with connection.cursor() as cursor:
        raw = cursor.cursor
        statement = raw.mogrify(sql, params)
        with raw.copy(f"COPY ({statement}) TO STDOUT WITH (FORMAT csv, HEADER)") as copy:
            for data in copy:
                digest.update(data)
                size += len(data)
    return size, digest.hexdigest()


def export_benchmark(*, rows: int) -> dict[str, Any]:
    """Export ``rows`` entries as CSV by the Python path and, on PostgreSQL, by the COPY path
    and by a plain COPY of the unformatted query (the yardstick)."""
    tag = uuid.uuid4().hex[:8]
    with transaction.atomic():
        site = Site.objects.create(name=f"Benchmark {tag}", code=f"bench-{tag}")
        unit_class = UnitClass.objects.create(
            name=f"Benchmark {tag}", typical_hours_per_day=10, typical_burn_l_per_h=20
        )
        unit = Unit.objects.create(
            site=site, unit_class=unit_class, fleet_number=f"B-{tag}", make="Benchmake",
            model="BM", serial_number=tag, year=2020, cylinders=6, in_service_on=date(2020, 1, 1),
        )  # fmt: skip
        user = get_user_model().objects.create_user(f"bench-{tag}")
        postgres = connection.vendor == "postgresql"
        (_sql_fill if postgres else _chain_fill)(unit=unit, user=user, rows=rows)
        scope = HistoryScope(allowed_site_ids=None, site=site)
        heads = {unit.pk: rows}
        result: dict[str, Any] = {
            "rows": rows,
            "database": connection.vendor,
            "csv_stream": _measure(lambda: _csv_run(scope, heads), rows),
            "csv_copy": _measure(lambda: _csv_copy_run(scope, heads), rows) if postgres else None,
            "postgres_copy": _measure(lambda: _copy_run(scope), rows) if postgres else None,
        }
        transaction.set_rollback(True)
    return result


def export_measure(*, scope: HistoryScope, heads: dict[int, int], rows: int) -> dict[str, Any]:
    """The export of rows already stored (a synthetic fleet's), by the Python path and, on
    PostgreSQL, by the COPY path and by a plain COPY of the same query (the floor); the
    ratio is the export path's time over the plain COPY's."""
    postgres = connection.vendor == "postgresql"
    result: dict[str, Any] = {
        "rows": rows,
        "database": connection.vendor,
        "csv_stream": _measure(lambda: _csv_run(scope, heads), rows),
        "csv_copy": _measure(lambda: _csv_copy_run(scope, heads), rows) if postgres else None,
        "postgres_copy": _measure(lambda: _copy_run(scope), rows) if postgres else None,
    }
    if postgres:
        floor = result["postgres_copy"]["seconds"]
        for path in ("csv_stream", "csv_copy"):
            result[path]["ratio"] = round(result[path]["seconds"] / floor, 2) if floor else None
    return result
