"""Measure fleetfuel on a synthetic fleet in the configured database (README, "Scale").

    python manage.py benchmark [--units 10000] [--runs 7] [--json FILE] [--markdown]
    python manage.py benchmark --from-json FILE [--markdown]     print a saved run's table

Builds the synthetic fleet (synth_fleet) unless one of that size is there, projects it, then
times each measurement beside its floor. The fleet stays for the load run (``make load``);
``synth_fleet --drop`` removes it.
"""

from __future__ import annotations

import json
import logging
import os
import platform
from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError
from django.db import connection
from django.test import override_settings
from django.utils import timezone

from fleetfuel.demo.bench import export_all, projection_measure
from fleetfuel.demo.bench_pages import close_measure, pages_measure
from fleetfuel.demo.bench_report import table
from fleetfuel.demo.synth import synthetic_drop, synthetic_fleet_build, synthetic_sites
from fleetfuel.fleet.models import Unit
from fleetfuel.ledger.models import ServiceEvent


def machine() -> str:
    memory = os.sysconf("SC_PAGE_SIZE") * os.sysconf("SC_PHYS_PAGES") / 2**30
    return f"{os.cpu_count()} cores, {memory:.0f} GiB, {platform.machine()}"


class Command(BaseCommand):
    help = "Benchmark the projection, the pages, a close and the export against their floors."

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--units", type=int, default=10_000)
        parser.add_argument("--runs", type=int, default=7, help="Timed runs (5 or more).")
        parser.add_argument("--seed", type=int, default=1)
        parser.add_argument("--json", metavar="FILE", help="Also write the results here.")
        parser.add_argument("--markdown", action="store_true", help="Print a Markdown table.")
        parser.add_argument("--from-json", metavar="FILE", help="Only print a saved run.")
        parser.add_argument(
            "--projection-runs",
            type=int,
            default=0,
            help="Timed runs of the projection, if fewer than --runs (it is the long one).",
        )
        parser.add_argument(
            "--projection-units",
            type=int,
            default=0,
            help="Project (and time) the first N units only (0: every unit); the pages then "
            "show their due items alone.",
        )

    def handle(self, *args: Any, **opts: Any) -> None:
        if opts["from_json"]:
            result = json.loads(Path(opts["from_json"]).read_text())
            self.stdout.write(table(result, markdown=opts["markdown"]))
            return
        if opts["runs"] < 1 or opts["units"] < 1:
            raise CommandError("--units and --runs must be at least 1.")
        logging.getLogger("axes").setLevel(logging.WARNING)  # one sign-in per client, not news
        now = timezone.now()
        sites = self.fleet(units=opts["units"], seed=opts["seed"], now=now)
        ids = list(Unit.objects.filter(site__in=sites).order_by("pk").values_list("pk", flat=True))
        site_ids = [s.pk for s in sites]
        runs = opts["runs"]
        # Only the projected units have due items: with --projection-units the pages show
        # theirs alone (a shortcut while a full projection of the fleet takes too long).
        timed = ids[: opts["projection_units"]] if opts["projection_units"] else ids
        result: dict[str, Any] = {
            "meta": {
                "date": now.date().isoformat(),
                "machine": machine(),
                "database": f"{connection.vendor} {connection.Database.__name__}",
                "units": len(ids),
                "service_events": ServiceEvent.objects.filter(unit__site__in=sites).count(),
                "runs": runs,
                "projected_units": len(timed),
            },
            "projection": projection_measure(timed, now=now, runs=opts["projection_runs"] or runs),
        }
        if connection.vendor == "postgresql":
            result["meta"]["database"] = f"PostgreSQL {connection.pg_version // 10000}"
            with connection.cursor() as cursor:
                # The tables as autovacuum leaves them in service (fresh statistics, the
                # visibility map set), not as a bulk load just left them: pages are timed on
                # the database a shop would run, after the projection wrote 30,000 items.
                # (Not possible inside a transaction: the smoke test's run skips it.)
                if not connection.in_atomic_block:
                    cursor.execute("VACUUM ANALYZE")
                cursor.execute("SELECT pg_database_size(current_database())")
                result["meta"]["database_bytes"] = cursor.fetchone()[0]
        with override_settings(
            ALLOWED_HOSTS=["*"], SECURE_SSL_REDIRECT=False, DEBUG=False,
            ROOT_URLCONF="fleetfuel.demo.floor",
        ):  # fmt: skip
            result["pages"] = pages_measure(site_ids, runs=runs)
            result["close"] = close_measure(site_ids, runs=runs)
        self.save(result, opts["json"])  # what is measured so far, should the export fail
        result["export"] = export_all(site_ids)
        self.save(result, opts["json"])
        self.stdout.write(table(result, markdown=opts["markdown"]))

    def save(self, result: dict[str, Any], path: str | None) -> None:
        if path:
            Path(path).write_text(json.dumps(result, indent=2, default=str) + "\n")

    def fleet(self, *, units: int, seed: int, now: Any) -> list[Any]:
        sites = synthetic_sites()
        if Unit.objects.filter(site__in=sites).count() != units:
            synthetic_drop()
            self.stdout.write(f"Building a synthetic fleet of {units:,} units...")
            synthetic_fleet_build(units=units, seed=seed, now=now)
            sites = synthetic_sites()
        return sites
