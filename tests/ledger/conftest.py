"""Builders for ledger tests: entries appended through the one door (service_event_append)."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest

from fleetfuel.fleet.models import ComponentKind
from fleetfuel.ledger.actions import service_event_append
from fleetfuel.ledger.models import ServiceEvent
from tests.factories import NOW


def events_add(unit: Any, by: Any, count: int, *, start: Any = None, **fields: Any) -> list[Any]:
    """``count`` separator drains on ``unit``, a day apart, ending at ``start`` (or NOW)."""
    start = start or NOW
    primary = unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    return [
        service_event_append(
            unit=unit,
            kind=ServiceEvent.Kind.SEPARATOR_DRAINED,
            performed_at=start - timedelta(days=count - i),
            recorded_by=by,
            hour_meter=1000.0 + 10 * i,
            component=primary,
            component_kind=ComponentKind.PRIMARY_FILTER,
            water_ml=12.5,
            water_appearance=ServiceEvent.Appearance.CLEAR,
            **fields,
        )
        for i in range(count)
    ]


@pytest.fixture
def add_events() -> Any:
    return events_add
