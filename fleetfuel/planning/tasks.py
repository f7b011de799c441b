"""Celery tasks of the planning engine. Thin: ids in, one action, retry on transient errors."""

from __future__ import annotations

from datetime import date

from celery import shared_task
from django.conf import settings
from django.db import OperationalError
from django.db.models import F
from django.utils import timezone

from .actions import due_items_recompute, stale_units_recompute
from .models import WorkListDispatch
from .runs import batch_recompute, run_start, runs_stalled
from .worklists import dispatch_claim, dispatch_send, dispatches_stuck, worklists_due_now

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
def recompute_all() -> dict[str, int]:
    """The nightly full recompute: its units split into batches of PLANNING_BATCH_SIZE, each
    queued as its own task (``recompute_batch``), which any number of workers take at once.
    Idempotent: a batch done is never done or counted again (runs.py)."""
    batch_ids = run_start(now=timezone.now(), trigger="nightly", size=settings.PLANNING_BATCH_SIZE)
    for batch_id in batch_ids:
        recompute_batch.delay(batch_id)
    return {"batches": len(batch_ids)}


@shared_task(
    name="fleetfuel.planning.tasks.recompute_batch", time_limit=300, soft_time_limit=240, **RETRY
)
def recompute_batch(batch_id: int) -> dict[str, int]:
    """One batch of a full run; a redelivered batch rewrites nothing and counts nothing."""
    result = batch_recompute(batch_id=batch_id, now=timezone.now())
    if result is None:
        return {"units": 0, "items": 0}
    return {"units": result.units, "items": result.items}


@shared_task(name="fleetfuel.planning.tasks.stale_sweep", time_limit=300, soft_time_limit=240)
def stale_sweep() -> dict[str, int]:
    """Every few minutes (beat): recompute units marked stale, and queue again the batches
    of a stalled full run (a worker killed with them).

    Idempotent: a recompute rewrites the same rows, and a batch is marked done only once.
    """
    now = timezone.now()
    result = stale_units_recompute(now=now, limit=settings.PLANNING_BATCH_SIZE)
    batch_ids = runs_stalled(now=now)
    for batch_id in batch_ids:
        recompute_batch.delay(batch_id)
    return {"units": result.units, "items": result.items, "batches_requeued": len(batch_ids)}


@shared_task(name="fleetfuel.planning.tasks.worklists_tick", time_limit=120, soft_time_limit=100)
def worklists_tick() -> int:
    """Hourly (beat): queue the work lists whose local hour has come, and again the ones that
    were never picked up (a "send now" while the broker was down). Rerunning is harmless:
    each send claims its dispatch first."""
    now = timezone.now()
    due = worklists_due_now(now=now)
    for user_id, site_id, local_date in due:
        worklist_send.delay(user_id, site_id, local_date.isoformat())
    for user_id, site_id, local_date, manual, resend in dispatches_stuck(now=now):
        worklist_send.delay(user_id, site_id, local_date.isoformat(), manual, resend)
    return len(due)


@shared_task(
    bind=True,
    name="fleetfuel.planning.tasks.worklist_send",
    time_limit=120,
    soft_time_limit=100,
    max_retries=3,
)
def worklist_send(  # type: ignore[no-untyped-def]
    self, user_id: int, site_id: int, local_date: str, manual: bool = False, resend: int = 0
) -> str:
    """Claim, then send one work list (``resend``: a confirmed resend of the day's by-hand
    list); SMTP failures retry with backoff (30 s, 2, 8 min).

    After the last retry the dispatch stays FAILED with the error, shown on the manager's page.
    """
    if self.request.retries:
        dispatch = (
            WorkListDispatch.objects.filter(
                user_id=user_id,
                site_id=site_id,
                local_date=local_date,
                manual=manual,
                resend=resend,
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
            resend=resend,
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
