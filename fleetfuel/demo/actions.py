"""An invented demo fleet: Harrow Vale Aggregates, a quarrying and haulage company.

Everything here is made up for the demo. The scenario is deterministic for a given anchor
date (a seeded random generator; dates are laid back from the anchor so the demo always has
something due), and it includes:
- four depots, one of them showing US customary units;
- 48 units in five classes, 15 months of hour-meter readings and fuelings;
- a water-contaminated delivery into the Mill Lane bulk tank, and a dirty (particulate)
  delivery into the Kestrel bulk tank, both recent;
- repeated rail relief-valve openings on one hauler, water-in-fuel alarms on units fed from
  the wet tank, a pumping-imbalance event on a generator set;
- a service history (filter changes, separator drains, an injector replacement with its
  connector) and a few open work orders; one demo user per role.
"""

from __future__ import annotations

from datetime import UTC, date, datetime, time

from django.db import transaction

from fleetfuel.fleet.models import Site
from fleetfuel.ledger.checkpoints import chain_checkpoints_record
from fleetfuel.planning.actions import due_items_recompute

from .happenings import DemoBuilder


def demo_seed(*, anchor: date) -> bool:
    """Build the demo fleet unless it is already there. Returns True when it built it."""
    if Site.objects.filter(code="kestrel").exists():
        return False
    with transaction.atomic():
        builder = DemoBuilder(anchor=anchor)
        builder.build()
        # Project now, in the same transaction, so the demo opens with its due list.
        due_items_recompute(
            unit_ids=[u.pk for u in builder.units.values()],
            now=datetime.combine(anchor, time(6, 0), tzinfo=UTC),
        )
        # The beat would checkpoint every chain head within 15 minutes; the demo starts with
        # them, so verify_ledger has signed heads to compare against from the first run.
        chain_checkpoints_record(now=datetime.combine(anchor, time(6, 0), tzinfo=UTC))
    return True
