"""Corrections that can correct: the part, cylinder, kind, amounts and time of an entry, by a
new chained entry with a reason and an author; the corrected view follows, the original stays."""

from __future__ import annotations

import csv
import hashlib
import io
import json
import subprocess
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import pytest
from django.core.exceptions import ValidationError
from django.core.management import call_command
from django.db import connection
from django.urls import reverse

from fleetfuel.fleet.models import ComponentKind
from fleetfuel.intake.imports.kinds_records import service_event_rows
from fleetfuel.ledger.actions import service_event_append, service_event_correct
from fleetfuel.ledger.effective import effective_events, in_effect
from fleetfuel.ledger.exports import HEADERS, export_rows
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.verification import ledger_verify
from services.ledger import GENESIS
from tests import factories as f

pytestmark = pytest.mark.django_db
Kind = ServiceEvent.Kind


def _fine_change(unit: Any, by: Any, *, days_ago: float, meter: float) -> ServiceEvent:
    return service_event_append(
        unit=unit,
        kind=Kind.FILTER_CHANGED,
        performed_at=f.NOW - timedelta(days=days_ago),
        recorded_by=by,
        hour_meter=meter,
        component=unit.components.get(kind=ComponentKind.FINE_FILTER),
        component_kind=ComponentKind.FINE_FILTER,
        part_number="FF-2",
    )


def test_a_correction_moves_a_filter_change_to_the_primary_filter(
    unit: Any, mechanic: Any, manager: Any
) -> None:
    wrong = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    primary = unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    fixed = service_event_correct(
        event=wrong, reason="Closed with the wrong filter", recorded_by=manager, component=primary
    )
    # The correction names the part and, from it, its kind; the rest is restated.
    assert (fixed.component_id, fixed.component_kind) == (primary.pk, ComponentKind.PRIMARY_FILTER)
    assert (fixed.corrected_kind, fixed.hour_meter, fixed.performed_at) == (
        Kind.FILTER_CHANGED, 1200.0, wrong.performed_at,
    )  # fmt: skip
    # The original is kept as recorded, no longer in effect.
    kept = ServiceEvent.objects.get(pk=wrong.pk)
    assert kept.component_kind == ComponentKind.FINE_FILTER and kept.hash == wrong.hash
    changes = effective_events(Kind.FILTER_CHANGED).filter(unit=unit)
    assert [(e.pk, e.component_kind) for e in changes] == [(fixed.pk, ComponentKind.PRIMARY_FILTER)]


def test_a_correction_changes_kind_cylinder_amounts_and_time(
    unit: Any, mechanic: Any, manager: Any
) -> None:
    recorded = service_event_append(
        unit=unit, kind=Kind.CONNECTOR_REPLACED, performed_at=f.NOW - timedelta(hours=5),
        recorded_by=mechanic, cylinder=2, component_kind=ComponentKind.HP_CONNECTOR,
    )  # fmt: skip
    at = f.NOW - timedelta(hours=7)
    injector = unit.components.get(kind=ComponentKind.INJECTOR, position=3)
    fixed = service_event_correct(
        event=recorded, reason="It was the injector of cylinder 3", recorded_by=manager,
        kind=Kind.INJECTOR_REPLACED, component=injector, cylinder=3, performed_at=at,
        hour_meter=1234.5,
    )  # fmt: skip
    (row,) = in_effect().filter(unit=unit)
    assert row.pk == fixed.pk and row.effective_kind == Kind.INJECTOR_REPLACED
    assert (row.cylinder, row.component_kind, row.performed_at, row.hour_meter) == (
        3, ComponentKind.INJECTOR, at, 1234.5,
    )  # fmt: skip


