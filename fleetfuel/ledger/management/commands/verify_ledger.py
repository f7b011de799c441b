"""Recompute the service history's hash chains and compare them with the signed checkpoints."""

from __future__ import annotations

from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser

from fleetfuel.fleet.models import Unit
from fleetfuel.ledger.verification import ledger_verify


class Command(BaseCommand):
    help = (
        "Recompute every unit's hash chain from the database (or one unit's), report the first "
        "broken link of each broken chain and exit non-zero; print one OK line otherwise."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--unit", metavar="FLEET_NUMBER", help="check this unit only")

    def handle(self, *args: Any, **options: Any) -> None:
        unit_ids = None
        if options["unit"]:
            unit_ids = list(
                Unit.objects.filter(fleet_number=options["unit"]).values_list("pk", flat=True)
            )
            if not unit_ids:
                raise CommandError(f"No unit has fleet number {options['unit']!r}.")
        report = ledger_verify(unit_ids=unit_ids)
        if report.ok:
            self.stdout.write(
                f"OK: {report.units} unit chain(s), {report.events} event(s) verified; "
                f"{report.checkpoints} agree with their signed checkpoint."
            )
            return
        names = {
            u.pk: f"{u.fleet_number} ({u.site.name})"
            for u in Unit.objects.select_related("site").filter(
                pk__in={p.unit_id for p in report.problems}
            )
        }
        for p in report.problems:
            where = f"event {p.event_id} seq {p.seq}" if p.event_id else f"seq {p.seq}"
            unit = names.get(p.unit_id, p.unit_id)
            self.stderr.write(f"BROKEN unit {unit}: {where}: {p.problem}")
        raise CommandError(
            f"{len(report.problems)} of {report.units} unit chain(s) failed verification."
        )
