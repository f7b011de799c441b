"""Retention: 49 CFR 396.3(c) keeps records 1 year, and 6 months after the vehicle leaves the
carrier's control. fleetfuel keeps a disposed unit's history at least 1 year and 6 months after
disposal, and does not purge it even then (the history is append-only and hash-chained)."""

from __future__ import annotations

from datetime import date
from typing import Any

import pytest

from fleetfuel.ledger.actions import RetentionError, unit_history_purge
from fleetfuel.ledger.models import ServiceEvent

pytestmark = pytest.mark.django_db


def test_purge_of_a_unit_in_service_is_refused(unit: Any, mechanic: Any, add_events: Any) -> None:
    add_events(unit, mechanic, 2)
    with pytest.raises(RetentionError, match=r"still in service.*49 CFR 396\.3\(c\)"):
        unit_history_purge(unit=unit, today=date(2030, 1, 1))
    assert ServiceEvent.objects.filter(unit=unit).count() == 2


@pytest.mark.parametrize("today", [date(2026, 3, 31), date(2027, 9, 29)])
def test_purge_within_18_months_of_disposal_names_the_date(
    unit: Any, mechanic: Any, add_events: Any, today: date
) -> None:
    add_events(unit, mechanic, 1)
    unit.disposed_on = date(2026, 3, 30)
    unit.save()
    with pytest.raises(RetentionError) as caught:
        unit_history_purge(unit=unit, today=today)
    message = str(caught.value)
    assert "must be kept until 2027-09-30" in message
    assert "1 year and 6 months after disposal" in message and "396.3(c)" in message
    assert ServiceEvent.objects.filter(unit=unit).count() == 1


def test_after_the_retention_period_purging_is_still_not_offered(
    unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 1)
    unit.disposed_on = date(2026, 3, 30)
    unit.save()
    with pytest.raises(RetentionError, match="does not purge service history"):
        unit_history_purge(unit=unit, today=date(2027, 9, 30))
    assert ServiceEvent.objects.filter(unit=unit).count() == 1
