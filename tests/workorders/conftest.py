"""Fixtures for the work-order tests: a unit with plans and measurement limits, work orders."""

from __future__ import annotations

from datetime import timedelta
from typing import Any

import pytest
from django.utils import timezone

from fleetfuel.fleet.models import ComponentKind, MeasurementLimit, MeterReading
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask
from tests import factories as f


@pytest.fixture
def limits(unit_class: Any) -> dict[str, MeasurementLimit]:
    """Invented limits, shaped like a fine-filter plan's service measurements."""
    fine = unit_class.plans.get(component_kind=ComponentKind.FINE_FILTER)
    return {
        "cranking": MeasurementLimit.objects.create(
            plan=fine, name="Supply pressure at cranking", low=1.5
        ),
        "load": MeasurementLimit.objects.create(
            plan=fine, name="Supply pressure under load", low=4.0, high=7.0
        ),
        "drain": MeasurementLimit.objects.create(
            plan=fine, name="Drain-line back pressure", high=0.3
        ),
    }


@pytest.fixture
def reading(unit: Any) -> MeterReading:
    return MeterReading.objects.create(
        unit=unit,
        taken_at=timezone.now() - timedelta(days=2),
        hours=1_990.0,
        source=MeterReading.Source.TELEMATICS,
    )


def work_order_make(
    *, unit: Any, created_by: Any, assigned_to: Any = None, number: str | None = None, **kw: Any
) -> WorkOrder:
    n = WorkOrder.objects.count() + 1
    defaults: dict[str, Any] = {
        "number": number or f"WO-T{n:04d}",
        "unit": unit,
        "due_on": timezone.localdate() + timedelta(days=1),
        "created_by": created_by,
        "created_at": timezone.now(),
        "assigned_to": assigned_to,
    }
    defaults.update(kw)
    return WorkOrder.objects.create(**defaults)


def task_make(wo: WorkOrder, kind: str, *, cylinder: int | None = None, **kw: Any) -> Any:
    unit = wo.unit
    component = None
    comp_kind = {
        WorkOrderTask.Kind.INJECTOR_REPLACE: ComponentKind.INJECTOR,
        WorkOrderTask.Kind.CONNECTOR_REPLACE: ComponentKind.HP_CONNECTOR,
        WorkOrderTask.Kind.RELIEF_VALVE_REPLACE: ComponentKind.RELIEF_VALVE,
        WorkOrderTask.Kind.SEPARATOR_DRAIN: ComponentKind.PRIMARY_FILTER,
    }.get(kind)
    if comp_kind:
        component = unit.components.filter(kind=comp_kind, position=cylinder).first()
    defaults: dict[str, Any] = {
        "work_order": wo,
        "kind": kind,
        "cylinder": cylinder,
        "component": component,
        "description": kw.pop("description", f"{kind} {cylinder or ''}".strip()),
        "entry": {},
    }
    defaults.update(kw)
    return WorkOrderTask.objects.create(**defaults)


@pytest.fixture
def wo(unit: Any, manager: Any, mechanic: Any, reading: Any) -> WorkOrder:
    return work_order_make(unit=unit, created_by=manager, assigned_to=mechanic, number="WO-0100")


@pytest.fixture
def other_unit(other_site: Any, unit_class: Any) -> Any:
    return f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-001")
