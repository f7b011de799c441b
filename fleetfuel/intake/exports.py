"""Every kind written out in the import layouts (``export_data``), and the empty templates
(CSV and XLSX) a shop fills in. Values are SI, times ISO 8601 in UTC with their offset."""

from __future__ import annotations

import csv
import io
from datetime import UTC, date, datetime
from pathlib import Path
from typing import Any

import openpyxl

from .imports.columns import Column
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


_TYPES = {
    "text": "text", "number": "number", "integer": "whole number",
    "datetime": "ISO 8601 time", "date": "ISO 8601 date", "choice": "one of",
}  # fmt: skip


_TABLE_HEAD = "| column | or | type | required | limits | note |\n|---|---|---|---|---|---|"


def _limits(column: Column) -> str:
    low, high = column.low, column.high
    if column.max_length:
        return f"at most {column.max_length} characters"
    if low is not None and high is not None:
        return f"{low:g} to {high:g}"
    return f"at least {low:g}" if low is not None else f"at most {high:g}" if high else ""


def layouts_markdown() -> str:
    """docs/import-layouts.md, written from the registry (``export_data --layouts-doc``)."""
    out = [
        "# Import layouts",
        "",
        "Written from `fleetfuel/intake/imports/layouts.py` by "
        "`python manage.py export_data --layouts-doc > docs/import-layouts.md`; a test keeps "
        "the two the same. A file is CSV (UTF-8, with or without a byte-order mark; `,` or `;` "
        "between columns, a `;` file taking the decimal comma) or XLSX (the first sheet). "
        "The first row names the columns, in any order; optional columns may be left out. "
        "Times without an offset are read in the depot's time zone; the export writes UTC. "
        "Where a column has two names, the name says the unit and the value is converted "
        "(stored SI: litres, bar, mL, degC).",
        "",
    ]
    for kind in ORDER:
        layout = LAYOUTS[kind]
        out += [f"## {layout.title}: `{kind}.csv`", ""]
        if layout.note:
            out += [layout.note, ""]
        headers = {c.key: c.header for c in layout.columns}
        key = ", ".join(headers[k] for k in layout.key)
        out += [f"Natural key (a re-import updates, never duplicates): {key}.", "", _TABLE_HEAD]
        for c in layout.columns:
            kind_text = _TYPES[c.type] + (f": {', '.join(c.choices)}" if c.choices else "")
            alt = ", ".join(name for name, _ in c.alternatives)
            out.append(f"| `{c.header}` | {alt} | {kind_text} | {'yes' if c.required else ''} "
                       f"| {_limits(c)} | {c.note} |")  # fmt: skip
        out.append("")
    return "\n".join(out)
