"""The load run starts gunicorn on 127.0.0.1, drives every target with wrk and stops the
server, so ``make load`` never rots. One second a target at two connections on 100 synthetic
units (two weeks of history); how fast is not checked here (README, "Scale")."""

from __future__ import annotations

import shutil
import socket
from typing import Any

import pytest
from django.utils import timezone

from fleetfuel.demo.bench import projection_run
from fleetfuel.demo.bench_report import load_table
from fleetfuel.demo.loadrun import load_run
from fleetfuel.demo.synth import synthetic_fleet_build
from fleetfuel.fleet.models import Unit
from fleetfuel.workorders.models import WorkOrderTask
from tests.conftest import need


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return int(s.getsockname()[1])


def test_load_run_drives_every_target_without_errors(transactional_db: Any) -> None:
    need(shutil.which("wrk") is not None, "needs wrk (Debian package wrk)")
    now = timezone.now()
    made = synthetic_fleet_build(units=100, seed=2, now=now, days=14)
    projection_run(list(Unit.objects.values_list("pk", flat=True)), now)
    result = load_run(
        site_ids=made.site_ids, connections=[2], seconds=1, port=free_port(), workers=1, threads=2
    )
    runs = result["runs"]
    assert set(runs) == {"floor_page", "due_list", "unit_page", "task_save"}
    for name, (run,) in runs.items():
        assert run["requests"] > 0 and run["errors"] == 0, (name, run)
        assert 0 < run["p50_ms"] <= run["p99_ms"], (name, run)
    # The saves reached the tasks: each rotated task holds the posted entry as its draft.
    saved = WorkOrderTask.objects.filter(draft_saved_at__isnull=False)
    assert saved.exists() and all(t.entry.get("water_ml") == 12 for t in saved)
    assert "Task save (POST)" in load_table(result | {"seconds": 1})
    with pytest.raises(ValueError, match="At most"):
        load_run(site_ids=made.site_ids, connections=[2], seconds=600, port=1, workers=1, threads=1)