@pytest.mark.parametrize(
    ("changes", "field"),
    [
        ({"cylinder": 7}, "cylinder"),  # a 6-cylinder unit: cylinders 1 to 6 (common practice)
        ({"cylinder": 0}, "cylinder"),
        ({"kind": Kind.CORRECTION}, "kind"),
        ({"kind": "oil_change"}, "kind"),
    ],
)
def test_a_correction_refuses_what_the_unit_cannot_have(
    unit: Any, mechanic: Any, manager: Any, changes: dict[str, Any], field: str
) -> None:
    recorded = _fine_change(unit, mechanic, days_ago=1, meter=1100.0)
    with pytest.raises(ValidationError) as caught:
        service_event_correct(event=recorded, reason="typo", recorded_by=manager, **changes)
    assert field in caught.value.message_dict
    assert ServiceEvent.objects.count() == 1


def test_a_part_of_another_unit_is_refused(
    unit: Any, mechanic: Any, manager: Any, site: Any, unit_class: Any
) -> None:
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    recorded = _fine_change(unit, mechanic, days_ago=1, meter=1100.0)
    theirs = other.components.get(kind=ComponentKind.PRIMARY_FILTER)
    with pytest.raises(ValidationError, match="not on N-001"):
        service_event_correct(event=recorded, reason="x", recorded_by=manager, component=theirs)


def test_corrections_of_one_entry_form_a_line_and_the_latest_is_in_effect(
    unit: Any, mechanic: Any, manager: Any
) -> None:
    recorded = _fine_change(unit, mechanic, days_ago=1, meter=1100.0)
    first = service_event_correct(event=recorded, reason="meter", recorded_by=manager,
                                  hour_meter=1110.0)  # fmt: skip
    # Correcting the original again corrects the version in effect, keeping its values.
    second = service_event_correct(event=recorded, reason="part", recorded_by=manager,
                                   part_number="FF-3")  # fmt: skip
    assert second.corrects_id == first.pk
    assert (second.hour_meter, second.part_number) == (1110.0, "FF-3")
    assert [e.pk for e in in_effect().filter(unit=unit)] == [second.pk]


def test_the_chain_verifies_after_corrections_and_a_changed_kind_is_sealed(
    unit: Any, mechanic: Any, manager: Any
) -> None:
    recorded = _fine_change(unit, mechanic, days_ago=1, meter=1100.0)
    fixed = service_event_correct(
        event=recorded, reason="was a drain", recorded_by=manager, kind=Kind.SEPARATOR_DRAINED
    )
    assert ledger_verify().ok
    # corrected_kind is sealed by the hash: changing it behind the app's back shows.
    table = ServiceEvent._meta.db_table
    with connection.cursor() as cursor:
        if connection.vendor == "postgresql":
            cursor.execute("SET session_replication_role = replica")  # triggers off
        cursor.execute(
            f"UPDATE {table} SET corrected_kind = %s WHERE id = %s", [Kind.INSPECTION, fixed.pk]
        )
        if connection.vendor == "postgresql":
            cursor.execute("SET session_replication_role = origin")
    report = ledger_verify()
    assert [p.event_id for p in report.problems] == [fixed.pk]


def test_an_entry_without_a_corrected_kind_hashes_as_before_it_existed(
    unit: Any, mechanic: Any
) -> None:
    """Entries recorded before the field keep their hashes: SHA-256 (FIPS 180-4) of the
    canonical JSON (RFC 8259, keys sorted, no spaces) of the 26 fields hashed until then."""
    recorded = _fine_change(unit, mechanic, days_ago=1, meter=1100.0)
    content = {
        "unit_id": unit.pk, "seq": 1, "kind": "filter_changed",
        "performed_at": recorded.performed_at.strftime("%Y-%m-%dT%H:%M:%S.%fZ"),
        "recorded_at": recorded.recorded_at.strftime("%Y-%m-%dT%H:%M:%S.%fZ"),
        "recorded_by_id": mechanic.pk, "hour_meter": 1100,
        "component_id": recorded.component_id, "component_kind": "fine_filter",
        "cylinder": None, "part_number": "FF-2", "old_serial": "", "new_serial": "",
        "water_ml": None, "water_appearance": "", "measurement_name": "", "value": None,
        "low_limit": None, "high_limit": None, "passed": None, "dp_before_bar": None,
        "parts_used": "", "notes": "", "work_order_id": None, "corrects_id": None, "reason": "",
    }  # fmt: skip
    body = json.dumps(content, sort_keys=True, separators=(",", ":"), ensure_ascii=False)
    assert hashlib.sha256((body + GENESIS).encode()).hexdigest() == recorded.hash


