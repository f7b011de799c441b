"""The feed answers a batch in a fixed number of queries, whatever its size (DEVELOPERS.md:
a list's query count does not grow with its length). A batch of 10 items and one of 100,
each half hour readings and half engine faults over several units, cost the same."""

from __future__ import annotations

import json
from datetime import timedelta
from typing import Any

import pytest
from django.core.cache import cache

from fleetfuel.fleet.models import EngineEvent, MeterReading
from fleetfuel.intake.feed_tokens import feed_token_create
from tests import factories as f
from tests.intake.test_feed import URL

NOW = f.NOW


@pytest.fixture
def fleet(clock_at_now: Any, site: Any, unit_class: Any) -> list[Any]:
    cache.clear()
    units = [f.unit_make(site=site, unit_class=unit_class, fleet_number=f"Q-{n}") for n in range(5)]
    for unit in units:
        MeterReading.objects.create(unit=unit, hours=1_000, taken_at=NOW - timedelta(days=30))
    return units


def batch(size: int) -> list[dict[str, Any]]:
    items = []
    for n in range(size):
        unit = f"Q-{n % 5}"
        at = (NOW - timedelta(days=20) + timedelta(hours=n)).isoformat()
        if n % 2:
            items.append(
                {"id": f"f{n}", "unit": unit, "type": "fault", "at": at, "spn": 97, "fmi": 0}
            )
        else:
            items.append(
                {"id": f"h{n}", "unit": unit, "type": "hours", "at": at, "hours": 1_001 + n / 10}
            )
    return items


@pytest.mark.parametrize("size", [10, 100])
def test_fixed_queries_per_batch(
    client: Any, fleet: list[Any], site: Any, size: int, django_assert_num_queries: Any
) -> None:
    secret = feed_token_create(site=site, name="gw", created_by=None, now=NOW).secret
    body = json.dumps({"items": batch(size)})
    # 1 the token by its hash; 2 the units named by the batch's fleet numbers; 3 SAVEPOINT
    # (the batch's transaction, inside the test's); 4 the token's last use (locks its row);
    # 5 the ids this token already sent; 6-8 the plausibility rule's readings and meter
    # replacements for the batch (checks.meter_readings_check: the nearest stored readings
    # outside the batch's span, those inside it, the replacements); 9 the readings in one
    # insert; 10 the engine events in one insert; 11 the receipts in one insert; 12 RELEASE
    # SAVEPOINT.
    with django_assert_num_queries(12):
        response = client.post(
            URL,
            data=body,
            content_type="application/json",
            headers={"Authorization": f"Bearer {secret}"},
        )
    assert [r["status"] for r in response.json()["results"]] == ["created"] * size
    assert MeterReading.objects.filter(source="telematics").count() == size // 2
    assert EngineEvent.objects.count() == size // 2
