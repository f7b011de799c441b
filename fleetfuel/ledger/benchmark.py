"""Benchmark of the CSV export: rows per second and peak Python memory, against PostgreSQL's
COPY of the same rows (on PostgreSQL). Called by ``manage.py benchmark``.

The rows are made for the run inside a transaction that is rolled back at the end, so the
database is left as it was (the append-only trigger does not stand in the way of a rollback).
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
from .exports import _LOOKUPS, csv_stream, export_rows
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


def _measure(run: Callable[[], int], rows: int) -> dict[str, float | int]:
    """Time one pass; measure peak traced memory on a second pass (tracing slows Python)."""
    started = time.perf_counter()
    size = run()
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
    }


def _csv_run(scope: HistoryScope, heads: dict[int, int]) -> int:
    size = 0
    for chunk in csv_stream(
        export_rows(events=scope.events(with_kind=False), heads=heads),
        on_done=lambda count, digest: None,
    ):
        size += len(chunk)
    return size


def _copy_run(scope: HistoryScope) -> int:
    """COPY (the same query) TO STDOUT as CSV, read in the chunks psycopg hands over."""
    query = scope.events(with_kind=False).order_by("unit_id", "seq").values(*_LOOKUPS).query
    sql, params = query.sql_with_params()
    digest, size = hashlib.sha256(), 0
    with connection.cursor() as cursor:
        raw = cursor.cursor
        statement = raw.mogrify(sql, params)
        with raw.copy(f"COPY ({statement}) TO STDOUT WITH (FORMAT csv, HEADER)") as copy:
            for data in copy:
                digest.update(data)
                size += len(data)
    return size


def export_benchmark(*, rows: int) -> dict[str, Any]:
    """Export ``rows`` entries as CSV (the app's stream) and, on PostgreSQL, by COPY."""
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
        _chain_fill(unit=unit, user=user, rows=rows)
        scope = HistoryScope(allowed_site_ids=None, site=site)
        result: dict[str, Any] = {
            "rows": rows,
            "database": connection.vendor,
            "csv_stream": _measure(lambda: _csv_run(scope, {unit.pk: rows}), rows),
            "postgres_copy": (
                _measure(lambda: _copy_run(scope), rows)
                if connection.vendor == "postgresql"
                else None
            ),
        }
        transaction.set_rollback(True)
    return result
