"""Celery tasks of the ledger. Thin: one action, retry on transient errors."""

from __future__ import annotations

from celery import shared_task
from django.db import OperationalError
from django.utils import timezone

from .checkpoints import chain_checkpoints_record


@shared_task(
    name="fleetfuel.ledger.tasks.checkpoint_heads",
    time_limit=300,
    soft_time_limit=240,
    autoretry_for=(OperationalError,),
    retry_backoff=5,
    retry_backoff_max=300,
    retry_jitter=True,
    max_retries=5,
)
def checkpoint_heads() -> dict[str, int]:
    """Sign each unit's current chain head; idempotent (one checkpoint per unit per head)."""
    return {"checkpoints": chain_checkpoints_record(now=timezone.now())}
