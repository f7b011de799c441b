"""Hour readings from the feed go through the same plausibility rule as every other path
(services/plausibility.py): against the unit's nearest readings in time, stored or earlier in
the same batch. An engine runs at most 24 h a day (common practice: a day has 24 hours), and
its hour meter only counts up unless the meter was replaced (common practice)."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.core.cache import cache

from fleetfuel.fleet.models import MeterReading, MeterReplacement
from fleetfuel.intake.feed_tokens import feed_token_create
from tests import factories as f
from tests.intake.test_feed import URL

NOW = f.NOW


@pytest.fixture
def secret(clock_at_now: Any, site: Any) -> str:
    cache.clear()
    return feed_token_create(site=site, name="gateway", created_by=None, now=NOW).secret


def stored(unit: Any, hours: float, *, days_ago: float) -> None:
    MeterReading.objects.create(unit=unit, hours=hours, taken_at=NOW - timedelta(days=days_ago))


def send(client: Any, secret: str, *items: tuple[str, float, float]) -> list[dict[str, Any]]:
    body = {
        "items": [
            {
                "id": item_id,
                "unit": "N-001",
                "type": "hours",
                "at": (NOW - timedelta(days=days_ago)).isoformat(),
                "hours": h,
            }
            for item_id, h, days_ago in items
        ]
    }
    response = client.post(
        URL,
        data=body,
        content_type="application/json",
        headers={"Authorization": f"Bearer {secret}"},
    )
    assert response.status_code == 200
    return response.json()["results"]  # type: ignore[no-any-return]


def test_a_reading_between_neighbours_must_fit_both(client: Any, secret: str, unit: Any) -> None:
    # 10,974 h and 11,025 h four days apart: 11,100 h between them stands above the later
    # one and gains more on the earlier than the hours elapsed; 11,000 h fits.
    stored(unit, 10_974, days_ago=6)
    stored(unit, 11_025, days_ago=2)
    results = send(
        client, secret, ("between", 11_100, 4), ("above_next", 11_030, 3), ("fits", 11_000, 4.5)
    )
    assert [r["status"] for r in results] == ["refused", "refused", "created"]
    # Checked in time order, batch-mates included: 11,000 h (accepted, 4.5 days ago) is the
    # previous reading by then, 100 h below it twelve hours earlier.
    assert "previous reading (11,000.0 h" in results[0]["error"]
    assert "higher than the next reading (11,025.0 h" in results[1]["error"]
    assert MeterReading.objects.filter(unit=unit, source="telematics").count() == 1


def test_more_hours_than_elapsed_refused(client: Any, secret: str, unit: Any) -> None:
    stored(unit, 10_000, days_ago=1)
    # 30 h gained in 24 h elapsed: more than a day holds.
    results = send(client, secret, ("jump", 10_030, 0))
    assert results[0]["status"] == "refused"
    assert "24 h a day" in results[0]["error"]


def test_batch_mates_are_neighbours(client: Any, secret: str, unit: Any) -> None:
    # No stored readings; the batch's own first reading is the second one's neighbour:
    # 13,000 h one day after 10,000 h is refused, 10,020 h is not.
    results = send(client, secret, ("a", 10_000, 2), ("b", 13_000, 1), ("c", 10_020, 1))
    assert [r["status"] for r in results] == ["created", "refused", "created"]
    assert "10,000.0 h" in results[1]["error"]


def test_backwards_refused_unless_the_meter_was_replaced(
    client: Any, secret: str, unit: Any
) -> None:
    stored(unit, 11_000, days_ago=5)
    assert send(client, secret, ("back", 200, 3))[0]["status"] == "refused"
    MeterReplacement.objects.create(
        unit=unit, replaced_at=NOW - timedelta(days=4), old_meter_final=11_010, new_meter_start=0
    )
    assert send(client, secret, ("back", 50, 3))[0]["status"] == "created"
