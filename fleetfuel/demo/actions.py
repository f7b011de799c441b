"""The demo's one write: build the invented fleet for an instant (see the package docstring)."""

from __future__ import annotations

from datetime import UTC, datetime

from django.db import transaction

from fleetfuel.fleet.models import Site
from fleetfuel.ledger.checkpoints import chain_checkpoints_record
from fleetfuel.planning.actions import due_items_recompute

from .happenings import DemoBuilder


def demo_seed(*, now: datetime) -> bool:
    """Build the demo fleet as it stands at ``now`` (an aware instant), unless it is already
    there. Returns True when it built it."""
    if now.tzinfo is None or now.utcoffset() is None:
        raise ValueError(f"demo_seed needs an instant with a time zone, not {now.isoformat()}")
    # In UTC, as the clock gives it: dates are taken of it, and checkpoints are signed with it.
    now = now.astimezone(UTC)
    if Site.objects.filter(code="kestrel").exists():
        return False
    with transaction.atomic():
        builder = DemoBuilder(now=now)
        builder.build()
        # Project at the same instant, in the same transaction, so the demo opens with its
        # due list.
        due_items_recompute(unit_ids=[u.pk for u in builder.units.values()], now=now)
        # The beat would checkpoint every chain head within 15 minutes; the demo starts with
        # them, so verify_ledger has signed heads to compare against from the first run.
        chain_checkpoints_record(now=now)
    return True
