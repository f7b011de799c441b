"""The service history as a workbook a person reads: XLSX.

The CSV is the file a checker recomputes the chain from (machine column names, canonical text);
the workbook holds the same rows for people: headers in words, times and dates as date cells
(UTC, to the second; a spreadsheet keeps no time zone and no microseconds), numbers as number
cells, column widths, a frozen header row and a filter on every sheet. Its "Manifest" sheet
says what was exported and maps each worded header to its column name in the CSV and the
manifest. Written in openpyxl's write-only mode: constant memory whatever the row count.
"""

from __future__ import annotations

from collections.abc import Iterable, Mapping, Sequence
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

from openpyxl import Workbook
from openpyxl.cell import WriteOnlyCell
from openpyxl.styles import Alignment, Font
from openpyxl.utils import get_column_letter
from openpyxl.worksheet._write_only import WriteOnlyWorksheet

from .exports import HEADERS, UNIT_HEADERS, XLSX_MAX_ROWS, cell_escape, unit_sheet_rows
from .models import ExportLog

# The machine column names in words, the unit in brackets. A column without an entry here
# (one added later) gets its name with the underscores turned to spaces.
HEADER_WORDS = {
    "site": "Site",
    "fleet_number": "Fleet number",
    "make": "Make",
    "model": "Model",
    "serial_number": "Serial number",
    "year": "Year",
    "owner": "Owner",
    "tire_size": "Tire size",
    "event_id": "Entry ID",
    "seq": "Entry no. in unit's chain",
    "performed_at": "Performed (UTC)",
    "kind": "Kind (code)",
    "nature": "What was done",
    "mechanic": "Recorded by",
    "hour_meter": "Hour meter (h)",
    "component_kind": "Component",
    "cylinder": "Cylinder",
    "part_number": "Part number",
    "old_serial": "Serial removed",
    "new_serial": "Serial fitted",
    "parts_used": "Parts used",
    "water_ml": "Water drained (mL)",
    "water_appearance": "Water appearance",
    "measurement_name": "Measurement",
    "value": "Measured value",
    "low_limit": "Low limit",
    "high_limit": "High limit",
    "passed": "Within limits",
    "dp_before_bar": "Filter dP before (bar)",
    "notes": "Notes",
    "reason": "Reason (override or correction)",
    "corrects_id": "Corrects entry ID",
    "work_order": "Work order",
    "work_order_id": "Work order ID",
    "component_id": "Component ID",
    "recorded_by_id": "Recorded by (user ID)",
    "recorded_at": "Recorded (UTC)",
    "unit_id": "Unit ID",
    "prev_hash": "Previous entry's hash",
    "hash": "Entry hash (SHA-256)",
    "in_service_on": "In service since",
    "disposed_on": "Disposed of on",
    "head_seq": "Last entry no.",
    "head_hash": "Last entry's hash",
    "scheduled_task": "Scheduled task",
    "due_on": "Due on",
    "due_hours": "Due at hour meter (h)",
    "status": "Status",
}
# Columns a person reads wider than their header (characters); the others fit their header.
WIDTHS = {
    "performed_at": 20, "recorded_at": 20, "nature": 30, "mechanic": 18, "parts_used": 24,
    "notes": 40, "reason": 32, "measurement_name": 20, "prev_hash": 24, "hash": 24,
    "head_hash": 24, "scheduled_task": 40, "site": 16, "make": 14, "model": 14,
}  # fmt: skip
MIN_WIDTH, MAX_WIDTH = 9, 40
# Columns the manifest holds as ISO text: written back as date cells.
ISO_DATE_COLUMNS = frozenset({"in_service_on", "disposed_on", "due_on"})
HISTORY_SHEET, UNITS_SHEET, MANIFEST_SHEET = "Service history", "Units", "Manifest"
BOLD = Font(bold=True)
WRAP = Alignment(wrap_text=True, vertical="top")


def header_words(name: str) -> str:
    return HEADER_WORDS.get(name) or name.replace("_", " ").capitalize()


def column_width(name: str) -> int:
    return min(MAX_WIDTH, max(MIN_WIDTH, len(header_words(name)) + 2, WIDTHS.get(name, 0)))


def xlsx_cell(value: object) -> object:
    """A data cell: a time as a UTC date cell, a date as a date cell, numbers and true/false
    as they are, text escaped against formulas (the same rule as the CSV)."""
    if isinstance(value, str):
        return cell_escape(value)
    if isinstance(value, datetime):
        # Excel has no time zone: UTC, said in the header; a naive time is taken as UTC.
        moment = value.astimezone(UTC) if value.tzinfo else value
        return moment.replace(tzinfo=None)
    return value


def _sheet_start(book: Workbook, title: str, names: Sequence[str]) -> WriteOnlyWorksheet:
    """A sheet with its worded, bold header row frozen and its columns sized."""
    sheet = book.create_sheet(title)
    sheet.freeze_panes = "A2"  # before the first row: write-only mode writes the view first
    for index, name in enumerate(names, start=1):
        sheet.column_dimensions[get_column_letter(index)].width = column_width(name)
    _bold_row(sheet, [header_words(name) for name in names])
    return sheet


