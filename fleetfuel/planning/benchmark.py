"""A synthetic fleet for benchmarks and scale tests (invented data, never the demo's)."""

from __future__ import annotations

import random
from datetime import date, datetime, timedelta
from typing import Any

from django.utils import timezone

from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
    MeterReading,
    ServicePlan,
    Site,
    Unit,
    UnitClass,
)
from fleetfuel.ledger.actions import service_events_append
from fleetfuel.ledger.models import ServiceEvent
from services.common import Basis, DueStatus
from services.urgency import urgency_tier

from .actions import STATUS_RANK
from .models import DueItem

STATUSES = ["overdue", "due", "soon", "ok"]
OFFSET_DAYS = {"overdue": -3, "due": 1, "soon": 8, "ok": 40}


def synthetic_fleet_make(
    *, site: Site, unit_class: UnitClass, n: int, prefix: str = "U"
) -> list[Unit]:
    """n units, each with two filters and its three due items, in bulk (fast at 20,000)."""
    today = timezone.localdate()
    now = timezone.now()
    units = Unit.objects.bulk_create(
        (
            Unit(
                site=site,
                unit_class=unit_class,
                fleet_number=f"{prefix}-{i:05d}",
                make="M",
                model="X",
                serial_number=f"S{i}",
                year=2020,
                cylinders=6,
                in_service_on=date(2020, 1, 1),
            )
            for i in range(n)
        ),
        batch_size=2000,
    )
    comps = Component.objects.bulk_create(
        (
            Component(unit=u, kind=k, installed_on=today, installed_hours=0)
            for u in units
            for k in (ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER)
        ),
        batch_size=4000,
    )
    items = []
    for i, (primary, fine) in enumerate(zip(comps[::2], comps[1::2], strict=True)):
        for j, (comp, task) in enumerate(
            [(primary, "primary_filter"), (fine, "fine_filter"), (primary, "separator_drain")]
        ):
            status = STATUSES[(i + j) % 4]
            days = OFFSET_DAYS[status] + i % 3
            items.append(
                DueItem(
                    unit_id=primary.unit_id,
                    site_id=site.pk,
                    sort_fleet_number=f"{prefix}-{i:05d}",
                    component=comp,
                    task=task,
                    status=status,
                    rank=STATUS_RANK[DueStatus(status)],
                    urgency=urgency_tier(
                        status=DueStatus(status), basis=Basis.PLAN_HOURS, unit_stood_down=False
                    ),
                    late_hours=-10.0 * days,
                    late_from=today + timedelta(days=days),
                    basis="plan_hours",
                    due_hours=1000 + 10 * days,
                    hours_left=10.0 * days,
                    due_on=today + timedelta(days=days),
                    earliest_on=today + timedelta(days=days - 1),
                    latest_on=today + timedelta(days=days + 2),
                    explanation=[f"Explained {i}-{j}"],
                    inputs={},
                    computed_at=now,
                )
            )
    DueItem.objects.bulk_create(items, batch_size=5000)
    return units


def synthetic_history_make(
    *,
    units: list[Unit],
    now: datetime,
    recorded_by: Any,
    days: int = 300,
    seed: int = 0,
    life_shape: float = 2.5,
    life_scale_hours: float = 420.0,
) -> dict[tuple[int, str], list[tuple[float, bool]]]:
    """Hour-meter readings and filter changes for ``days`` before ``now`` (invented data).

    Each unit runs at its own steady rate from 1,000 h, read every second day. Each filter
    element's true life is drawn from a Weibull distribution (hours); it is changed when it is
    used up, with a dP before the change over the plan's limit, or at the plan's interval if
    that comes first, with a dP below the limit. Returns, by (unit id, filter kind), each
    element's (hours achieved, used up) in order: what a backtest must find.
    """
    rng = random.Random(seed)
    start = now - timedelta(days=days)
    truth: dict[tuple[int, str], list[tuple[float, bool]]] = {}
    readings: list[MeterReading] = []
    for unit in units:
        rate = rng.uniform(10.0, 16.0)  # engine hours per day
        last = days * rate
        readings += [
            MeterReading(unit=unit, taken_at=start + timedelta(days=d), hours=1000 + d * rate)
            for d in range(0, days + 1, 2)
        ]
        plans = {p.component_kind: p for p in ServicePlan.objects.filter(
            unit_class_id=unit.unit_class_id)}  # fmt: skip
        entries: list[dict[str, Any]] = []
        for comp in Component.objects.filter(
            unit=unit, kind__in=[ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER]
        ).order_by("kind"):
            plan = plans[comp.kind]
            limit = plan.dp_limit_bar or 1.0
            run, lives = 0.0, truth.setdefault((unit.pk, comp.kind), [])
            changes = [(0.0, None)]
            while True:
                life = rng.weibullvariate(life_scale_hours, life_shape)
                used_up = life < float(plan.interval_hours or 0)
                run += life if used_up else float(plan.interval_hours or 0)
                if run > last:
                    break
                lives.append((run - changes[-1][0], used_up))
                changes.append((run, round(limit * (1.1 if used_up else 0.6), 3)))
            for hours, dp in changes:
                at = start + timedelta(days=hours / rate)
                entries.append({
                    "kind": ServiceEvent.Kind.FILTER_CHANGED, "performed_at": at,
                    "recorded_at": at, "recorded_by": recorded_by, "hour_meter": 1000 + hours,
                    "component": comp, "component_kind": comp.kind, "dp_before_bar": dp,
                })  # fmt: skip
        entries.sort(key=lambda e: e["performed_at"])
        service_events_append(unit=unit, entries=entries)
    MeterReading.objects.bulk_create(readings, batch_size=5000)
    return truth
