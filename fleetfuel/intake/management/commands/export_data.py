from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand

from fleetfuel.intake.exports import data_export


class Command(BaseCommand):
    help = "Write every kind (units, readings, fuelings...) to DIR in the import layouts."

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--out", required=True, metavar="DIR", help="Folder to write into.")

    def handle(self, *args: Any, **options: Any) -> None:
        counts = data_export(out_dir=Path(options["out"]))
        for kind, rows in counts.items():
            self.stdout.write(f"{kind}.csv: {rows} rows" if rows else f"{kind}: no rows, no file")
