"""Exports from the history page and the export_history command: the columns 49 CFR 396.3(b)
asks for, row counts, formula escaping, the scheduled tasks of 396.3(b)(2) in the manifest, the
manifest's digest against hashlib (SHA-256, FIPS 180-4), and the XLSX read back with openpyxl."""

from __future__ import annotations

import csv
import hashlib
import io
import json
from datetime import date, datetime, timedelta
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from django.core.management import CommandError, call_command
from django.urls import reverse

from fleetfuel.ledger.actions import CONTENT_FIELDS, HASHED_WHEN_SET, service_event_append
from fleetfuel.ledger.models import ExportLog, ServiceEvent
from fleetfuel.planning.actions import due_items_recompute
from services.ledger import canonical_bytes, entry_hash
from tests import factories as f
from tests.ledger.conftest import events_add

pytestmark = pytest.mark.django_db

# 49 CFR 396.3(b)(1): identification (company number, make, serial number, year, tire size,
# owner if not the carrier); (b)(3): a record of inspection, repair and maintenance with its
# date and nature. fleetfuel adds the mechanic, hour meter, parts, measurements, water, the
# reasons for overrides and corrections, and the chain fields.
CFR_396_3_B1 = {"fleet_number", "make", "serial_number", "year", "tire_size", "owner"}
CFR_396_3_B3 = {"performed_at", "kind", "nature"}
FLEETFUEL_EXTRA = {
    "mechanic", "hour_meter", "part_number", "parts_used", "measurement_name", "value",
    "low_limit", "high_limit", "passed", "water_ml", "reason", "seq", "prev_hash", "hash",
}  # fmt: skip


@pytest.fixture
def add_events() -> Any:
    return events_add


def export_post(client: Any, fmt: str, **filters: str) -> Any:
    return client.post(reverse("pages:export"), {"format": fmt, **filters})


def csv_body(response: Any) -> bytes:
    return b"".join(response.streaming_content)


def csv_rows(data: bytes) -> list[dict[str, str]]:
    return list(csv.DictReader(io.StringIO(data.decode("utf-8"), newline="")))


def manifest_of(client: Any, response: Any) -> dict[str, Any]:
    pk = int(response["X-Fleetfuel-Export"])
    got = client.get(reverse("pages:export_manifest", args=[pk]))
    assert got.status_code == 200
    return json.loads(got.content)


@pytest.fixture
def history(unit: Any, mechanic: Any, add_events: Any) -> list[Any]:
    events = add_events(unit, mechanic, 3)
    events.append(
        service_event_append(
            unit=unit,
            kind=ServiceEvent.Kind.MEASUREMENT,
            performed_at=f.NOW,
            recorded_by=mechanic,
            measurement_name="Supply pressure at cranking",
            value=4.75,
            low_limit=4.0,
            high_limit=6.5,
            passed=True,
            hour_meter=1234.5,
            notes='=HYPERLINK("http://example.test")',
            parts_used="-2+3 O-ring kit",
        )
    )
    return events


def test_csv_columns_cover_49_cfr_396_3_b(as_auditor: Any, history: Any) -> None:
    data = csv_body(export_post(as_auditor, "csv"))
    header = next(csv.reader(io.StringIO(data.decode())))
    assert set(header) >= CFR_396_3_B1
    assert set(header) >= CFR_396_3_B3
    assert set(header) >= FLEETFUEL_EXTRA
    assert set(CONTENT_FIELDS) <= set(header)  # every hashed field, to recompute the chain


def test_csv_row_values_and_count(as_auditor: Any, history: Any, mechanic: Any) -> None:
    mechanic.first_name, mechanic.last_name = "Mick", "Rowe"
    mechanic.save()
    response = export_post(as_auditor, "csv")
    assert response["Content-Type"].startswith("text/csv")
    rows = csv_rows(csv_body(response))
    assert len(rows) == 4
    last = rows[-1]
    assert (last["fleet_number"], last["make"], last["serial_number"], last["year"]) == (
        "N-001", "Testmake", history[0].unit.serial_number, "2020",
    )  # fmt: skip
    assert (last["nature"], last["mechanic"], last["passed"]) == (
        "Measurement taken", "Mick Rowe", "true",
    )  # fmt: skip
    assert (last["value"], last["low_limit"], last["hour_meter"]) == ("4.75", "4", "1234.5")
    assert last["performed_at"] == "2026-06-15T12:00:00.000000Z"
    assert rows[0]["water_ml"] == "12.5" and rows[0]["kind"] == "separator_drained"


def test_formula_cells_are_escaped_in_csv(as_auditor: Any, history: Any) -> None:
    last = csv_rows(csv_body(export_post(as_auditor, "csv")))[-1]
    assert last["notes"] == '\'=HYPERLINK("http://example.test")'
    assert last["parts_used"] == "'-2+3 O-ring kit"


