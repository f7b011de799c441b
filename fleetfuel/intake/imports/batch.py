"""What the rows of one chunk write, written together (a layout with ``bulk``).

A bulk layout's store function checks its row and hands its write here instead of making it:
at the end of the chunk (apply.py) the changed rows are saved one by one, the new rows of
each model go in one bulk insert, and service events are appended per unit through the
ledger (service_events_append: one lock, one read of the chain head, one insert, and the
hashes service_event_append would give the entries one by one in file order).

A bulk insert sends no ``post_save``, so the recompute planning queues on a saved reading,
fueling or service event is queued here, once per chunk, for the units written. Whatever the
database refuses at the flush (a constraint, a relation) makes apply.py roll the chunk back and
run it again a row at a time (``bulk`` False: each write made at once, with every check), so
the refusal lands on its row as before.
"""

from __future__ import annotations

from typing import Any

from django.db import models

from fleetfuel.fleet.models import Unit
from fleetfuel.ledger.actions import (
    service_event_append,
    service_event_check,
    service_events_append,
)
from fleetfuel.planning.signals import UNIT_INPUTS, unit_recompute_enqueue


class Writes:
    """One file's pending writes (``bulk``), or each write made at once (not ``bulk``)."""

    def __init__(self, *, bulk: bool) -> None:
        self.bulk = bulk
        self._creates: dict[type[models.Model], list[models.Model]] = {}
        self._updates: dict[int, models.Model] = {}
        self._events: dict[int, tuple[Unit, list[dict[str, Any]]]] = {}

    def create(self, obj: models.Model) -> None:
        if not self.bulk:
            obj.save()
            return
        self._creates.setdefault(type(obj), []).append(obj)

    def update(self, obj: models.Model) -> None:
        if not self.bulk:
            obj.save()
        elif not obj._state.adding:  # a row still to be inserted goes in with its new values
            self._updates[id(obj)] = obj

    def event_append(self, *, unit: Unit, entry: dict[str, Any]) -> None:
        """Append a service event (service_event_append's keyword arguments) to the unit's
        chain; in bulk, checked now (ValidationError) and appended at the flush."""
        if not self.bulk:
            service_event_append(unit=unit, **entry)
            return
        service_event_check(unit=unit, **entry)
        self._events.setdefault(unit.pk, (unit, []))[1].append(entry)

    def flush(self) -> None:
        """Write what is pending; the database's refusal (IntegrityError) is the caller's."""
        recompute: set[int] = set()
        for obj in self._updates.values():
            obj.save()  # sends post_save, which queues its own recompute
        for model, objs in self._creates.items():
            model._default_manager.bulk_create(objs)
            if model in UNIT_INPUTS:
                recompute.update(obj.unit_id for obj in objs)  # type: ignore[attr-defined]
        for unit, entries in self._events.values():
            service_events_append(unit=unit, entries=entries)
            recompute.add(unit.pk)
        self._creates, self._updates, self._events = {}, {}, {}
        unit_recompute_enqueue(sorted(recompute))
