from __future__ import annotations

from datetime import UTC, datetime
from typing import Any

from django.core.management.base import BaseCommand, CommandError, CommandParser
from django.utils import timezone

from fleetfuel.demo.actions import demo_seed


def instant_parse(value: str) -> datetime:
    """An ISO 8601 instant with its UTC offset (``2026-12-02T02:40:00Z``), as UTC.

    Raises CommandError for anything else (a date, a time without an offset, nonsense)."""
    try:
        when = datetime.fromisoformat(value)
    except ValueError:
        when = None
    if when is None or when.utcoffset() is None:
        raise CommandError(
            f"--now {value!r} is not an ISO 8601 instant with a time zone; "
            "give one like 2026-12-02T02:40:00Z or 2026-12-02T08:40:00+06:00."
        )
    return when.astimezone(UTC)


class Command(BaseCommand):
    help = (
        "Build the invented demo fleet as it stands now, or at --now (idempotent: a second "
        "run changes nothing)."
    )

    def add_arguments(self, parser: CommandParser) -> None:
        parser.add_argument(
            "--now",
            help="the instant to build the demo for, ISO 8601 with a time zone "
            "(e.g. 2026-12-02T02:40:00Z); default: the current time",
        )

    def handle(self, *args: Any, **options: Any) -> None:
        now = instant_parse(options["now"]) if options["now"] else timezone.now()
        if demo_seed(now=now):
            self.stdout.write(self.style.SUCCESS(f"Demo fleet built as at {now.isoformat()}."))
        else:
            self.stdout.write("Demo fleet already present; nothing changed.")
