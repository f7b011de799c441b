"""An export's manifest, composed: the ledger's manifest with planning's scheduled tasks.

49 CFR 396.3(b)(2) asks the maintenance record for "the nature and due date of the various
inspection and maintenance operations to be performed": the due items of planning. The ledger
stands below planning, so this layer reads them and hands them to the ledger's export_start.
"""

from __future__ import annotations

from collections import defaultdict
from typing import Any

from django.db.models import QuerySet

from fleetfuel.fleet.models import Unit
from fleetfuel.ledger.manifest import export_start
from fleetfuel.ledger.models import ExportLog
from fleetfuel.ledger.selectors import HistoryScope
from fleetfuel.planning.models import DueItem


def scheduled_tasks_by_unit(*, units: QuerySet[Unit]) -> dict[int, list[dict[str, Any]]]:
    """The nature and due date of each scheduled task of these units, soonest first. One query,
    read in chunks."""
    labels = dict(DueItem.Task.choices)
    found: dict[int, list[dict[str, Any]]] = defaultdict(list)
    rows = (
        DueItem.objects.filter(unit__in=units.values("pk"))
        .order_by("unit_id", "due_on", "task")
        .values("unit_id", "task", "component_id", "due_on", "due_hours", "status")
    )
    for row in rows.iterator(chunk_size=2000):
        found[row["unit_id"]].append(
            {
                "task": row["task"],
                "label": labels.get(row["task"], row["task"]),
                "component_id": row["component_id"],
                "due_on": row["due_on"].isoformat(),
                "due_hours": row["due_hours"],
                "status": row["status"],
            }
        )
    return found


def history_export_start(
    *, scope: HistoryScope, fmt: str, via: str, user: Any, file_name: str = ""
) -> tuple[ExportLog, dict[int, int]]:
    """Log an export of the history with its manifest, scheduled tasks included; return the log
    and each unit's head seq (see fleetfuel.ledger.manifest.export_start)."""
    return export_start(
        scope=scope,
        fmt=fmt,
        via=via,
        user=user,
        scheduled=scheduled_tasks_by_unit(units=scope.units()),
        file_name=file_name,
    )
