from __future__ import annotations

from typing import Any

from django.core.management.base import BaseCommand
from django.utils import timezone

from fleetfuel.demo.actions import demo_seed


class Command(BaseCommand):
    help = "Build the invented demo fleet (idempotent: a second run changes nothing)."

    def handle(self, *args: Any, **options: Any) -> None:
        built = demo_seed(anchor=timezone.now().date())
        if built:
            self.stdout.write(self.style.SUCCESS("Demo fleet built."))
        else:
            self.stdout.write("Demo fleet already present; nothing changed.")
