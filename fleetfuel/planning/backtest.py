"""Backtest: replay the recorded history and score the engine against the fixed plan.

For every recorded filter change that has a change before it on the same unit and filter
kind, the engine is run as it would have run at the instant of that earlier change (with only
what was on record then: `batch_inputs_load(now=...)` reads nothing later), and its projected
life (the due point's engine hours less the hours at the earlier change) is set against the
life achieved (the hours between the two changes). The fixed plan's interval is scored the
same way. The errors are absolute, in engine hours; their medians are the summary.
"""

from __future__ import annotations

import statistics
from dataclasses import asdict, dataclass
from datetime import datetime

from fleetfuel.fleet.models import ComponentKind, Unit
from fleetfuel.ledger.models import ServiceEvent

from .engine import FILTER_TASKS, engine_hours_at, unit_compute
from .selectors import batch_inputs_load, ledger_events


@dataclass(frozen=True)
class BacktestRow:
    unit: str
    task: str
    previous_at: datetime
    changed_at: datetime
    achieved_hours: float  # engine hours between the two changes
    dp_at_change_bar: float | None  # the dP recorded before the change, where recorded
    plan_hours: float | None  # the fixed plan's interval
    projected_hours: float | None  # what the engine projected at the earlier change
    basis: str | None  # what governed the engine's projection
    engine_error: float | None  # |projected - achieved|
    plan_error: float | None  # |plan - achieved|


@dataclass(frozen=True)
class BacktestSummary:
    rows: list[BacktestRow]
    changes: int  # changes scored by both the engine and the plan
    engine_median_error: float | None
    plan_median_error: float | None
    engine_late: int  # scored changes made before the engine's projected point
    plan_late: int  # scored changes made before the plan's interval ran out
    left_out: list[str]  # changes that could not be scored, each with its reason

    def as_json(self) -> dict[str, object]:
        return {
            "changes": self.changes,
            "engine_median_abs_error_hours": self.engine_median_error,
            "plan_median_abs_error_hours": self.plan_median_error,
            "engine_late": self.engine_late,
            "plan_late": self.plan_late,
            "left_out": self.left_out,
            "rows": [
                {
                    **asdict(r),
                    "previous_at": r.previous_at.isoformat(),
                    "changed_at": r.changed_at.isoformat(),
                }
                for r in self.rows
            ],  # fmt: skip
        }


def backtest_run(*, unit_ids: list[int]) -> BacktestSummary:
    """Score every recorded filter change of these units (one engine replay per change)."""
    units = {u.pk: u for u in Unit.objects.filter(pk__in=unit_ids)}
    history: dict[tuple[int, str], list[tuple[datetime, float | None, float | None]]] = {}
    for unit_id, kind, at, meter, dp in (
        ledger_events(ServiceEvent.Kind.FILTER_CHANGED)
        .filter(  # corrections applied
            unit_id__in=list(units), component_kind__in=list(FILTER_TASKS)
        )
        .order_by("unit_id", "performed_at", "id")
        .values_list("unit_id", "component_kind", "performed_at", "hour_meter", "dp_before_bar")
    ):
        history.setdefault((unit_id, kind), []).append((at, meter, dp))
    rows: list[BacktestRow] = []
    left_out: list[str] = []
    for (unit_id, kind), changes in history.items():
        unit = units[unit_id]
        for before, change in zip(changes, changes[1:], strict=False):
            row, why = _row_replay(unit=unit, kind=kind, before=before, change=change)
            if row is not None:
                rows.append(row)
            if why:
                left_out.append(f"{unit.fleet_number} {kind} {change[0]:%Y-%m-%d}: {why}")
    scored = [r for r in rows if r.engine_error is not None and r.plan_error is not None]
    return BacktestSummary(
        rows=rows,
        changes=len(scored),
        engine_median_error=(
            statistics.median(r.engine_error for r in scored if r.engine_error is not None)
            if scored
            else None
        ),
        plan_median_error=(
            statistics.median(r.plan_error for r in scored if r.plan_error is not None)
            if scored
            else None
        ),
        engine_late=sum(1 for r in scored if (r.projected_hours or 0) > r.achieved_hours),
        plan_late=sum(1 for r in scored if (r.plan_hours or 0) > r.achieved_hours),
        left_out=left_out,
    )


def _row_replay(
    *,
    unit: Unit,
    kind: str,
    before: tuple[datetime, float | None, float | None],
    change: tuple[datetime, float | None, float | None],
) -> tuple[BacktestRow | None, str | None]:
    """The engine at the earlier change, against what the element achieved."""
    (before_at, before_meter, _), (at, meter, dp) = before, change
    if before_meter is None or meter is None:
        return None, "no hour-meter figure at one of the two changes"
    batch = batch_inputs_load(unit_ids=[unit.pk], now=before_at)
    b = batch.units[0]
    start = engine_hours_at(b, before_at, before_meter)
    achieved = engine_hours_at(b, at, meter) - start
    if achieved <= 0:
        return None, "the hours did not rise between the two changes"
    plan = b.plans.get(kind)
    plan_hours = float(plan.interval_hours) if plan and plan.interval_hours else None
    task = FILTER_TASKS[ComponentKind(kind)]
    result = unit_compute(b, batch, before_at)
    projection = next(
        (
            p.projection
            for p in result.projections
            if p.projection.task is task and p.projection.due.hours is not None
        ),
        None,
    )
    projected = projection.due.hours - start if projection and projection.due.hours else None
    row = BacktestRow(
        unit=unit.fleet_number,
        task=str(task),
        previous_at=before_at,
        changed_at=at,
        achieved_hours=achieved,
        dp_at_change_bar=dp,
        plan_hours=plan_hours,
        projected_hours=projected,
        basis=str(projection.basis) if projection else None,
        engine_error=abs(projected - achieved) if projected is not None else None,
        plan_error=abs(plan_hours - achieved) if plan_hours is not None else None,
    )
    why = None
    if projected is None:
        why = "the engine made no hour projection: " + ("; ".join(result.skipped) or "none")
    elif plan_hours is None:
        why = "the plan has no hour interval"
    return row, why
