from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError

from fleetfuel.intake.exports import data_export, layouts_markdown


class Command(BaseCommand):
    help = "Write every kind (units, readings, fuelings...) to DIR in the import layouts."

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--out", metavar="DIR", help="Folder to write into.")
        parser.add_argument(
            "--layouts-doc", action="store_true", help="Print the layouts as Markdown instead."
        )

    def handle(self, *args: Any, **options: Any) -> None:
        if options["layouts_doc"]:
            self.stdout.write(layouts_markdown(), ending="")
            return
        if not options["out"]:
            raise CommandError("give --out DIR (or --layouts-doc)")
        counts = data_export(out_dir=Path(options["out"]))
        for kind, rows in counts.items():
            self.stdout.write(f"{kind}.csv: {rows} rows" if rows else f"{kind}: no rows, no file")
