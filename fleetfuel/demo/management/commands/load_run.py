"""Drive fleetfuel under load on this machine (README, "Scale"; ``make load``).

    python manage.py load_run [--connections 16 64] [--seconds 30] [--port 8181]
                              [--json FILE] [--markdown]
    python manage.py load_run --from-json FILE [--markdown]

Needs a synthetic fleet (``synth_fleet`` or ``benchmark`` first), gunicorn and wrk.
"""

from __future__ import annotations

import json
import logging
import os
from pathlib import Path
from typing import Any

from django.core.management.base import BaseCommand, CommandError

from fleetfuel.demo.bench_report import load_table
from fleetfuel.demo.loadrun import load_run
from fleetfuel.demo.synth import synthetic_sites


class Command(BaseCommand):
    help = "gunicorn on 127.0.0.1 driven by wrk: the floor page, the due list, a unit page, a save."

    def add_arguments(self, parser: Any) -> None:
        parser.add_argument("--connections", type=int, nargs="+", default=[16, 64])
        parser.add_argument("--seconds", type=int, default=30)
        parser.add_argument("--port", type=int, default=8181)
        parser.add_argument("--workers", type=int, default=os.cpu_count() or 2)
        parser.add_argument("--threads", type=int, default=8)
        parser.add_argument("--json", metavar="FILE", help="Also write the results here.")
        parser.add_argument("--markdown", action="store_true", help="Print a Markdown table.")
        parser.add_argument("--from-json", metavar="FILE", help="Only print a saved run.")

    def handle(self, *args: Any, **opts: Any) -> None:
        if opts["from_json"]:
            result = json.loads(Path(opts["from_json"]).read_text())
            self.stdout.write(load_table(result, markdown=opts["markdown"]))
            return
        sites = synthetic_sites()
        if not sites:
            raise CommandError("No synthetic fleet: run `manage.py synth_fleet` first.")
        logging.getLogger("axes").setLevel(logging.WARNING)
        try:
            result = load_run(
                site_ids=[s.pk for s in sites],
                connections=opts["connections"],
                seconds=opts["seconds"],
                port=opts["port"],
                workers=opts["workers"],
                threads=opts["threads"],
            )
        except (RuntimeError, ValueError) as exc:
            raise CommandError(str(exc)) from exc
        result["seconds"] = opts["seconds"]
        if opts["json"]:
            Path(opts["json"]).write_text(json.dumps(result, indent=2) + "\n")
        self.stdout.write(load_table(result, markdown=opts["markdown"]))
