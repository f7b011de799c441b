"""Celery tasks of the planning engine. Thin: ids in, one action, retry on transient errors."""

from __future__ import annotations

from datetime import date, timedelta

from celery import shared_task
from django.conf import settings
from django.db import OperationalError
from django.db.models import F
from django.utils import timezone

from fleetfuel.fleet.models import Unit

from .actions import due_items_recompute, stale_units_recompute
from .models import ProjectionRun, WorkListDispatch
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
def recompute_all(after_id: int = 0, run_id: int | None = None) -> dict[str, int]:
    """The nightly full recompute, in bounded batches that re-queue themselves.

    Each call handles at most PLANNING_BATCH_SIZE units with ids above ``after_id``; a rerun
    of any batch rewrites the same rows. The run's cursor moves only from ``after_id`` (a
    conditional update), so a redelivered batch (a worker killed before it acknowledged)
    neither counts its units twice nor queues a second chain; a chain that broke is resumed
    from the cursor by the stale sweep.
    """
    now = timezone.now()
    if run_id is None:
        run_id = ProjectionRun.objects.create(started_at=now, trigger="nightly", updated_at=now).pk
    ids = list(
        Unit.objects.filter(pk__gt=after_id)
        .order_by("pk")
        .values_list("pk", flat=True)[: settings.PLANNING_BATCH_SIZE]
    )
    if not ids:
        ProjectionRun.objects.filter(pk=run_id, finished_at__isnull=True).update(
            finished_at=timezone.now(), updated_at=timezone.now()
        )
        return {"units": 0, "items": 0, "run": run_id}
    result = due_items_recompute(unit_ids=ids, now=now)
    moved = ProjectionRun.objects.filter(
        pk=run_id, last_unit_id=after_id, finished_at__isnull=True
    ).update(
        units=F("units") + result.units,
        items=F("items") + result.items,
        last_unit_id=ids[-1],
        updated_at=timezone.now(),
    )
    if moved:
        recompute_all.delay(after_id=ids[-1], run_id=run_id)
    return {"units": result.units, "items": result.items, "run": run_id}


# A run whose cursor has not moved for this long lost its chain (a batch takes minutes at
# most: its time limit is 300 s).
RUN_STALLED_AFTER = timedelta(minutes=15)


@shared_task(name="fleetfuel.planning.tasks.stale_sweep", time_limit=300, soft_time_limit=240)
def stale_sweep() -> dict[str, int]:
    """Every few minutes (beat): recompute units marked stale, and resume a stalled nightly run.

    Idempotent: a recompute rewrites the same rows, and a run resumes from its cursor, which
    only the batch that started from it can move.
    """
    now = timezone.now()
    result = stale_units_recompute(now=now, limit=settings.PLANNING_BATCH_SIZE)
    stalled = ProjectionRun.objects.filter(
        finished_at__isnull=True, updated_at__lt=now - RUN_STALLED_AFTER
    ).order_by("started_at")
    resumed = 0
    for run in stalled:
        # Touch it first, so the next sweep leaves it alone while this resumption runs.
        if ProjectionRun.objects.filter(pk=run.pk, updated_at=run.updated_at).update(
            updated_at=now
        ):
            recompute_all.delay(after_id=run.last_unit_id, run_id=run.pk)
            resumed += 1
    return {"units": result.units, "items": result.items, "runs_resumed": resumed}


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
