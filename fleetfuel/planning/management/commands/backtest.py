from __future__ import annotations

import json
from typing import Any

from django.core.management.base import BaseCommand, CommandError

from fleetfuel.fleet.models import Site, Unit
from fleetfuel.planning.backtest import backtest_run


class Command(BaseCommand):
    help = (
        "Replay the recorded filter changes: what the engine projected at each change's "
        "previous change against what was achieved, beside the fixed plan's interval."
    )

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument(
            "--site", metavar="CODE", help="Only units at this site (code or name)."
        )
        parser.add_argument("--json", action="store_true", help="Print one JSON object.")

    def handle(self, *args: Any, **options: Any) -> None:
        units = Unit.objects.all()
        if options["site"]:
            site = (
                Site.objects.filter(code=options["site"]).first()
                or Site.objects.filter(name=options["site"]).first()
            )
            if site is None:
                raise CommandError(f"No site with code {options['site']!r}.")
            units = units.filter(site=site)
        summary = backtest_run(unit_ids=list(units.order_by("pk").values_list("pk", flat=True)))
        if options["json"]:
            self.stdout.write(json.dumps(summary.as_json(), sort_keys=True))
            return
        for r in summary.rows:
            projected = (
                f"{r.projected_hours:7.0f} h" if r.projected_hours is not None else "      -  "
            )
            plan = f"{r.plan_hours:5.0f} h" if r.plan_hours is not None else "    - "
            dp = f"dP {r.dp_at_change_bar:.2f} bar" if r.dp_at_change_bar is not None else ""
            self.stdout.write(
                f"{r.unit:8} {r.task:14} {r.previous_at:%Y-%m-%d} -> {r.changed_at:%Y-%m-%d}  "
                f"achieved {r.achieved_hours:6.0f} h  engine {projected} ({r.basis or '-'})  "
                f"plan {plan}  {dp}".rstrip()
            )
        for line in summary.left_out:
            self.stdout.write(f"left out: {line}")
        self.stdout.write(f"Changes scored: {summary.changes}")
        self.stdout.write(
            "Median absolute error, engine projection: " + _hours(summary.engine_median_error)
        )
        self.stdout.write(
            "Median absolute error, fixed plan interval: " + _hours(summary.plan_median_error)
        )
        self.stdout.write(
            f"Changed before the projected point: engine {summary.engine_late}, "
            f"plan {summary.plan_late} (of {summary.changes})"
        )


def _hours(value: float | None) -> str:
    return "- (no change to score)" if value is None else f"{value:,.1f} h"