def test_the_export_shows_the_corrected_view_and_keeps_the_original(
    unit: Any, mechanic: Any, manager: Any
) -> None:
    wrong = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    primary = unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    fixed = service_event_correct(
        event=wrong, reason="wrong filter", recorded_by=manager, component=primary
    )
    rows = [
        dict(zip(HEADERS, row, strict=True))
        for row in export_rows(events=ServiceEvent.objects.all(), heads={unit.pk: 2})
    ]
    original, correction = rows
    assert (original["in_effect"], original["superseded_by"]) == (False, fixed.pk)
    assert original["component_kind"] == ComponentKind.FINE_FILTER  # as recorded
    assert (correction["in_effect"], correction["superseded_by"]) == (True, None)
    assert (correction["effective_kind"], correction["component_kind"]) == (
        Kind.FILTER_CHANGED, ComponentKind.PRIMARY_FILTER,
    )  # fmt: skip
    assert correction["corrects_id"] == wrong.pk
    assert correction["nature"] == "Filter changed (correction)"
    assert original["nature"] == "Filter changed"


def test_the_csv_of_a_corrected_history_passes_the_third_partys_check(
    unit: Any, mechanic: Any, manager: Any, tmp_path: Path
) -> None:
    """The standard-library recipe (tests/ledger/third_party_check.py) recomputes every hash
    from the file and its manifest, a changed kind included."""
    wrong = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    service_event_correct(event=wrong, reason="a drain", recorded_by=manager,
                          kind=Kind.SEPARATOR_DRAINED, water_ml=40.0)  # fmt: skip
    out = tmp_path / "history.csv"
    call_command("export_history", "--format", "csv", "--out", str(out), stdout=io.StringIO())
    manifest = json.loads(Path(f"{out}.manifest.json").read_text())
    assert manifest["hashed_when_set"] == ["corrected_kind"]
    rows = list(csv.DictReader(io.StringIO(out.read_text())))
    assert [r["in_effect"] for r in rows] == ["false", "true"]
    assert rows[1]["corrected_kind"] == rows[1]["effective_kind"] == Kind.SEPARATOR_DRAINED
    recipe = Path(__file__).with_name("third_party_check.py")
    result = subprocess.run(
        [sys.executable, "-I", str(recipe), str(out)], capture_output=True, text=True, check=False
    )
    assert result.returncode == 0, result.stderr


def _form_data(client: Any, event: ServiceEvent) -> dict[str, Any]:
    page = client.get(reverse("ledger:history"), {"correct": event.pk})
    form = page.context["correction_form"]
    return {
        name: form[name].value() if form[name].value() is not None else "" for name in form.fields
    }


def test_a_manager_moves_the_entry_to_another_part_on_the_history_page(
    as_manager: Any, unit: Any, mechanic: Any
) -> None:
    wrong = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    primary = unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    data = _form_data(as_manager, wrong)
    assert data["kind"] == Kind.FILTER_CHANGED and data["component"] == f"c{wrong.component_id}"
    data.update(component=f"c{primary.pk}", reason="Closed with the wrong filter")
    response = as_manager.post(reverse("ledger:correct", args=[wrong.pk]), data)
    assert response.status_code == 302
    fixed = ServiceEvent.objects.get(corrects=wrong)
    assert (fixed.component_id, fixed.component_kind) == (primary.pk, ComponentKind.PRIMARY_FILTER)
    assert fixed.performed_at == wrong.performed_at  # the unchanged minute keeps its seconds
    # The history shows the corrected entry and, beside it, the one it replaces.
    page = as_manager.get(reverse("ledger:history")).content.decode()
    assert "Primary filter / water separator" in page and "Entry 1 as recorded" in page
    assert "Times in depot time, Europe/London." in page
    shown = as_manager.get(reverse("ledger:history")).context["page"].events
    assert [e.pk for e in shown] == [fixed.pk]
    recorded = as_manager.get(reverse("ledger:history"), {"recorded": "on"})
    assert [e.pk for e in recorded.context["page"].events] == [fixed.pk, wrong.pk]


