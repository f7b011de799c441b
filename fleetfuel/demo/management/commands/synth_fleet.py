"""A synthetic fleet in the configured database, for scale runs (invented data).

    python manage.py synth_fleet --units 10000 [--seed N] [--now ISO]   build (replacing one)
    python manage.py synth_fleet --drop                                  remove it

Its depots are 'Synthetic depot NN' (code synth-NN), its people synth-manager and
synth-mechanic (no password: the benchmark signs them in itself).
"""

from __future__ import annotations

import time
from datetime import datetime
from typing import Any

from django.core.management.base import BaseCommand, CommandError
from django.utils import timezone

from fleetfuel.demo.synth import synthetic_drop, synthetic_fleet_build


class Command(BaseCommand):
    help = "Build (or --drop) a synthetic fleet with 18 months of inputs and service history."

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--units", type=int, default=10_000)
        parser.add_argument("--seed", type=int, default=1)
        parser.add_argument("--now", help="Lay the records back from this instant (ISO 8601).")
        parser.add_argument("--drop", action="store_true", help="Remove the synthetic fleet.")

    def handle(self, *args: Any, **opts: Any) -> None:
        started = time.perf_counter()
        dropped = synthetic_drop()
        if opts["drop"]:
            self.stdout.write(f"Removed {dropped} synthetic depots.")
            return
        if opts["units"] < 1:
            raise CommandError("--units must be at least 1.")
        now = timezone.now()
        if opts["now"]:
            try:
                now = datetime.fromisoformat(opts["now"])
            except ValueError:
                raise CommandError(f"--now {opts['now']!r} is not an ISO 8601 instant.") from None
            if now.tzinfo is None:
                raise CommandError("--now needs its time zone (e.g. 2026-12-02T06:00:00Z).")
        made = synthetic_fleet_build(units=opts["units"], seed=opts["seed"], now=now)
        seconds = time.perf_counter() - started
        for label, count in sorted(made.counts.items()):
            self.stdout.write(f"{label:28} {count:>12,}")
        self.stdout.write(
            f"Built {opts['units']:,} units in {len(made.site_ids)} depots in {seconds:.1f} s."
        )
