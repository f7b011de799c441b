from __future__ import annotations

import json
from typing import Any

from django.conf import settings
from django.core.management.base import BaseCommand, CommandError
from django.utils import timezone

from fleetfuel.fleet.models import Site, Unit
from fleetfuel.planning.models import DueItem
from fleetfuel.planning.runs import batch_recompute, run_start


class Command(BaseCommand):
    help = "Project every filter change and separator drain now, store them and print them."

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--unit", metavar="FLEET_NUMBER", help="Only this unit.")
        parser.add_argument(
            "--site", metavar="NAME", help="Only units at this site (name or code)."
        )
        parser.add_argument("--json", action="store_true", help="Print one JSON object per item.")
        parser.add_argument("--quiet", action="store_true", help="Store only; print a summary.")

    def handle(self, *args: Any, **options: Any) -> None:
        units = Unit.objects.filter(disposed_on__isnull=True)
        if options["site"]:
            site = (
                Site.objects.filter(name=options["site"]).first()
                or Site.objects.filter(code=options["site"]).first()
            )
            if site is None:
                raise CommandError(f"No site named {options['site']!r}.")
            units = units.filter(site=site)
        if options["unit"]:
            units = units.filter(fleet_number=options["unit"])
            if not units.exists():
                raise CommandError(f"No unit with fleet number {options['unit']!r}.")
        ids = list(units.order_by("pk").values_list("pk", flat=True))
        now = timezone.now()
        total_items = 0
        size = settings.PLANNING_BATCH_SIZE
        for batch_id in run_start(now=now, trigger="command", size=size, unit_ids=ids):
            done = batch_recompute(batch_id=batch_id, now=now)
            total_items += done.items if done else 0
        if options["quiet"]:
            self.stdout.write(f"Projected {total_items} items for {len(ids)} units.")
            return
        items = (
            DueItem.objects.filter(unit_id__in=ids)
            .select_related("unit", "unit__site", "component")
            .order_by("due_on", "unit__fleet_number", "task")
        )
        if options["json"]:
            for item in items:
                self.stdout.write(json.dumps(item_json(item), sort_keys=True))
            return
        for item in items:
            self.stdout.write(
                f"{item.unit.fleet_number:8} {item.get_task_display():45} {item.status:8} "
                f"{item.due_on} ({item.earliest_on}..{item.latest_on})  {item.basis}"
            )


def item_json(item: DueItem) -> dict[str, Any]:
    return {
        "unit": item.unit.fleet_number,
        "site": item.unit.site.name,
        "component_id": item.component_id,
        "task": item.task,
        "task_label": item.get_task_display(),
        "due_hours": item.due_hours,
        "due_on": item.due_on.isoformat(),
        "band": [item.earliest_on.isoformat(), item.latest_on.isoformat()],
        "status": item.status,
        "basis": item.basis,
        "explanation": item.explanation,
        "inputs": item.inputs,
    }
