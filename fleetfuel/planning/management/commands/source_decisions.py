from __future__ import annotations

import json
from typing import Any

from django.core.management.base import BaseCommand, CommandError
from django.utils import timezone

from fleetfuel.fleet.models import Site
from fleetfuel.planning.source_decisions import source_decisions_recompute
from fleetfuel.planning.source_models import SourceDecision
from fleetfuel.planning.source_selectors import source_decisions_open


class Command(BaseCommand):
    help = (
        "Bring the decisions at fuel sources up to date now and print the open ones, each with "
        "the units its sample's fuel reached and the litres each took."
    )

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--site", metavar="CODE", help="Only this site (code or name).")
        parser.add_argument("--json", action="store_true", help="One JSON object per decision.")

    def handle(self, *args: Any, **options: Any) -> None:
        sites = Site.objects.all()
        if options["site"]:
            sites = sites.filter(code=options["site"]) or sites.filter(name=options["site"])
            if not sites:
                raise CommandError(f"No site with code or name {options['site']!r}.")
        source_decisions_recompute(now=timezone.now())
        for decision in source_decisions_open(site_ids=[s.pk for s in sites]):
            if options["json"]:
                self.stdout.write(json.dumps(decision_json(decision), sort_keys=True))
                continue
            self.stdout.write(f"{decision.source.name}: sample {decision.sample.reference}")
            for line in decision.explanation:
                self.stdout.write(f"  {line}")
            for r in decision.reached.all():
                burned = f"{r.litres_burned:10,.1f} L burned" if r.litres_burned is not None else ""
                self.stdout.write(f"  {r.unit.fleet_number:8} {r.litres:10,.1f} L fuelled {burned}")


def decision_json(decision: SourceDecision) -> dict[str, Any]:
    return {
        "id": decision.pk,
        "source": decision.source.name,
        "sample": decision.sample.reference,
        "opened_at": decision.opened_at.isoformat(),
        "reach_from": decision.reach_from.isoformat(),
        "sample_stands": decision.stands,
        "litres_fuelled": decision.litres,
        "explanation": decision.explanation,
        "units": [
            {
                "unit": r.unit.fleet_number,
                "litres_fuelled": r.litres,
                "litres_burned": r.litres_burned,
                "fuelings": r.fuelings,
            }
            for r in decision.reached.all()
        ],
    }
