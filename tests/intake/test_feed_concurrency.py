"""A gateway that resends a batch while the first copy is still being stored (a timeout and a
retry): on PostgreSQL, where row locks are real, the two copies never both store an item."""

from __future__ import annotations

import threading
from datetime import timedelta
from typing import Any

import pytest
from django.db import connection

from fleetfuel.fleet.models import EngineEvent, MeterReading
from fleetfuel.intake.feed_actions import feed_batch_apply
from fleetfuel.intake.feed_tokens import feed_token_create
from tests import factories as f

pytestmark = pytest.mark.postgres
NOW = f.NOW


def test_a_batch_sent_twice_at_once_is_stored_once(
    postgres: None, transactional_db: Any, site: Any, unit: Any
) -> None:
    token = feed_token_create(site=site, name="gw", created_by=None, now=NOW).token
    at = (NOW - timedelta(hours=3)).isoformat()
    items = [{"id": f"f{n}", "unit": "N-001", "type": "fault", "at": at, "spn": 97, "fmi": 0}
             for n in range(50)]  # fmt: skip
    items.append({"id": "h1", "unit": "N-001", "type": "hours", "at": at, "hours": 1_100.0})
    barrier = threading.Barrier(2)
    outcomes: list[list[str]] = []
    errors: list[BaseException] = []

    def gateway() -> None:
        try:
            barrier.wait(timeout=10)
            results = feed_batch_apply(token=token, raw_items=items, now=NOW)
            outcomes.append([r["status"] for r in results])
        except BaseException as exc:  # reported below, in the test's own thread
            errors.append(exc)
        finally:
            connection.close()

    threads = [threading.Thread(target=gateway) for _ in range(2)]
    for t in threads:
        t.start()
    for t in threads:
        t.join(timeout=60)
    assert not errors, errors
    assert sorted(tuple(sorted(set(o))) for o in outcomes) == [("created",), ("duplicate",)]
    assert EngineEvent.objects.filter(unit=unit).count() == 50
    assert MeterReading.objects.filter(unit=unit, source="telematics").count() == 1
