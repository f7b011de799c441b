"""The Celery app: its settings come from Django's (CELERY_* names); its queues and its
schedule are here.

Queues (README, "Queues and workers"): each kind of work has its own, so a slow export or
import never holds up a recompute, and a recompute never holds up an email. Workers name the
queues they take (``celery -A fleetfuel worker -Q projection``); one worker may take them all
(``-Q projection,email,imports,exports,celery``).
"""

import os

from celery import Celery
from celery.schedules import crontab

os.environ.setdefault("DJANGO_SETTINGS_MODULE", "fleetfuel.settings")

app = Celery("fleetfuel")
app.config_from_object("django.conf:settings", namespace="CELERY")
app.autodiscover_tasks()

# Every queue a worker may be told to take; "celery" (Celery's default) holds the rest
# (the ledger's checkpoints).
QUEUES = ("projection", "email", "imports", "exports", "celery")
app.conf.task_routes = {
    "fleetfuel.planning.tasks.recompute_*": {"queue": "projection"},
    "fleetfuel.planning.tasks.stale_sweep": {"queue": "projection"},
    "fleetfuel.planning.tasks.worklist*": {"queue": "email"},
    "fleetfuel.intake.tasks.import_*": {"queue": "imports"},
    "fleetfuel.*.tasks.export_*": {"queue": "exports"},
}
# Keep beat single (one process): every scheduled job is idempotent anyway.
app.conf.beat_schedule = {
    "nightly-recompute": {
        # Splits the fleet into batches, each its own task any projection worker takes.
        "task": "fleetfuel.planning.tasks.recompute_all",
        "schedule": crontab(hour=2, minute=15),
        "options": {"expires": 6 * 3600},
    },
    "stale-sweep": {
        # Units whose recompute could not be queued, and a full run's lost batches.
        "task": "fleetfuel.planning.tasks.stale_sweep",
        "schedule": crontab(minute="*/5"),
        "options": {"expires": 4 * 60},
    },
    "ledger-checkpoints": {
        "task": "fleetfuel.ledger.tasks.checkpoint_heads",
        "schedule": crontab(minute="*/15"),
        "options": {"expires": 14 * 60},
    },
    "work-lists": {
        "task": "fleetfuel.planning.tasks.worklists_tick",
        "schedule": crontab(minute=0),
        "options": {"expires": 50 * 60},
    },
}
