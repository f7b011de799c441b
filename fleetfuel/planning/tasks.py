"""Celery tasks of the planning engine. Thin: ids in, one action, retry on transient errors."""

from __future__ import annotations

from datetime import date

from celery import shared_task
from django.conf import settings
from django.db import OperationalError
from django.db.models import F
from django.utils import timezone

from fleetfuel.fleet.models import Unit

from .actions import due_items_recompute
from .models import ProjectionRun, WorkListDispatch
from .worklists import dispatch_claim, dispatch_send, worklists_due_now

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
    now = timezone.now()
    if run_id is None:
        run_id = ProjectionRun.objects.create(started_at=now, trigger="nightly").pk
    ids = list(
        Unit.objects.filter(pk__gt=after_id)
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


@shared_task(name="fleetfuel.planning.tasks.worklists_tick", time_limit=120, soft_time_limit=100)
def worklists_tick() -> int:
    """Hourly (beat): queue the work lists whose local hour has come. Rerunning is harmless."""
    due = worklists_due_now(now=timezone.now())
    for user_id, site_id, local_date in due:
        worklist_send.delay(user_id, site_id, local_date.isoformat())
    return len(due)


@shared_task(
    bind=True,
    name="fleetfuel.planning.tasks.worklist_send",
    time_limit=120,
    soft_time_limit=100,
    max_retries=3,
)
def worklist_send(self, user_id: int, site_id: int, local_date: str, manual: bool = False) -> str:  # type: ignore[no-untyped-def]
    """Claim, then send one work list; SMTP failures retry with backoff (30 s, 2, 8 min).

    After the last retry the dispatch stays FAILED with the error, shown on the manager's page.
    """
    if self.request.retries:
        dispatch = (
            WorkListDispatch.objects.filter(
                user_id=user_id, site_id=site_id, local_date=local_date, manual=manual
            )
            .order_by("-created_at")
            .first()
        )
        claimed = dispatch is not None and WorkListDispatch.objects.filter(
            pk=dispatch.pk, status=WorkListDispatch.Status.RETRYING
        ).update(status=WorkListDispatch.Status.SENDING, attempts=F("attempts") + 1)
        if not claimed:
            return "not claimed"
        dispatch.refresh_from_db()
    else:
        dispatch = dispatch_claim(
            user_id=user_id,
            site_id=site_id,
            local_date=date.fromisoformat(local_date),
            manual=manual,
        )
        if dispatch is None:
            return "already sent or being sent"
    try:
        dispatch_send(dispatch=dispatch)
    except Exception as exc:
        if self.request.retries < self.max_retries:
            raise self.retry(exc=exc, countdown=30 * 4**self.request.retries) from exc
        raise
    return "sent"
