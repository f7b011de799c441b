"""Starting, finishing and describing an export: the ExportLog row and its manifest.

The manifest names each unit's scheduled tasks (49 CFR 396.3(b)(2): "the nature and due date
of the various inspection and maintenance operations"). They are planning's due items, which
the ledger does not read: the caller passes them in, as plain dicts (see ``export_start``).
"""

from __future__ import annotations

import json
from collections.abc import Mapping
from datetime import datetime
from typing import Any

from django.utils import timezone

from services.ledger import GENESIS

from .actions import CONTENT_FIELDS, HASHED_WHEN_SET
from .checkpoints import units_with_heads
from .exports import FORMULA_TRIGGERS, HEADERS
from .models import ExportLog
from .selectors import HistoryScope

CANONICAL_FORM = (
    "hash = SHA-256 (FIPS 180-4) over the canonical JSON of the hashed fields followed by "
    "prev_hash as ASCII hex; the first entry of a unit's chain has prev_hash = genesis. "
    "Canonical JSON: keys sorted, no white space (separators ',' and ':'), UTF-8 without "
    "escaping, integers and integral floats written as integers, other floats in shortest "
    "round-trip form, times as YYYY-MM-DDTHH:MM:SS.ffffffZ (UTC), empty numeric cells as "
    "null, true/false as JSON booleans."
)
ESCAPING = (
    "A text cell starting with one of = + - @ TAB CR ' has one ' put in front; drop one "
    "leading ' from such a cell to get the recorded text."
)


def _unit_entry(unit: Any, scheduled: list[dict[str, Any]]) -> dict[str, Any]:
    return {
        "unit_id": unit.pk,
        "site": unit.site.name,
        "fleet_number": unit.fleet_number,
        "make": unit.make,
        "model": unit.model,
        "serial_number": unit.serial_number,
        "year": unit.year,
        "owner": unit.owner,
        "tire_size": unit.tire_size,
        "in_service_on": unit.in_service_on.isoformat(),
        "disposed_on": unit.disposed_on.isoformat() if unit.disposed_on else None,
        "chain_head": ({"seq": unit.head_seq, "hash": unit.head_hash} if unit.head_seq else None),
        "scheduled": scheduled,
    }


def export_start(
    *,
    scope: HistoryScope,
    fmt: str,
    via: str,
    user: Any,
    scheduled: Mapping[int, list[dict[str, Any]]],
    file_name: str = "",
    now: datetime | None = None,
) -> tuple[ExportLog, dict[int, int]]:
    """Log the export and note each unit's chain head; return the log and {unit id: head seq}.

    The rows exported stop at these heads, so entries appended during a long export do not
    make the file disagree with its manifest. ``scheduled`` maps a unit id to the unit's
    scheduled tasks, each ``{"task", "label", "component_id", "due_on" (ISO date),
    "due_hours", "status"}``, soonest first; a unit missing from it has none.
    """
    now = now or timezone.now()
    units = (
        units_with_heads(scope.units())
        .select_related("site")
        .order_by("site__name", "fleet_number", "pk")
    )
    entries = [_unit_entry(unit, scheduled.get(unit.pk, [])) for unit in units]
    heads = {e["unit_id"]: e["chain_head"]["seq"] for e in entries if e["chain_head"]}
    manifest = {
        "generator": "fleetfuel",
        "format": fmt,
        "generated_at": now.isoformat(),
        "generated_by": user.get_username() if user else "command line",
        "filters": scope.describe(),
        "columns": list(HEADERS) if fmt != ExportLog.Format.PRINT else [],
        "hashed_fields": [name for name in CONTENT_FIELDS if name not in HASHED_WHEN_SET],
        # Hashed too, but only on the rows where they are not empty (added to the history
        # later: the entries recorded before keep their hashes).
        "hashed_when_set": list(HASHED_WHEN_SET),
        "genesis": GENESIS,
        "canonical_form": CANONICAL_FORM,
        "escaping": ESCAPING if fmt != ExportLog.Format.PRINT else "",
        "formula_triggers": list(FORMULA_TRIGGERS),
        "units": entries,
    }
    log = ExportLog.objects.create(
        requested_by=user if user else None,
        requested_at=now,
        via=via,
        format=fmt,
        filters=scope.describe(),
        manifest=manifest,
    )
    suffix = {"csv": "csv", "xlsx": "xlsx", "print": "html"}[fmt]
    log.file_name = file_name or f"fleetfuel-history-{log.pk:06d}.{suffix}"
    ExportLog.objects.filter(pk=log.pk).update(file_name=log.file_name)
    log.sites.set({unit.site_id for unit in units})
    return log, heads


def export_finish(*, log_id: int, row_count: int, sha256: str) -> None:
    """Note the finished file's row count and digest (once)."""
    ExportLog.objects.filter(pk=log_id, finished_at__isnull=True).update(
        row_count=row_count, sha256=sha256, finished_at=timezone.now()
    )


def manifest_document(log: ExportLog) -> dict[str, Any]:
    """The manifest of a finished export: what was asked, the heads, and the file's digest."""
    if not log.finished:
        raise ValueError("the export has not finished")
    return {
        "export_id": log.pk,
        "file_name": log.file_name,
        "row_count": log.row_count,
        "sha256": log.sha256,
        "finished_at": log.finished_at.isoformat() if log.finished_at else None,
        **log.manifest,
    }


def manifest_bytes(log: ExportLog) -> bytes:
    return (json.dumps(manifest_document(log), indent=2, ensure_ascii=False) + "\n").encode()
