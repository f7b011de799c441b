"""Recompute the service history's hash chains and compare them with the signed checkpoints."""

from __future__ import annotations

from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from django.utils import timezone

from fleetfuel.fleet.models import Unit
from fleetfuel.ledger.verification import ledger_verify, verification_mark_record


class Command(BaseCommand):
    help = (
        "Recompute every unit's hash chain from the database (or one unit's), report the first "
        "broken link of each broken chain, each unit whose checkpoints were removed, and any "
        "table emptier than the last clean verification saw, and exit non-zero; otherwise print "
        "one OK line and (for a full run) sign a note of what was seen for the next run."
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
            if unit_ids is None:
                verification_mark_record(now=timezone.now())
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
            if p.unit_id is None:
                self.stderr.write(f"BROKEN ledger: {p.problem}")
                continue
            unit = names.get(p.unit_id, p.unit_id)
            self.stderr.write(f"BROKEN unit {unit}: {where}: {p.problem}")
        units = {p.unit_id for p in report.problems if p.unit_id is not None}
        whole = len(report.problems) - sum(1 for p in report.problems if p.unit_id is not None)
        raise CommandError(
            f"{len(units)} of {report.units} unit chain(s) failed verification"
            + (f"; {whole} problem(s) of the whole ledger." if whole else ".")
        )
