from __future__ import annotations

from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError
from django.utils import timezone

from fleetfuel.intake.imports.apply import (
    ALL_OR_NOTHING,
    DRY_RUN,
    GOOD_ROWS_ONLY,
    file_import,
    rejects_write,
)
from fleetfuel.intake.imports.layouts import LAYOUTS, ORDER, kind_from_name, layout_for


def files_plan(*, path: Path, kind: str | None) -> list[tuple[Path, str]]:
    """(file, kind) pairs to import: one file, or a folder's files named by kind, in order."""
    if path.is_file():
        found = kind or kind_from_name(file_name=path.name)
        if found is None:
            raise CommandError(f"{path.name}: name the kind with --kind ({', '.join(ORDER)})")
        return [(path, found)]
    if not path.is_dir():
        raise CommandError(f"{path}: no such file or folder")
    files = [p for p in sorted(path.iterdir()) if p.suffix.lower() in (".csv", ".xlsx")]
    plan = []
    for file in files:
        found = kind_from_name(file_name=file.name)
        if found is None:
            raise CommandError(f"{file.name}: not named by a kind ({', '.join(ORDER)})")
        if kind is None or found == kind:
            plan.append((file, found))
    return sorted(plan, key=lambda pair: ORDER.index(pair[1]))


class Command(BaseCommand):
    help = (
        "Import a file (or a folder of files named by kind) in fleetfuel's layouts. Exits "
        "non-zero when any row is refused, printing one line per refused row."
    )

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("path")
        parser.add_argument("--kind", choices=sorted(LAYOUTS))
        parser.add_argument("--dry-run", action="store_true", help="Store nothing; report.")
        parser.add_argument(
            "--good-rows-only", action="store_true",
            help="Store the good rows; write the refused ones to --rejects.",
        )  # fmt: skip
        parser.add_argument("--rejects", metavar="FILE", help="CSV of refused rows and reasons.")

    def handle(self, *args: Any, **options: Any) -> None:
        if options["good_rows_only"] and not options["rejects"]:
            raise CommandError("--good-rows-only needs --rejects FILE (no row is dropped silently)")
        if options["good_rows_only"] and options["dry_run"]:
            raise CommandError("choose --dry-run or --good-rows-only")
        mode = (
            DRY_RUN if options["dry_run"]
            else GOOD_ROWS_ONLY if options["good_rows_only"] else ALL_OR_NOTHING
        )  # fmt: skip
        plan = files_plan(path=Path(options["path"]), kind=options["kind"])
        results = []
        for file, kind in plan:
            result = file_import(path=file, layout=layout_for(kind=kind), mode=mode,
                                 now=timezone.now())  # fmt: skip
            results.append(result)
            c = result.counts
            verb = (
                "would store" if mode == DRY_RUN
                else "stored" if result.stored else "stored nothing of"
            )  # fmt: skip
            self.stdout.write(
                f"{file.name} ({kind}): {verb} {c['created']} created, {c['updated']} updated, "
                f"{c['unchanged']} unchanged; {c['refused']} refused"
            )
            if result.file_error:
                self.stderr.write(f"{file.name}: {result.file_error}")
            for error in result.errors:
                self.stderr.write(str(error))
        if options["rejects"]:
            rows = rejects_write(results=results, path=Path(options["rejects"]))
            self.stdout.write(f"{rows} refused rows written to {options['rejects']}")
        if any(not r.ok for r in results):
            raise SystemExit(1)
