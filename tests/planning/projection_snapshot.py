"""The engine's stored output for the demo at a fixed instant, as plain JSON: every field of
every due item and unit flag, named by what names them in any database (depot, fleet number,
component kind), never by row ids.

``PROJECTION_SNAPSHOT_WRITE=1 pytest tests/planning/test_projection_snapshot.py`` rewrites
the snapshots: do that only when a change is meant to change the projection, and say so in
the commit.
"""

from __future__ import annotations

import gzip
import json
from datetime import datetime
from pathlib import Path
from typing import Any

from django.core.serializers.json import DjangoJSONEncoder

from fleetfuel.planning.models import DueItem, UnitFlag

SNAPSHOTS = Path(__file__).with_name("snapshots")
INSTANTS = {
    "demo-2026-12-02T02-40Z": datetime.fromisoformat("2026-12-02T02:40:00Z"),
    "demo-2028-02-29T12-00Z": datetime.fromisoformat("2028-02-29T12:00:00Z"),
}
# sort_fleet_number: the unit's own number, copied for the list's sorts (the "unit" key holds it)
DUE_SKIP = {"id", "unit", "site", "component", "sort_fleet_number"}
FLAG_SKIP = {"id", "unit"}


def _fields(obj: Any, skip: set[str]) -> dict[str, Any]:
    return {f.attname: getattr(obj, f.attname) for f in obj._meta.concrete_fields
            if f.name not in skip}  # fmt: skip


def projection_dump() -> dict[str, Any]:
    """Every stored due item and unit flag, sorted, ids replaced by names."""
    items = [
        {
            "unit": f"{i.unit.site.code}/{i.unit.fleet_number}",
            "site": i.site.code,
            "component": f"{i.component.kind}@{i.component.position or ''}",
            **{k: v for k, v in _fields(i, DUE_SKIP).items() if not k.endswith("_id")},
        }
        for i in DueItem.objects.select_related("unit__site", "site", "component")
    ]
    flags = [
        {"unit": f"{g.unit.site.code}/{g.unit.fleet_number}", **_fields(g, FLAG_SKIP)}
        for g in UnitFlag.objects.select_related("unit__site")
    ]
    items.sort(key=lambda r: (r["unit"], r["component"], r["task"]))
    flags.sort(key=lambda r: (r["unit"], r["code"]))
    return json.loads(json.dumps({"due_items": items, "flags": flags}, cls=DjangoJSONEncoder))


def snapshot_path(name: str) -> Path:
    return SNAPSHOTS / f"{name}.json.gz"


def snapshot_read(name: str) -> dict[str, Any]:
    return json.loads(gzip.decompress(snapshot_path(name).read_bytes()))


def snapshot_write(name: str, dump: dict[str, Any]) -> None:
    text = json.dumps(dump, indent=1, sort_keys=True) + "\n"
    snapshot_path(name).write_bytes(gzip.compress(text.encode(), mtime=0))
