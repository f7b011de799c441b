"""The export benchmark runs every path over the same rows and leaves the database as it was.
(It measures speed; this test checks only what it does, never how fast.)"""

from __future__ import annotations

from typing import Any

import pytest
from django.db import connection

from fleetfuel.fleet.models import Unit
from fleetfuel.ledger.benchmark import export_benchmark
from fleetfuel.ledger.models import ServiceEvent

pytestmark = pytest.mark.django_db


def test_benchmark_reports_both_paths_and_rolls_back(db: Any) -> None:
    result = export_benchmark(rows=120)
    assert result["rows"] == 120 and result["database"] == connection.vendor
    csv_part = result["csv_stream"]
    assert csv_part["bytes"] > 120 * 100 and csv_part["peak_mib"] > 0
    if connection.vendor == "postgresql":
        assert result["postgres_copy"]["bytes"] > 120 * 50
        # The COPY path writes the Python path's bytes (SHA-256 by hashlib in both runs).
        assert result["csv_copy"]["sha256"] == csv_part["sha256"]
        assert result["csv_copy"]["bytes"] == csv_part["bytes"]
    else:
        assert result["postgres_copy"] is None and result["csv_copy"] is None
    assert not ServiceEvent.objects.exists() and not Unit.objects.exists()
