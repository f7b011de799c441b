"""A fleet moves between installations: export_data of the demo, then import_data into a
database without its fleet, gives the same project_due --json (ids and computed-at times
aside). The reference data (sites, unit classes, plans, fuel sources, people) stays, as it
would be set up in the new installation's admin first."""

from __future__ import annotations

import json
from datetime import datetime
from io import StringIO
from pathlib import Path
from typing import Any

import pytest
import time_machine
from django.apps import apps
from django.core.management import call_command
from django.db import connection

from fleetfuel.demo.actions import demo_seed
from fleetfuel.fleet.models import FuelSample, MeterReading, Unit
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.verification import ledger_verify

NOW = datetime.fromisoformat("2026-12-02T02:40:00Z")
REFERENCE = {"site", "unitclass", "serviceplan", "measurementlimit", "fuelsource"}


def _without_ids(value: Any) -> Any:
    if isinstance(value, dict):
        return {
            k: _without_ids(v)
            for k, v in value.items()
            if not (k == "id" or k.endswith("_id") or k.endswith("_ids") or k == "computed_at")
        }
    if isinstance(value, list):
        return [_without_ids(v) for v in value]
    return value


def due_json() -> list[dict[str, Any]]:
    out = StringIO()
    call_command("project_due", "--json", stdout=out)
    return [_without_ids(json.loads(line)) for line in out.getvalue().splitlines()]


def fleet_rows_delete() -> None:
    """Every row of the fleet (units and all that hangs on them, samples, deliveries), in the
    test's transaction. The service history refuses DELETE on PostgreSQL: TRUNCATE is used."""
    tables = [
        m._meta.db_table
        for m in apps.get_models(include_auto_created=True)
        if m._meta.app_label in {"fleet", "ledger", "planning", "workorders"}
        and m._meta.model_name not in REFERENCE
    ]
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute("SET CONSTRAINTS ALL IMMEDIATE")  # the demo's deferred checks first
            cursor.execute(f"TRUNCATE {', '.join(tables)} CASCADE")
        else:
            for table in tables:
                cursor.execute(f"DELETE FROM {table}")  # foreign keys are deferred on SQLite


def import_all(folder: Path) -> str:
    out, err = StringIO(), StringIO()
    try:
        call_command("import_data", str(folder), stdout=out, stderr=err)
    except SystemExit:
        pytest.fail(out.getvalue() + err.getvalue()[:3000])
    return out.getvalue()


@pytest.mark.django_db
def test_demo_exported_and_imported_projects_the_same(tmp_path: Path) -> None:
    with time_machine.travel(NOW, tick=False):
        demo_seed(now=NOW)
        before = due_json()
        readings = MeterReading.objects.count()
        events = ServiceEvent.objects.count()
        call_command("export_data", "--out", str(tmp_path), stdout=StringIO())
        fleet_rows_delete()
        assert Unit.objects.count() == 0 and FuelSample.objects.count() == 0
        import_all(tmp_path)
        assert MeterReading.objects.count() == readings
        assert ServiceEvent.objects.count() == events
        after = due_json()
        # Re-importing the same files creates nothing (each kind's natural key). Readings and
        # fuelings, the bulk of the files, are re-imported in test_import_modes.py.
        again = tmp_path / "again"
        again.mkdir()
        for name in ("units", "components", "meter_replacements", "samples", "engine_events",
                     "filter_dp", "service_events"):  # fmt: skip
            (again / f"{name}.csv").write_bytes((tmp_path / f"{name}.csv").read_bytes())
        assert import_all(again).count(": stored 0 created, 0 updated, ") == 7
        assert MeterReading.objects.count() == readings
        assert ServiceEvent.objects.count() == events
        report = ledger_verify()
    assert len(before) > 100
    assert after == before
    assert report.ok, report.problems[:3]
    assert report.events == events
