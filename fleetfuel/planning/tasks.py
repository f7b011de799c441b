"""Celery tasks of the planning engine. Thin: ids in, one action, retry on transient errors."""

from __future__ import annotations

from celery import shared_task
from django.conf import settings
from django.db import OperationalError
from django.db.models import F
from django.utils import timezone

from .actions import due_items_recompute
from .models import ProjectionRun

RETRY = {
    "autoretry_for": (OperationalError,),
    "retry_backoff": 5,
    "retry_backoff_max": 300,  # well under the broker's visibility timeout (settings)
    "retry_jitter": True,
    "max_retries": 5,
}


@shared_task(
    name="fleetfuel.planning.tasks.recompute_units", time_limit=120, soft_time_limit=100, **RETRY
)
def recompute_units(unit_ids: list[int]) -> dict[str, int]:
    """Recompute some units now (enqueued on commit when their inputs change)."""
    result = due_items_recompute(unit_ids=sorted(set(unit_ids)), now=timezone.now())
    return {"units": result.units, "items": result.items, "flags": result.flags}


@shared_task(
    name="fleetfuel.planning.tasks.recompute_all", time_limit=300, soft_time_limit=240, **RETRY
)
def recompute_all(after_id: int = 0, run_id: int | None = None) -> dict[str, int]:
    """The nightly full recompute, in bounded batches that re-queue themselves.

    Each call handles at most PLANNING_BATCH_SIZE units with ids above ``after_id``; a rerun
    of any batch rewrites the same rows, so a duplicate delivery is harmless.
    """
    from fleetfuel.fleet.models import Unit

    now = timezone.now()
    if run_id is None:
        run_id = ProjectionRun.objects.create(started_at=now, trigger="nightly").pk
    ids = list(
        Unit.objects.filter(pk__gt=after_id, disposed_on__isnull=True)
        .order_by("pk")
        .values_list("pk", flat=True)[: settings.PLANNING_BATCH_SIZE]
    )
    if not ids:
        ProjectionRun.objects.filter(pk=run_id, finished_at__isnull=True).update(
            finished_at=timezone.now()
        )
        return {"units": 0, "items": 0, "run": run_id}
    result = due_items_recompute(unit_ids=ids, now=now)
    ProjectionRun.objects.filter(pk=run_id).update(
        units=F("units") + result.units, items=F("items") + result.items
    )
    recompute_all.delay(after_id=ids[-1], run_id=run_id)
    return {"units": result.units, "items": result.items, "run": run_id}
