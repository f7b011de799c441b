"""The projection follows a correction: a filter change moved from the fine filter to the
primary one counts for the primary filter, and no longer for the fine one."""

from __future__ import annotations

from datetime import timedelta
from io import StringIO
from typing import Any

import pytest
from django.core.management import call_command

from fleetfuel.fleet.models import ComponentKind
from fleetfuel.ledger.actions import service_event_append, service_event_correct
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.planning.models import DueItem
from tests import factories as f
from tests.planning.builders import history_make, sample_make

NOW = f.NOW


def due_hours(unit: Any) -> dict[str, float | None]:
    call_command("project_due", "--quiet", stdout=StringIO())
    return {i.task: i.due_hours for i in DueItem.objects.filter(unit=unit)}


def test_the_projection_follows_a_correction_of_the_filter(
    clock_at_now: Any, site: Any, unit_class: Any, mechanic: Any, manager: Any
) -> None:
    tank = f.source_make(name="Clean tank")
    unit = f.unit_make(site=site, unit_class=unit_class, fleet_number="C-1")
    # 30 days at 10 h/day from 1,000 h, both filters fitted at the start; the fuel meets the
    # reference 18/16/13 (World-Wide Fuel Charter, 6th ed.), so the plan's 500 h governs.
    history_make(unit=unit, source=tank, days=30)
    sample_make(source=tank, at=NOW - timedelta(days=31), code="18/16/13", ref="S-CLEAN")
    fine = unit.components.get(kind=ComponentKind.FINE_FILTER)

    def fine_change(days_ago: int, meter: float) -> ServiceEvent:
        return service_event_append(
            unit=unit, kind=ServiceEvent.Kind.FILTER_CHANGED, recorded_by=mechanic,
            performed_at=NOW - timedelta(days=days_ago), hour_meter=meter,
            component=fine, component_kind=ComponentKind.FINE_FILTER,
        )  # fmt: skip

    fine_change(20, 1100.0)  # a real fine-filter change
    wrong = fine_change(10, 1200.0)  # the primary filter's change, closed as the fine one
    before = due_hours(unit)
    # As recorded: the primary filter counts from its fitting (1,000 + 500 h), the fine one
    # from the later change (1,200 + 500 h).
    assert before["primary_filter"] == pytest.approx(1500, abs=0.5)
    assert before["fine_filter"] == pytest.approx(1700, abs=0.5)

    service_event_correct(
        event=wrong, reason="Closed with the wrong filter", recorded_by=manager,
        component=unit.components.get(kind=ComponentKind.PRIMARY_FILTER),
    )  # fmt: skip
    after = due_hours(unit)
    # Corrected: the primary filter counts from 1,200 h; the fine one from its real change
    # at 1,100 h, the wrongly recorded one no longer counting.
    assert after["primary_filter"] == pytest.approx(1700, abs=0.5)
    assert after["fine_filter"] == pytest.approx(1600, abs=0.5)
