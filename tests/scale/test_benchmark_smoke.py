"""The benchmark runs end to end on a small synthetic fleet (100 units, one run) and reports
every figure it promises, so it never rots. How fast is not checked here: speed lives in the
benchmark's own output (README, "Scale")."""

from __future__ import annotations

import io
import json
from pathlib import Path
from typing import Any

import pytest
from django.core.management import call_command

from fleetfuel.demo.bench_report import PAGES
from fleetfuel.ledger.models import ServiceEvent

pytestmark = pytest.mark.django_db


def test_benchmark_reports_every_figure_beside_its_floor(db: Any, tmp_path: Path) -> None:
    out = io.StringIO()
    saved = tmp_path / "bench.json"
    # The fleet is 100 units; 25 of them are projected (--projection-units), to keep it quick.
    call_command("benchmark", units=100, runs=1, projection_units=25, json=str(saved), stdout=out)
    result = json.loads(saved.read_text())
    assert result["meta"]["units"] == 100 and result["meta"]["runs"] == 1
    projection = result["projection"]
    assert projection["units"] == 25 and projection["input_rows"] > 25 * 274
    assert projection["floor_ms"] > 0 and projection["ratio"] > 0
    for key in PAGES:
        page = result["pages"][key]
        assert page["median_ms"] > 0 and page["floor_ms"] > 0 and page["queries"] > 0, key
    assert result["pages"]["floor_page"]["queries"] == 0  # the floor reads nothing
    assert result["close"]["queries"] > 0
    export = result["export"]
    # Every service event, the closes' too (two runs: the warm-up and the timed one).
    assert export["rows"] == ServiceEvent.objects.count()
    assert export["csv_stream"]["bytes"] > 0 and export["csv_stream"]["peak_mib"] > 0
    text = out.getvalue()
    assert "Projection of 25 units" in text and "Due list, first page" in text
    markdown = io.StringIO()
    call_command("benchmark", from_json=str(saved), markdown=True, stdout=markdown)
    assert "| Due list, htmx fragment (filtered) |" in markdown.getvalue()
