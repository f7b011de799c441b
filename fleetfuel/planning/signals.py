"""Enqueue a unit's recompute, on commit, whenever one of its inputs is saved."""

from __future__ import annotations

import logging
import threading
from datetime import timedelta
from typing import Any

from django.conf import settings
from django.db import transaction
from django.db.models.signals import post_save
from django.dispatch import receiver
from django.utils import timezone

from fleetfuel.fleet.models import (
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    MeterReading,
    MeterReplacement,
    Unit,
)
from fleetfuel.ledger.models import ServiceEvent

from .actions import units_mark_stale
from .selectors import LOOKBACK_DAYS
from .tasks import recompute_units

log = logging.getLogger(__name__)
_pending = threading.local()


def unit_recompute_enqueue(unit_ids: list[int]) -> None:
    """Queue a recompute of these units once the current transaction commits.

    Many saves in one transaction (an import, the demo seed, a work-order close) give one
    recompute per unit, not one per save: ids gather here and the first commit callback
    sends them all in batches; the others find nothing left. Ids left by a rolled-back
    transaction go with the next commit, which is harmless (a recompute is idempotent).
    """
    if not unit_ids:
        return
    pending: set[int] = getattr(_pending, "ids", None) or set()
    pending.update(unit_ids)
    _pending.ids = pending
    transaction.on_commit(_flush)


def _flush() -> None:
    """Send the gathered ids. It runs after the commit, so it never raises: the write stands
    whatever happens here. A batch that cannot be queued (broker down, or an in-process
    recompute failing) is logged and its units marked stale for the sweep and the pages."""
    ids = sorted(getattr(_pending, "ids", None) or ())
    _pending.ids = set()
    size = settings.PLANNING_BATCH_SIZE
    for start in range(0, len(ids), size):
        batch = ids[start : start + size]
        try:
            recompute_units.delay(batch)
        except Exception as exc:
            log.exception("recompute of units %s not queued; marking them stale", batch)
            _batch_mark_stale(batch, f"{type(exc).__name__}: {exc}")


def _batch_mark_stale(unit_ids: list[int], reason: str) -> None:
    try:
        units_mark_stale(unit_ids=unit_ids, now=timezone.now(), reason=reason)
    except Exception:
        # The database as well: the nightly recompute is the last net.
        log.exception("units %s could not be marked stale either", unit_ids)


# The records of a unit whose save queues the unit's recompute (a bulk insert sends no
# post_save: whoever inserts these in bulk queues it, as intake/imports/batch.py does).
UNIT_INPUTS: tuple[type[Any], ...] = (
    MeterReading, MeterReplacement, Fueling, EngineEvent, ServiceEvent,
)  # fmt: skip


def _unit_input_saved(sender: Any, instance: Any, **kwargs: Any) -> None:
    unit_recompute_enqueue([instance.unit_id])


for _model in UNIT_INPUTS:
    post_save.connect(_unit_input_saved, sender=_model, dispatch_uid=f"recompute-{_model.__name__}")


@receiver(post_save, sender=Unit)
def _unit_saved(sender: Any, instance: Unit, **kwargs: Any) -> None:
    # Moved to another site, disposed of, or a new unit: its items follow.
    unit_recompute_enqueue([instance.pk])


@receiver(post_save, sender=FilterPressureReading)
def _dp_saved(sender: Any, instance: FilterPressureReading, **kwargs: Any) -> None:
    unit_recompute_enqueue([instance.component.unit_id])


@receiver(post_save, sender=FuelSample)
def _sample_saved(sender: Any, instance: FuelSample, **kwargs: Any) -> None:
    if instance.unit_id is not None:
        unit_recompute_enqueue([instance.unit_id])
        return
    # A source sample: every unit fuelled from that source since the sample's look-back.
    since = instance.sampled_at - timedelta(days=LOOKBACK_DAYS)
    unit_ids = list(
        Fueling.objects.filter(source_id=instance.source_id, fueled_at__gte=since)
        .values_list("unit_id", flat=True)
        .distinct()
    )
    unit_recompute_enqueue(unit_ids)
