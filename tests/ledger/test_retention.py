"""Retention: 49 CFR 396.3(c) keeps records "where the vehicle is either housed or maintained
for a period of 1 year and for 6 months after the motor vehicle leaves the motor carrier's
control". fleetfuel keeps a disposed unit's history until the later of 6 months after disposal
and 1 year after its newest record, and does not purge it even then (the history is append-only
and hash-chained). The GB rule beside it: 15 months (DVSA, Guide to maintaining roadworthiness).
The events of these tests are performed on 2026-06-14 (tests/ledger/conftest.py)."""

from __future__ import annotations

from datetime import date
from typing import Any

import pytest

from fleetfuel.ledger.actions import RetentionError, unit_history_purge
from fleetfuel.ledger.models import ServiceEvent

pytestmark = pytest.mark.django_db


def test_purge_of_a_unit_in_service_is_refused(unit: Any, mechanic: Any, add_events: Any) -> None:
    add_events(unit, mechanic, 2)
    with pytest.raises(RetentionError) as caught:
        unit_history_purge(unit=unit, today=date(2030, 1, 1))
    message = str(caught.value)
    assert "still in service" in message and "49 CFR 396.3(c)" in message
    assert "1 year where the unit is housed or maintained" in message
    assert "6 months after it leaves your control" in message
    assert "15 months" in message and "DVSA" in message
    assert ServiceEvent.objects.filter(unit=unit).count() == 2


@pytest.mark.parametrize(
    ("disposed_on", "today", "kept_until"),
    [
        # 6 months after disposal is the later clock (record 2026-06-14 + 1 year = 2027-06-14).
        (date(2026, 12, 31), date(2027, 6, 29), "2027-06-30"),
        # 1 year after the newest record is the later clock (disposal + 6 months = 2027-01-01).
        (date(2026, 7, 1), date(2027, 6, 13), "2027-06-14"),
    ],
)
def test_purge_within_retention_names_the_date(
    unit: Any, mechanic: Any, add_events: Any, disposed_on: date, today: date, kept_until: str
) -> None:
    add_events(unit, mechanic, 1)
    unit.disposed_on = disposed_on
    unit.save()
    with pytest.raises(RetentionError) as caught:
        unit_history_purge(unit=unit, today=today)
    message = str(caught.value)
    assert f"must be kept until {kept_until}" in message
    assert "6 months after disposal and 1 year after the newest record" in message
    assert "396.3(c)" in message and "1 year and 6 months" not in message
    assert ServiceEvent.objects.filter(unit=unit).count() == 1


def test_after_the_retention_period_purging_is_still_not_offered(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 1)
    unit.disposed_on = date(2026, 12, 31)
    unit.save()
    with pytest.raises(RetentionError, match="ended on 2027-06-30.*does not purge service history"):
        unit_history_purge(unit=unit, today=date(2027, 6, 30))
    assert ServiceEvent.objects.filter(unit=unit).count() == 1
