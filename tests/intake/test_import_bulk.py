"""A bulk layout's chunk of rows, written together, stores what the rows stored one at a time
did: the same counts and row errors, the same hash chains, and a refusal by the database on
the row it belongs to. The reference is the row-at-a-time path (the layout with bulk off:
each row saved at once, service events through service_event_append, whose SHA-256 chain
tests/ledger/test_chain_hash.py checks against hashlib)."""

from __future__ import annotations

from dataclasses import replace
from datetime import timedelta
from pathlib import Path
from typing import Any

import pytest
from django.db import transaction

from fleetfuel.intake.imports import apply, batch
from fleetfuel.intake.imports.apply import ALL_OR_NOTHING, GOOD_ROWS_ONLY, ImportResult, file_import
from fleetfuel.intake.imports.layouts import layout_for
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.verification import ledger_verify
from tests import factories as f

NOW = f.NOW


class _Undo(Exception):
    pass


def both_ways(path: Path, kind: str, mode: str, seen: Any) -> tuple[Any, Any]:
    """(result, what ``seen()`` reads after) of the file stored in bulk, rolled back, then of
    the same file stored a row at a time."""
    layout = layout_for(kind=kind)
    assert layout.bulk
    outcomes = []
    for way in (layout, replace(layout, bulk=False)):
        try:
            with transaction.atomic():
                result = file_import(path=path, layout=way, mode=mode, now=NOW)
                outcomes.append((summary(result), seen()))
                raise _Undo
        except _Undo:
            pass
    return outcomes[0], outcomes[1]


def summary(result: ImportResult) -> tuple[Any, ...]:
    return result.counts, [str(e) for e in result.errors], result.stored


def test_service_events_in_bulk_make_the_chains_one_by_one_made(
    unit: Any, manager: Any, site: Any, unit_class: Any, tmp_path: Path
) -> None:
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    start = NOW - timedelta(days=300)
    lines = ["unit,kind,performed_at,hour_meter,component,water_ml,notes,recorded_by"]
    for i in range(apply.CHUNK + 150):  # two chunks, the units' rows interleaved
        number = unit.fleet_number if i % 3 else other.fleet_number
        at = (start + timedelta(hours=7 * i)).isoformat()
        who = "nobody" if i % 97 == 5 else manager.username  # refused rows in both chunks
        if i % 2:
            lines.append(
                f"{number},separator_drained,{at},{1000 + i},primary_filter,{i % 40},,{who}"
            )
        else:
            lines.append(f"{number},inspection,{at},{1000 + i},,,row {i},{who}")
    path = tmp_path / "service_events.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")

    def chains() -> list[tuple[Any, ...]]:
        rows = ServiceEvent.objects.order_by("unit__fleet_number", "seq")
        return list(rows.values_list("unit__fleet_number", "seq", "prev_hash", "hash", "notes"))

    bulk, one_by_one = both_ways(path, "service_events", GOOD_ROWS_ONLY, chains)
    assert bulk == one_by_one
    (counts, errors, _), events = bulk
    assert counts["created"] == len(events) == apply.CHUNK + 150 - len(errors) > apply.CHUNK
    assert errors[0] == "service_events.csv line 7, column recorded_by: no user named 'nobody'"


def test_a_refusal_at_the_bulk_insert_is_its_rows_as_before(unit: Any, tmp_path: Path) -> None:
    n = unit.fleet_number
    path = tmp_path / "components.csv"
    path.write_text(
        "unit,kind,installed_on,installed_hours,removed_on,removed_hours\n"
        f"{n},primary_filter,2025-01-10,400,2025-12-31,900\n"
        f"{n},primary_filter,2026-03-01,1200,,\n"  # the unit has one fitted: refused
        f"{n},fine_filter,2025-01-10,400,2025-12-31,900\n",
        encoding="utf-8",
    )

    def components() -> list[tuple[Any, ...]]:
        return list(unit.components.order_by("pk").values_list("kind", "installed_on"))

    for mode in (GOOD_ROWS_ONLY, ALL_OR_NOTHING):
        bulk, one_by_one = both_ways(path, "components", mode, components)
        assert bulk == one_by_one
        (counts, errors, stored), _ = bulk
        assert errors == [
            "components.csv line 3, column kind: "
            "This unit already has that part fitted at that position."
        ]
        assert counts["refused"] == 1 and stored == (mode == GOOD_ROWS_ONLY)


def test_a_chunk_queues_its_units_recompute_once(
    unit: Any, site: Any, unit_class: Any, tmp_path: Path, monkeypatch: pytest.MonkeyPatch
) -> None:
    """A bulk insert sends no post_save: the chunk queues the recompute planning's signal
    would have queued for each row, once, for every unit written."""
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    queued: list[list[int]] = []
    monkeypatch.setattr(batch, "unit_recompute_enqueue", queued.append)
    lines = ["unit,fueled_at,litres"]
    for i in range(12):
        number = (unit if i % 2 else other).fleet_number
        lines.append(f"{number},{(NOW - timedelta(days=12 - i)).isoformat()},{100 + i}")
    path = tmp_path / "fuelings.csv"
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    result = file_import(path=path, layout=layout_for(kind="fuelings"), mode=ALL_OR_NOTHING,
                         now=NOW)  # fmt: skip
    assert result.ok and result.counts["created"] == 12
    assert queued == [sorted([unit.pk, other.pk])]
    assert ledger_verify(unit_ids=[unit.pk, other.pk]).ok
