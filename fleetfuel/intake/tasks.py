"""Celery tasks of the intake app. Thin: an id in, one action. Where there is no broker
(the demo, tests) Celery runs them in-process (CELERY_TASK_ALWAYS_EAGER)."""

from __future__ import annotations

from celery import shared_task
from django.utils import timezone

from .imports.runs import import_run_execute


@shared_task(name="fleetfuel.intake.tasks.import_run", time_limit=3600, soft_time_limit=3500)
def import_run(run_id: int) -> None:
    """Run one uploaded import file (a dry run or an apply)."""
    import_run_execute(run_id=run_id, now=timezone.now())


def import_run_enqueue(run_id: int) -> None:
    import_run.delay(run_id)