def test_manifest_digest_is_sha256_of_the_file(as_auditor: Any, history: Any) -> None:
    response = export_post(as_auditor, "csv")
    data = csv_body(response)
    manifest = manifest_of(as_auditor, response)
    assert manifest["sha256"] == hashlib.sha256(data).hexdigest()
    assert manifest["row_count"] == 4
    (unit_entry,) = manifest["units"]
    assert unit_entry["chain_head"] == {"seq": 4, "hash": history[-1].hash}
    log = ExportLog.objects.get()
    assert (log.format, log.via, log.row_count) == ("csv", "web", 4)


def test_manifest_lists_the_due_date_of_each_scheduled_task(
    as_auditor: Any, history: Any, unit: Any
) -> None:
    # 49 CFR 396.3(b)(2): the nature and due date of the various inspection and maintenance
    # operations to be performed.
    due_items_recompute(unit_ids=[unit.pk], now=f.NOW)
    response = export_post(as_auditor, "csv")
    csv_body(response)  # the digest is known once the stream has run
    manifest = manifest_of(as_auditor, response)
    scheduled = manifest["units"][0]["scheduled"]
    assert {item["task"] for item in scheduled} >= {"primary_filter", "fine_filter"}
    assert all(date.fromisoformat(item["due_on"]) for item in scheduled)


def test_chain_recomputes_from_the_csv_alone(as_auditor: Any, history: Any) -> None:
    """The third party's check: rebuild each row's canonical content from its cells."""
    rows = csv_rows(csv_body(export_post(as_auditor, "csv")))
    ints = {"unit_id", "seq", "recorded_by_id", "component_id", "cylinder",
            "work_order_id", "corrects_id"}  # fmt: skip
    floats = {"hour_meter", "water_ml", "value", "low_limit", "high_limit", "dp_before_bar"}

    def parse(name: str, cell: str) -> object:
        if name in ints | floats | {"passed"}:
            if cell == "":
                return None
            return {"true": True, "false": False}.get(cell) if name == "passed" else (
                int(cell) if name in ints else float(cell))  # fmt: skip
        return cell[1:] if cell.startswith("'") else cell

    prev = "0" * 64
    for row in rows:
        content = {name: parse(name, row[name]) for name in CONTENT_FIELDS}
        for name in HASHED_WHEN_SET:  # hashed only where set (the manifest says which)
            if content[name] == "":
                del content[name]
        assert row["prev_hash"] == prev
        assert entry_hash(content=content, prev_hash=prev) == row["hash"]
        assert hashlib.sha256(canonical_bytes(content) + prev.encode()).hexdigest() == row["hash"]
        prev = row["hash"]


def test_filters_by_unit_and_date_range(
    as_auditor: Any, history: Any, site: Any, unit_class: Any, mechanic: Any, add_events: Any
) -> None:
    other = f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    add_events(other, mechanic, 2)
    assert len(csv_rows(csv_body(export_post(as_auditor, "csv")))) == 6
    assert len(csv_rows(csv_body(export_post(as_auditor, "csv", unit="N-002")))) == 2
    day = (f.NOW - timedelta(days=1)).date().isoformat()
    rows = csv_rows(csv_body(export_post(as_auditor, "csv", unit="N-001", date_from=day)))
    assert [r["seq"] for r in rows] == ["3", "4"]
    rows = csv_rows(csv_body(export_post(as_auditor, "csv", date_to=day)))
    assert len(rows) == 3 + 2 - 0  # everything up to yesterday: N-001 seq 1-3 and N-002's two


