"""Full recomputes (the nightly run, ``project_due``) split into batches that any number of
workers take at once: a run's batches are rows (``ProjectionBatch``), each queued as its own
task; a batch is done once, and the last one done finishes the run and refreshes the fuel
sources' decisions (once a run, not once a batch)."""

from __future__ import annotations

from datetime import datetime, timedelta

from django.db import transaction
from django.db.models import F

from fleetfuel.fleet.models import ServicePlan, Unit
from services.filter_life import LifeBudget, budget_from_json, budget_to_json

from .actions import (
    RecomputeResult,
    collector_paused,
    due_items_recompute,
    source_decisions_refresh,
)
from .engine import FILTER_TASKS, filter_life_get
from .models import ProjectionBatch, ProjectionRun
from .selectors import BatchInputs, filter_changes_load

# A run none of whose batches has finished for this long lost some (a batch takes a minute
# at most: its time limit is 300 s); the stale sweep queues its undone batches again.
RUN_STALLED_AFTER = timedelta(minutes=15)


def run_start(
    *, now: datetime, trigger: str, size: int, unit_ids: list[int] | None = None
) -> list[int]:
    """Open a run over ``unit_ids`` (every unit by default) in batches of ``size`` units;
    the batches' ids, to queue. A run with no units is finished at once."""
    if unit_ids is None:
        unit_ids = list(Unit.objects.order_by("pk").values_list("pk", flat=True))
    with collector_paused():  # the whole classes' changes: many rows (actions.py)
        lives = run_lives(unit_ids=unit_ids, now=now)
    with transaction.atomic():
        run = ProjectionRun.objects.create(
            started_at=now,
            trigger=trigger,
            updated_at=now,
            finished_at=None if unit_ids else now,
            lives=lives,
        )
        batches = ProjectionBatch.objects.bulk_create(
            ProjectionBatch(run=run, number=n, unit_ids=unit_ids[start : start + size])
            for n, start in enumerate(range(0, len(unit_ids), size))
        )
    return [b.pk for b in batches]


def run_lives(*, unit_ids: list[int], now: datetime) -> dict[str, dict[str, object]]:
    """The filter life budget of each class and filter kind of these units, from every change
    on record of the class (three queries): once a run, so that no batch reads the whole
    classes' changes again. Keys "class id:filter kind" (JSON)."""
    class_ids = set(Unit.objects.filter(pk__in=unit_ids).values_list("unit_class_id", flat=True))
    plans = ServicePlan.objects.filter(
        unit_class_id__in=class_ids, component_kind__in=list(FILTER_TASKS), interval_hours__gt=0
    )
    evidence = BatchInputs(
        units=[], source_samples=[], sources={},
        filter_changes=filter_changes_load(class_ids=class_ids, now=now),
    )  # fmt: skip
    return {
        f"{plan.unit_class_id}:{plan.component_kind}": budget_to_json(
            filter_life_get(evidence, plan.unit_class_id, plan.component_kind, plan)
        )
        for plan in plans
    }


def lives_read(stored: dict[str, dict[str, object]]) -> dict[tuple[int, str], LifeBudget]:
    """A run's ``lives`` as the engine takes them."""
    out = {}
    for key, data in stored.items():
        class_id, kind = key.split(":", 1)
        out[(int(class_id), kind)] = budget_from_json(data)
    return out


def batch_recompute(*, batch_id: int, now: datetime) -> RecomputeResult | None:
    """Recompute one batch's units and mark it done; None when it was done already (a
    redelivery: its rows were written, and it counts nothing again)."""
    found = ProjectionBatch.objects.filter(pk=batch_id, done_at__isnull=True).values_list(
        "run_id", "unit_ids", "run__lives"
    )
    if not found:
        return None
    run_id, unit_ids, lives = found[0]
    result = due_items_recompute(
        unit_ids=unit_ids, now=now, sources=False, lives=lives_read(lives) if lives else None
    )
    with transaction.atomic():
        # The run's row lock orders the batches' ends: the last one sees every other done.
        ProjectionRun.objects.select_for_update().filter(pk=run_id).first()
        if not ProjectionBatch.objects.filter(pk=batch_id, done_at__isnull=True).update(
            done_at=now, units=result.units, items=result.items
        ):
            return None  # a twin of this batch finished first
        last = not ProjectionBatch.objects.filter(run_id=run_id, done_at__isnull=True).exists()
        ProjectionRun.objects.filter(pk=run_id).update(
            units=F("units") + result.units,
            items=F("items") + result.items,
            updated_at=now,
            finished_at=now if last else None,
        )
    if last:
        source_decisions_refresh(now=now)  # the sources' decisions, after all their units
    return result


def runs_stalled(*, now: datetime) -> list[int]:
    """The undone batches of runs stalled for RUN_STALLED_AFTER, to queue again. Each run is
    touched first, so the next sweep leaves it alone while these run."""
    batch_ids: list[int] = []
    stalled = ProjectionRun.objects.filter(
        finished_at__isnull=True, updated_at__lt=now - RUN_STALLED_AFTER
    ).order_by("started_at")
    for run in stalled:
        if ProjectionRun.objects.filter(pk=run.pk, updated_at=run.updated_at).update(
            updated_at=now
        ):
            batch_ids += ProjectionBatch.objects.filter(run=run, done_at__isnull=True).values_list(
                "pk", flat=True
            )
    return batch_ids