def test_a_cylinder_the_unit_lacks_is_refused_beside_its_field(
    as_manager: Any, unit: Any, mechanic: Any
) -> None:
    recorded = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    data = _form_data(as_manager, recorded)
    data.update(cylinder="7", reason="cylinder")  # a 6-cylinder unit (common practice: 1 to n)
    response = as_manager.post(reverse("ledger:correct", args=[recorded.pk]), data)
    assert response.status_code == 400
    assert response.context["correction_form"].errors["cylinder"]
    assert ServiceEvent.objects.count() == 1


def test_an_auditor_cannot_correct(as_auditor: Any, unit: Any, mechanic: Any) -> None:
    recorded = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    primary = unit.components.get(kind=ComponentKind.PRIMARY_FILTER)
    response = as_auditor.post(
        reverse("ledger:correct", args=[recorded.pk]),
        {"component": f"c{primary.pk}", "kind": Kind.FILTER_CHANGED, "reason": "x",
         "performed_at": "2026-06-13T12:00"},
    )  # fmt: skip
    assert response.status_code == 403
    assert ServiceEvent.objects.count() == 1
    page = as_auditor.get(reverse("ledger:history"), {"correct": recorded.pk})
    assert page.context["correcting"] is None and b"Record correction" not in page.content


def test_days_in_the_filter_are_depot_days(as_manager: Any, unit: Any, mechanic: Any) -> None:
    """00:30 on 15 June in London (BST, UTC+1: the UK's summer time, Summer Time Order 2002)
    is 23:30 on 14 June UTC: it is a 15 June entry for its depot."""
    service_event_append(
        unit=unit, kind=Kind.INSPECTION, recorded_by=mechanic, notes="early",
        performed_at=datetime(2026, 6, 14, 23, 30, tzinfo=UTC),
    )  # fmt: skip
    on_15 = as_manager.get(
        reverse("ledger:history"), {"date_from": "2026-06-15", "date_to": "2026-06-15"}
    )
    on_14 = as_manager.get(
        reverse("ledger:history"), {"date_from": "2026-06-14", "date_to": "2026-06-14"}
    )
    assert len(on_15.context["page"].events) == 1 and not on_14.context["page"].events


def test_the_printed_record_marks_the_correction_and_the_entry_it_replaces(
    as_manager: Any, unit: Any, mechanic: Any, manager: Any
) -> None:
    wrong = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    service_event_correct(event=wrong, reason="was a drain", recorded_by=manager,
                          kind=Kind.SEPARATOR_DRAINED, water_ml=40.0)  # fmt: skip
    response = as_manager.post(reverse("pages:export"), {"format": "print"})
    page = response.content.decode()
    original, correction = page.split('<tr class="entry')[1:3]
    assert "Replaced by entry 2: not in effect" in original and "Filter changed" in original
    assert "Correction of entry 1" in correction and "Water separator drained" in correction


def test_the_data_export_writes_each_entry_as_last_corrected(
    unit: Any, mechanic: Any, manager: Any
) -> None:
    wrong = _fine_change(unit, mechanic, days_ago=2, meter=1200.0)
    service_event_correct(
        event=wrong, reason="wrong filter", recorded_by=manager,
        component=unit.components.get(kind=ComponentKind.PRIMARY_FILTER),
    )  # fmt: skip
    (row,) = service_event_rows()
    assert (row["kind"], row["component_kind"], row["hour_meter"]) == (
        Kind.FILTER_CHANGED, ComponentKind.PRIMARY_FILTER, 1200.0,
    )  # fmt: skip
