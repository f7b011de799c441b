"""The printable per-unit record: identification, scheduled tasks and entries, unit by unit."""

from __future__ import annotations

from collections import defaultdict
from collections.abc import Mapping
from typing import Any

from fleetfuel.fleet.models import Site

from .exports import view_annotate
from .models import ExportLog, ServiceEvent
from .selectors import HistoryScope

PRINT_MAX_ROWS = 5000  # a printed record longer than this is a CSV's job


def print_context(log: ExportLog, scope: HistoryScope, heads: Mapping[int, int]) -> dict[str, Any]:
    """The units of the manifest, each with its entries (up to its head when the export began),
    in chain order: each correction names the entry it corrects, and each entry a correction
    replaced says so (the corrected view, the originals kept)."""
    by_unit: dict[int, list[ServiceEvent]] = defaultdict(list)
    events = (
        view_annotate(scope.events(with_kind=False))
        .select_related("recorded_by", "work_order", "corrects")
        .order_by("unit_id", "seq")
    )
    seq_of: dict[int, int] = {}
    for event in events.iterator(chunk_size=PRINT_MAX_ROWS):
        if event.seq <= heads.get(event.unit_id, 0):
            by_unit[event.unit_id].append(event)
            seq_of[event.pk] = event.seq
    for unit_events in by_unit.values():
        for event in unit_events:
            # The entry that replaced this one, by its seq (None while in effect, or when the
            # correction came after the export began).
            event.replaced_by_seq = seq_of.get(event.superseded_by)  # type: ignore[attr-defined]
    # Each unit's depot shows its dates and hours its own way (one query for the depots).
    names = {unit["site"] for unit in log.manifest["units"]}
    depots = {site.name: site for site in Site.objects.filter(name__in=names)}
    units = [
        {**unit, "events": by_unit.get(unit["unit_id"], []), "depot": depots.get(unit["site"])}
        for unit in log.manifest["units"]
    ]
    return {
        "log": log,
        "units": units,
        "print_depot": next(iter(depots.values())) if len(depots) == 1 else None,
        "filters": log.filters,
        "row_count": sum(len(u["events"]) for u in units),
    }
