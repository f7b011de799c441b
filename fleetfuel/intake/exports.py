"""Every kind written out in the import layouts (``export_data``), and the empty templates
(CSV and XLSX) a shop fills in. Values are SI, times ISO 8601 in UTC with their offset."""

from __future__ import annotations

import csv
import io
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

import openpyxl

from .imports.kind import Layout
from .imports.layouts import LAYOUTS, ORDER


def cell_text(value: Any) -> str:
    if value is None:
        return ""
    if isinstance(value, datetime):
        return value.astimezone(UTC).isoformat()
    if isinstance(value, date):
        return value.isoformat()
    if isinstance(value, float):
        return repr(value)
    return str(value)


def layout_header(layout: Layout) -> list[str]:
    return [c.header for c in layout.columns]


def kind_export(*, layout: Layout, path: Path) -> int:
    """Write every row of one kind to ``path`` (CSV, UTF-8); returns the number of rows.
    A kind without rows writes no file (a header alone is refused by the import)."""
    keys = [c.key for c in layout.columns]
    count = 0
    with path.open("w", newline="", encoding="utf-8") as out:
        writer = csv.writer(out)
        writer.writerow(layout_header(layout))
        for row in layout.rows():
            writer.writerow([cell_text(row.get(k)) for k in keys])
            count += 1
    if count == 0:
        path.unlink()
    return count


def data_export(*, out_dir: Path) -> dict[str, int]:
    """Every kind with rows, one ``<kind>.csv`` each; returns rows per kind."""
    out_dir.mkdir(parents=True, exist_ok=True)
    return {kind: kind_export(layout=LAYOUTS[kind], path=out_dir / f"{kind}.csv") for kind in ORDER}


def template_csv(*, layout: Layout) -> bytes:
    buffer = io.StringIO()
    csv.writer(buffer).writerow(layout_header(layout))
    return buffer.getvalue().encode("utf-8")


def template_xlsx(*, layout: Layout) -> bytes:
    book = openpyxl.Workbook(write_only=True)
    sheet = book.create_sheet(layout.kind)
    sheet.append(layout_header(layout))
    buffer = io.BytesIO()
    book.save(buffer)
    return buffer.getvalue()