def _bold_row(sheet: WriteOnlyWorksheet, texts: Sequence[str]) -> None:
    cells = [WriteOnlyCell(sheet, text) for text in texts]
    for cell in cells:
        cell.font = BOLD
    sheet.append(cells)


def _sheet_finish(sheet: WriteOnlyWorksheet, columns: int, rows: int) -> None:
    """A filter over the header and every row (set last: written after the rows)."""
    sheet.auto_filter.ref = f"A1:{get_column_letter(columns)}{max(rows, 1)}"


def _history_sheets(book: Workbook, rows: Iterable[tuple[object, ...]]) -> int:
    """The rows on "Service history", continued on "Service history (2)"... past the limit."""
    sheet, sheet_rows, sheets, count = None, XLSX_MAX_ROWS, 0, 0
    for row in rows:
        if sheet_rows >= XLSX_MAX_ROWS:
            if sheet is not None:
                _sheet_finish(sheet, len(HEADERS), sheet_rows)
            sheets += 1
            title = HISTORY_SHEET + (f" ({sheets})" if sheets > 1 else "")
            sheet, sheet_rows = _sheet_start(book, title, HEADERS), 1
        assert sheet is not None
        sheet.append([xlsx_cell(value) for value in row])
        sheet_rows += 1
        count += 1
    if sheet is None:
        sheet = _sheet_start(book, HISTORY_SHEET, HEADERS)
    _sheet_finish(sheet, len(HEADERS), sheet_rows)
    return count


def _units_sheet(book: Workbook, units: Iterable[Mapping[str, Any]]) -> None:
    """Each unit's identification and chain head, one row per scheduled task."""
    sheet = _sheet_start(book, UNITS_SHEET, UNIT_HEADERS)
    written = 1
    for unit in units:
        for row in unit_sheet_rows(unit):
            sheet.append(
                [
                    date.fromisoformat(value)
                    if name in ISO_DATE_COLUMNS and isinstance(value, str)
                    else xlsx_cell(value)
                    for name, value in zip(UNIT_HEADERS, row, strict=True)
                ]
            )
            written += 1
    _sheet_finish(sheet, len(UNIT_HEADERS), written)


def manifest_rows(log: ExportLog) -> list[tuple[object, ...]]:
    """What the export is, as (what, value) rows, then each column's header and its name."""
    manifest = log.manifest
    filters = manifest.get("filters", {})
    rows: list[tuple[object, ...]] = [
        ("Export ID", log.pk),
        ("File", log.file_name),
        ("Made (UTC)", datetime.fromisoformat(manifest["generated_at"])),
        ("Made by", manifest.get("generated_by", "")),
        ("Site", filters.get("site") or "all of the exporter's sites"),
        ("Units", ", ".join(filters.get("units") or []) or "all"),
        ("From", date.fromisoformat(filters["from"]) if filters.get("from") else "the start"),
        ("To", date.fromisoformat(filters["to"]) if filters.get("to") else "the export"),
        ("Dates", filters.get("dates", "")),
        ("Units in the export", len(manifest.get("units", []))),
        (
            "Digest and row count",
            "In the manifest (JSON) downloaded beside this file: a file cannot hold its own "
            "SHA-256.",
        ),
        (
            "Checking the chain",
            "Recompute the hashes from the CSV export of the same entries: it holds every "
            "hashed field in its canonical form. This workbook shows times to the second.",
        ),
        ("Hashed fields", ", ".join(manifest.get("hashed_fields", []))),
        ("Genesis (first previous hash)", manifest.get("genesis", "")),
        ("Canonical form", manifest.get("canonical_form", "")),
        ("Formula escaping", manifest.get("escaping", "")),
        (),
        ("Column header", "Column in the CSV and manifest", "Sheet"),
    ]
    rows += [(header_words(name), name, HISTORY_SHEET) for name in HEADERS]
    rows += [(header_words(name), name, UNITS_SHEET) for name in UNIT_HEADERS]
    return rows


def _manifest_sheet(book: Workbook, log: ExportLog) -> None:
    sheet = book.create_sheet(MANIFEST_SHEET)
    sheet.freeze_panes = "A2"
    for letter, width in (("A", 30), ("B", 90), ("C", 16)):
        sheet.column_dimensions[letter].width = width
    _bold_row(sheet, ["What", "Value"])
    rows = manifest_rows(log)
    for row in rows:
        cells = []
        for value in row:
            cell = WriteOnlyCell(sheet, xlsx_cell(value))
            cell.alignment = WRAP
            cells.append(cell)
        sheet.append(cells)
    _sheet_finish(sheet, 2, 1 + rows.index(()))  # the filter covers the (what, value) part


def xlsx_write(*, path: Path, rows: Iterable[tuple[object, ...]], log: ExportLog) -> int:
    """Write the workbook; return the number of history rows.

    Sheets: "Service history" (the rows), "Units" (each unit's identification and scheduled
    tasks with due dates, from the manifest) and "Manifest" (what was exported, the columns).
    """
    book = Workbook(write_only=True)
    count = _history_sheets(book, rows)
    _units_sheet(book, log.manifest["units"])
    _manifest_sheet(book, log)
    book.save(path)
    return count
