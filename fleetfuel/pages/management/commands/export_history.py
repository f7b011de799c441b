"""Export the service history to a CSV or XLSX file, with its manifest beside it."""

from __future__ import annotations

from datetime import date
from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from django.db.models import Q

from fleetfuel.dbrouters import history_alias
from fleetfuel.fleet.models import Site
from fleetfuel.ledger.csv_copy import history_csv_stream
from fleetfuel.ledger.exports import export_rows, file_sha256
from fleetfuel.ledger.manifest import export_finish, manifest_bytes
from fleetfuel.ledger.models import ExportLog
from fleetfuel.ledger.selectors import HistoryScope
from fleetfuel.ledger.xlsx import xlsx_write
from fleetfuel.pages.manifest import history_export_start


def _date(text: str) -> date:
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise CommandError(f"{text!r} is not a date (use YYYY-MM-DD).") from None


class Command(BaseCommand):
    help = (
        "Write the service history (by site, unit(s) and date range) to --out, and the manifest "
        "(filters, row count, chain heads, scheduled tasks, SHA-256 of the file) to "
        "--out + '.manifest.json'. The export is logged."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument("--format", choices=["csv", "xlsx"], required=True)
        parser.add_argument("--site", metavar="NAME", help="site name or code")
        parser.add_argument(
            "--unit", metavar="FLEET_NUMBER", action="append", default=[], help="repeatable"
        )
        parser.add_argument("--from", dest="date_from", metavar="DATE", help="YYYY-MM-DD (UTC)")
        parser.add_argument("--to", dest="date_to", metavar="DATE", help="YYYY-MM-DD (UTC)")
        parser.add_argument("--out", metavar="PATH", required=True)

    def handle(self, *args: Any, **options: Any) -> None:
        site = None
        if options["site"]:
            site = Site.objects.filter(Q(name=options["site"]) | Q(code=options["site"])).first()
            if site is None:
                raise CommandError(f"No site is named {options['site']!r}.")
        date_from = _date(options["date_from"]) if options["date_from"] else None
        date_to = _date(options["date_to"]) if options["date_to"] else None
        if date_from and date_to and date_from > date_to:
            raise CommandError("--from is after --to.")
        scope = HistoryScope(
            allowed_site_ids=None,
            site=site,
            fleet_numbers=tuple(options["unit"]),
            date_from=date_from,
            date_to=date_to,
        )
        known = set(scope.units().values_list("fleet_number", flat=True))
        missing = [n for n in options["unit"] if n not in known]
        if missing:
            raise CommandError(f"No unit with fleet number {', '.join(missing)} (in that site).")
        out = Path(options["out"])
        if not out.parent.is_dir():
            raise CommandError(f"The folder {out.parent} does not exist.")
        log, heads = history_export_start(
            scope=scope,
            fmt=options["format"],
            via=ExportLog.Via.COMMAND,
            user=None,
            file_name=out.name,
        )
        # Read from the replica once it holds every entry up to the heads (dbrouters.py).
        events = scope.events(with_kind=False).using(history_alias(caught_up=True))
        if options["format"] == "csv":
            with out.open("wb") as handle:
                for chunk in history_csv_stream(
                    events=events, heads=heads, on_done=lambda n, digest: export_finish(
                        log_id=log.pk, row_count=n, sha256=digest
                    ),
                ):  # fmt: skip
                    handle.write(chunk)
        else:
            rows = export_rows(events=events, heads=heads)
            count = xlsx_write(path=out, rows=rows, log=log)
            export_finish(log_id=log.pk, row_count=count, sha256=file_sha256(out))
        log.refresh_from_db()
        manifest_path = Path(f"{out}.manifest.json")
        manifest_path.write_bytes(manifest_bytes(log))
        self.stdout.write(
            f"Wrote {log.row_count} row(s) to {out} (SHA-256 {log.sha256}) and the manifest to "
            f"{manifest_path}; export {log.pk} logged."
        )
