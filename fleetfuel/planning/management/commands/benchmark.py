"""Measure what the issues set targets for, on the configured database.

    python manage.py benchmark [--units 10000 20000] [--runs 7] [--keep] [--export-rows N]

Builds a synthetic fleet (invented, in its own site), then reports medians of repeated runs.
Server time is measured in-process through Django's test client (request to response,
rendering included, no network).
"""

from __future__ import annotations

import json
from typing import Any

from django.contrib.auth.models import Group, User
from django.core.management.base import BaseCommand
from django.db import connection, transaction
from django.test import Client, override_settings
from django.urls import reverse

from fleetfuel.accounts.models import Profile, Role
from fleetfuel.fleet.models import Site, Unit, UnitClass
from fleetfuel.planning.actions import due_items_recompute
from fleetfuel.planning.benchmark import medians, synthetic_fleet_make

SITE = "Benchmark depot (synthetic)"


class Command(BaseCommand):
    help = "Benchmark the due list (and the recompute, and optionally the CSV export)."

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--units", type=int, nargs="+", default=[10_000, 20_000])
        parser.add_argument("--runs", type=int, default=7)
        parser.add_argument("--keep", action="store_true", help="Keep the synthetic fleet.")
        parser.add_argument("--export-rows", type=int, default=0, help="Also time a CSV export.")

    def handle(self, *args: Any, **opts: Any) -> None:
        results: dict[str, Any] = {"database": connection.vendor}
        with override_settings(ALLOWED_HOSTS=["*"], SECURE_SSL_REDIRECT=False, DEBUG=False):
            for n in opts["units"]:
                results[f"due_list_{n}_units"] = self.due_list(
                    n=n, runs=opts["runs"], keep=opts["keep"]
                )
        demo_ids = list(Unit.objects.exclude(site__name=SITE).values_list("pk", flat=True))
        if demo_ids:
            from django.utils import timezone

            now = timezone.now()
            results["recompute_existing_units"] = {
                "units": len(demo_ids),
                **medians(lambda: due_items_recompute(unit_ids=demo_ids, now=now), runs=3),
            }
        if opts["export_rows"]:
            from fleetfuel.ledger.benchmark import export_benchmark

            results["csv_export"] = export_benchmark(rows=opts["export_rows"])
        self.stdout.write(json.dumps(results, indent=2, default=str))

    def due_list(self, *, n: int, runs: int, keep: bool) -> dict[str, Any]:
        with transaction.atomic():
            Site.objects.filter(name=SITE).exists() and self.cleanup()
            site = Site.objects.create(name=SITE, code="benchmark-synthetic")
            uc, _ = UnitClass.objects.get_or_create(
                name="Benchmark class",
                defaults={"typical_hours_per_day": 8, "typical_burn_l_per_h": 20},
            )
            synthetic_fleet_make(site=site, unit_class=uc, n=n, prefix="BM")
            user, _ = User.objects.get_or_create(username="benchmark-manager")
            user.groups.add(Group.objects.get(name=Role.MANAGER))
            profile, _ = Profile.objects.get_or_create(user=user)
            profile.sites.set([site])
        if connection.vendor == "postgresql":
            with connection.cursor() as cursor:  # as autovacuum would, after a bulk load
                cursor.execute("ANALYZE")
        client = Client()
        client.force_login(user)
        url = reverse("pages:due_list")
        filtered = {"site": site.pk, "status": "overdue", "sort": "due"}

        def get(params: dict[str, Any]) -> None:
            response = client.get(url, params, secure=True)
            assert response.status_code == 200, response.status_code

        out = {
            "units": n,
            "due_items": n * 3,
            "filtered_page": medians(lambda: get(filtered), runs=runs),
            "filtered_page_htmx_fragment": medians(
                lambda: client.get(url, filtered, secure=True, headers={"HX-Request": "true"}),
                runs=runs,
            ),
            "unfiltered_page_5": medians(lambda: get({"page": 5}), runs=runs),
        }
        if not keep:
            self.cleanup()
        return out

    def cleanup(self) -> None:
        with transaction.atomic():
            Unit.objects.filter(site__name=SITE).delete()
            Site.objects.filter(name=SITE).delete()
