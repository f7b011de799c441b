"""Files as they really arrive: spreadsheets' CSV dialects, XLSX, and what is refused whole."""

from __future__ import annotations

import codecs
import csv
from datetime import timedelta
from pathlib import Path
from typing import Any

import openpyxl
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from fleetfuel.fleet.models import Fueling, MeterReading
from fleetfuel.intake.exports import layouts_markdown, template_csv, template_xlsx
from fleetfuel.intake.imports.apply import ALL_OR_NOTHING, DRY_RUN, file_import
from fleetfuel.intake.imports.layouts import LAYOUTS, kind_from_name, layout_for
from fleetfuel.intake.imports.readers import MAX_BYTES
from tests import factories as f

NOW = f.NOW
T1 = (NOW - timedelta(days=2)).isoformat()
T2 = (NOW - timedelta(days=1)).isoformat()


def imported(path: Path, kind: str, mode: str = ALL_OR_NOTHING) -> Any:
    return file_import(path=path, layout=layout_for(kind=kind), mode=mode, now=NOW)


def test_utf8_with_bom_and_comma(unit: Any, tmp_path: Path) -> None:
    path = tmp_path / "readings.csv"
    n = unit.fleet_number
    text = f"unit,taken_at,hours\r\n{n},{T1},1000\r\n{n},{T2},1010\r\n"
    path.write_bytes(codecs.BOM_UTF8 + text.encode())
    result = imported(path, "readings")
    assert result.ok and result.counts["created"] == 2
    assert sorted(MeterReading.objects.values_list("hours", flat=True)) == [1000, 1010]


def test_semicolon_file_reads_the_decimal_comma(unit: Any, tmp_path: Path) -> None:
    # A spreadsheet saving CSV where the decimal mark is a comma separates columns with ';'.
    path = tmp_path / "fuelings.csv"
    path.write_text(f"unit;fueled_at;litres\n{unit.fleet_number};{T1};1.234,5\n", "utf-8")
    result = imported(path, "fuelings")
    assert result.ok, result.errors
    assert Fueling.objects.get().litres == 1234.5


def test_us_gallons_are_stored_in_litres(unit: Any, tmp_path: Path) -> None:
    path = tmp_path / "fuelings.csv"
    path.write_text(f"unit,fueled_at,us_gal\n{unit.fleet_number},{T1},100\n", "utf-8")
    assert imported(path, "fuelings").ok
    # NIST Handbook 44 Appendix C: 1 US gallon = 231 in3 = 3.785411784 L (exact).
    assert Fueling.objects.get().litres == pytest.approx(378.5411784)


@pytest.mark.parametrize(
    ("content", "found"),
    [
        (b"", "the file is empty; the first line must name the columns: unit, site, taken_at"),
        (b"unit,taken_at,hours\n", "the file has a header and no rows below it"),
        (b"unit,when,hours\nX,2026-01-01,1\n",
         "missing column(s) taken_at; unknown column(s) when; the readings layout has: "
         "unit, site, taken_at, hours, source"),
        (b"\x00\x01\x02binary\x00", "refused: a binary file (it holds NUL bytes), not CSV text"),
        (b"PK\x03\x04rest", "refused: a ZIP archive (an XLSX workbook?), not CSV text"),
        ("unit,taken_at,hours\nBÖ-1,2026-01-01,1\n".encode("cp1252"),
         "refused: text that is not UTF-8 (byte 0xd6 at offset 21"),
        (codecs.BOM_UTF16_LE + "unit,taken_at,hours\n".encode("utf-16-le"),
         "refused: UTF-16 text"),
    ],
    ids=["empty", "header-only", "wrong-columns", "binary", "zip", "windows-1252", "utf-16"],
)  # fmt: skip
def test_refused_whole_with_what_was_found(
    db: Any, tmp_path: Path, content: bytes, found: str
) -> None:
    path = tmp_path / "readings.csv"
    path.write_bytes(content)
    result = imported(path, "readings")
    assert result.file_error.startswith(found)
    assert not result.stored and MeterReading.objects.count() == 0


def test_a_file_over_the_size_limit_is_refused_naming_the_limit(db: Any, tmp_path: Path) -> None:
    path = tmp_path / "readings.csv"
    with path.open("wb") as out:  # 200 MB, sparse: nothing is written but the size
        out.truncate(200 * 1024 * 1024)
    result = imported(path, "readings")
    limit = MAX_BYTES // 1024 // 1024
    assert result.file_error == (
        f"refused: the file is 200.0 MB; the limit is {limit} MB (split it into several files)"
    )


def test_xlsx_rows_and_a_formula_cell(unit: Any, tmp_path: Path) -> None:
    book = openpyxl.Workbook()
    sheet = book.active
    sheet.append(["unit", "taken_at", "hours"])
    sheet.append([unit.fleet_number, NOW.replace(tzinfo=None) - timedelta(days=2), 1000])
    sheet.append([unit.fleet_number, NOW.replace(tzinfo=None) - timedelta(days=1), "=C2+10"])
    path = tmp_path / "readings.xlsx"
    book.save(path)
    result = imported(path, "readings", DRY_RUN)
    assert [str(e) for e in result.errors] == [
        "readings.xlsx line 3, column hours (C): a formula (=C2+10) where a value belongs: "
        "paste values"
    ]
    assert result.counts["created"] == 1


@pytest.mark.parametrize("kind", sorted(LAYOUTS))
def test_templates_carry_the_layouts_header(kind: str, tmp_path: Path) -> None:
    layout = layout_for(kind=kind)
    header = [c.header for c in layout.columns]
    assert template_csv(layout=layout).decode().strip().split(",") == header
    path = tmp_path / f"{kind}.xlsx"
    path.write_bytes(template_xlsx(layout=layout))
    book = openpyxl.load_workbook(path, read_only=True)
    assert [c.value for c in next(book.worksheets[0].iter_rows())] == header
    assert kind_from_name(file_name=f"2026-{kind}.xlsx") == kind


def test_the_layouts_doc_is_the_registry(db: Any) -> None:
    """docs/import-layouts.md is written from the registry; regenerate it when a layout
    changes (``manage.py export_data --layouts-doc > docs/import-layouts.md``)."""
    doc = (Path(__file__).parents[2] / "docs" / "import-layouts.md").read_text(encoding="utf-8")
    assert doc == layouts_markdown()


CELL = st.one_of(
    st.text(max_size=12),
    st.sampled_from(["", "nan", "-1", "1e400", "12,5", "2026-02-30", "T-1", ";", '"', "\r"]),
)


@settings(suppress_health_check=[HealthCheck.function_scoped_fixture], max_examples=40)
@given(rows=st.lists(st.lists(CELL, min_size=0, max_size=5), max_size=8))
def test_malformed_rows_are_each_refused_with_a_reason(
    unit: Any, tmp_path: Path, rows: list[list[str]]
) -> None:
    """Whatever the rows hold, the dry run ends; every row is counted once (stored or
    refused), and each refusal names its line and says why (property-based, hypothesis)."""
    path = tmp_path / "fuelings.csv"
    with path.open("w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out)
        writer.writerow(["unit", "fueled_at", "litres", "source"])
        writer.writerows(rows)
    result = imported(path, "fuelings", DRY_RUN)
    if result.file_error:
        assert result.file_error.startswith(("the file has a header and no rows", "refused: "))
        return
    filled = sum(1 for row in rows if any(cell.strip() for cell in row))
    assert sum(result.counts.values()) == filled  # no row dropped
    assert result.counts["refused"] == len(result.errors)
    for error in result.errors:
        assert error.line >= 2 and error.reason
    assert Fueling.objects.count() == 0