def test_entries_appended_during_an_export_stay_out_of_it(
    as_auditor: Any, history: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    response = export_post(as_auditor, "csv")
    add_events(unit, mechanic, 1)  # arrives after the heads were noted, before the rows stream
    rows = csv_rows(csv_body(response))
    assert len(rows) == 4
    assert manifest_of(as_auditor, response)["units"][0]["chain_head"]["seq"] == 4


def test_xlsx_opens_with_openpyxl_and_matches_its_manifest(as_auditor: Any, history: Any) -> None:
    response = export_post(as_auditor, "xlsx")
    data = b"".join(response.streaming_content)
    manifest = manifest_of(as_auditor, response)
    assert manifest["sha256"] == hashlib.sha256(data).hexdigest()
    book = openpyxl.load_workbook(io.BytesIO(data), read_only=True)
    assert book.sheetnames == ["Service history", "Units", "Manifest"]
    rows = list(book["Service history"].iter_rows(values_only=True))
    header, body = rows[0], rows[1:]
    assert len(body) == manifest["row_count"] == 4
    last = dict(zip(header, body[-1], strict=True))
    assert last["Notes"] == '\'=HYPERLINK("http://example.test")'  # text, not a formula
    assert last["Measured value"] == 4.75 and last["Within limits"] is True
    units = list(book["Units"].iter_rows(values_only=True))
    assert units[0][:6] == ("Site", "Fleet number", "Make", "Model", "Serial number", "Year")
    assert units[1][1] == "N-001"


def test_xlsx_is_a_sheet_people_read(as_auditor: Any, history: Any, unit: Any) -> None:
    """Read back with openpyxl (the outside reference for the OOXML format, ECMA-376): worded
    headers, real date and number cells, a frozen header row, a filter, widths, and the
    manifest on its own sheet mapping each header to the CSV's column name."""
    response = export_post(as_auditor, "xlsx")
    book = openpyxl.load_workbook(io.BytesIO(b"".join(response.streaming_content)))
    for sheet in book.worksheets:
        assert sheet.freeze_panes == "A2", sheet.title
        assert sheet.auto_filter.ref and sheet.auto_filter.ref.startswith("A1:"), sheet.title
        assert all(cell.font.b for cell in sheet[1] if cell.value), sheet.title
    history_sheet = book["Service history"]
    last = history_sheet.cell(1, history_sheet.max_column)
    assert last.value  # the filter spans every worded column and every row (4 entries)
    assert history_sheet.auto_filter.ref == f"A1:{last.column_letter}5"
    header = [cell.value for cell in history_sheet[1]]
    assert not [h for h in header if "_" in str(h)]  # words, not snake_case
    assert {"Fleet number", "Performed (UTC)", "Hour meter (h)", "What was done"} <= set(header)
    assert history_sheet.column_dimensions["A"].width >= len("Site")
    cells = dict(zip(header, history_sheet[5], strict=True))
    performed = cells["Performed (UTC)"]
    assert performed.is_date and performed.data_type == "d"  # a date cell, not text
    assert performed.value == datetime(2026, 6, 15, 12, 0)  # f.NOW in UTC, as the CSV says
    assert cells["Recorded (UTC)"].is_date
    assert cells["Hour meter (h)"].value == 1234.5 and cells["Hour meter (h)"].data_type == "n"
    units = book["Units"]
    unit_header = [cell.value for cell in units[1]]
    in_service = units.cell(2, unit_header.index("In service since") + 1)
    assert in_service.is_date and in_service.value.date() == unit.in_service_on
    manifest = {row[0]: row[1] for row in book["Manifest"].iter_rows(values_only=True) if row[0]}
    assert manifest["Export ID"] == int(response["X-Fleetfuel-Export"])
    assert isinstance(manifest["Made (UTC)"], datetime)
    assert manifest["Performed (UTC)"] == "performed_at" and manifest["Entry hash (SHA-256)"] == (
        "hash"
    )
    assert set(CONTENT_FIELDS) <= set(manifest.values())


def test_printable_record_breaks_page_per_unit(
    as_auditor: Any, history: Any, site: Any, unit_class: Any, mechanic: Any, add_events: Any
) -> None:
    f.unit_make(site=site, unit_class=unit_class, fleet_number="N-002")
    response = export_post(as_auditor, "print")
    html = response.content.decode()
    assert response.status_code == 200
    assert "@media print" in html and "page-break-after: always" in html
    assert html.count('<section class="print-unit">') == 2
    assert html.count('class="entry"') == 4
    log = ExportLog.objects.get()
    assert log.row_count == 4 and log.sha256 == hashlib.sha256(response.content).hexdigest()


def test_manifest_of_an_unfinished_export_is_refused(as_auditor: Any, history: Any) -> None:
    response = export_post(as_auditor, "csv")  # not read yet: the stream has not run
    pk = int(response["X-Fleetfuel-Export"])
    assert as_auditor.get(reverse("pages:export_manifest", args=[pk])).status_code == 409
    csv_body(response)
    assert as_auditor.get(reverse("pages:export_manifest", args=[pk])).status_code == 200


def test_export_history_command_writes_file_and_manifest(
    tmp_path: Path, history: Any, unit: Any
) -> None:
    out = tmp_path / "n001.csv"
    call_command(
        "export_history", "--format", "csv", "--unit", "N-001", "--site", "North Depot",
        "--from", "2026-01-01", "--to", "2026-12-31", "--out", str(out), stdout=io.StringIO(),
    )  # fmt: skip
    manifest = json.loads(Path(f"{out}.manifest.json").read_text())
    assert manifest["sha256"] == hashlib.sha256(out.read_bytes()).hexdigest()
    assert manifest["row_count"] == 4 == len(csv_rows(out.read_bytes()))
    assert manifest["filters"]["units"] == ["N-001"] and manifest["file_name"] == "n001.csv"
    assert ExportLog.objects.get().via == "command"


def test_export_history_command_xlsx(tmp_path: Path, history: Any) -> None:
    out = tmp_path / "all.xlsx"
    call_command("export_history", "--format", "xlsx", "--out", str(out), stdout=io.StringIO())
    manifest = json.loads(Path(f"{out}.manifest.json").read_text())
    assert manifest["sha256"] == hashlib.sha256(out.read_bytes()).hexdigest()
    book = openpyxl.load_workbook(out, read_only=True)
    rows = list(book["Service history"].iter_rows(values_only=True))
    assert len(rows) == 1 + manifest["row_count"] == 5


def test_export_history_command_refuses_unknown_unit(tmp_path: Path, history: Any) -> None:
    with pytest.raises(CommandError, match="NOPE"):
        call_command(
            "export_history", "--format", "csv", "--unit", "NOPE", "--out", str(tmp_path / "x")
        )
    assert not ExportLog.objects.exists()


def test_disposed_units_history_stays_exportable(as_auditor: Any, history: Any, unit: Any) -> None:
    unit.disposed_on = date(2026, 6, 30)
    unit.save()
    rows = csv_rows(csv_body(export_post(as_auditor, "csv", unit="N-001")))
    assert len(rows) == 4


def test_auditor_can_export_and_it_is_logged(
    as_auditor: Any, auditor: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 2)
    response = as_auditor.post(reverse("pages:export"), {"format": "csv", "unit": "N-001"})
    assert response.status_code == 200
    b"".join(response.streaming_content)
    log = ExportLog.objects.get()
    assert log.requested_by == auditor and log.row_count == 2 and len(log.sha256) == 64
    assert log.filters["units"] == ["N-001"]


def test_export_needs_csrf_token(client: Any, auditor: Any) -> None:
    client.handler.enforce_csrf_checks = True
    client.force_login(auditor)
    assert client.post(reverse("pages:export"), {"format": "csv"}).status_code == 403


def test_an_auditor_cannot_fetch_another_persons_manifest(
    client: Any, manager: Any, auditor: Any, unit: Any, mechanic: Any, add_events: Any
) -> None:
    add_events(unit, mechanic, 1)
    client.force_login(manager)
    b"".join(client.post(reverse("pages:export"), {"format": "csv"}).streaming_content)
    log = ExportLog.objects.get()
    client.force_login(auditor)
    assert client.get(reverse("pages:export_manifest", args=[log.pk])).status_code == 404
    assert log.sha256 not in client.get(reverse("ledger:exports")).content.decode()


def _export_by(client: Any, user: Any, **filters: str) -> ExportLog:
    client.force_login(user)
    response = client.post(reverse("pages:export"), {"format": "csv", **filters})
    b"".join(response.streaming_content)
    return ExportLog.objects.get(pk=int(response["X-Fleetfuel-Export"]))


def test_an_export_records_the_sites_it_covered(
    client: Any, manager: Any, unit: Any, other_site: Any, unit_class: Any, mechanic: Any
) -> None:
    south = f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-001")
    events_add(unit, mechanic, 1)
    events_add(south, mechanic, 1)
    everything = _export_by(client, manager)
    north_only = _export_by(client, manager, unit="N-001")
    assert set(everything.sites.values_list("name", flat=True)) == {"North Depot", "South Depot"}
    assert list(north_only.sites.values_list("name", flat=True)) == ["North Depot"]


def test_a_one_depot_manager_sees_only_exports_wholly_within_their_depot(
    client: Any, manager: Any, site: Any, unit: Any, other_site: Any, unit_class: Any,
    mechanic: Any,
) -> None:  # fmt: skip
    south = f.unit_make(site=other_site, unit_class=unit_class, fleet_number="S-001")
    events_add(unit, mechanic, 1)
    events_add(south, mechanic, 1)
    everything = _export_by(client, manager)  # both depots: every unit's serial and head
    south_only = _export_by(client, manager, unit="S-001")
    north_manager = f.user_make("manager", username="nora", sites=[site])
    north_own = _export_by(client, north_manager)
    assert list(north_own.sites.values_list("name", flat=True)) == ["North Depot"]
    client.force_login(north_manager)
    for log in (everything, south_only):
        url = reverse("pages:export_manifest", args=[log.pk])
        assert client.get(url).status_code == 404, url
    assert client.get(reverse("pages:export_manifest", args=[north_own.pk])).status_code == 200
    page = client.get(reverse("ledger:exports")).content.decode()
    assert north_own.sha256 in page
    assert everything.sha256 not in page and south_only.sha256 not in page
    # The manager of every depot still sees all three.
    client.force_login(manager)
    page = client.get(reverse("ledger:exports")).content.decode()
    assert all(log.sha256 in page for log in (everything, south_only, north_own))
