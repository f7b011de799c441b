"""Reading an import file one row at a time: CSV as spreadsheets write it, or XLSX.

CSV: UTF-8 with or without a byte-order mark, ',' or ';' between columns (a ';' file takes
the decimal comma, as spreadsheets in those locales write it). Anything else is refused with
what was found. XLSX: openpyxl in read-only mode, the first sheet; a formula cell is a row
error. Neither reader holds the whole file in memory.
"""

from __future__ import annotations

import codecs
import csv
import io
from collections.abc import Iterator
from contextlib import contextmanager
from dataclasses import dataclass
from pathlib import Path
from typing import Any

import openpyxl
from openpyxl.utils import get_column_letter

MAX_BYTES = 50 * 1024 * 1024  # larger files are refused by size, the limit named
SNIFF_BYTES = 64 * 1024


class FileRefused(Exception):
    """The whole file is refused; the message says what was found."""


class FormulaCell:
    """A formula where a value belongs (XLSX): refused as a row error, never evaluated."""

    def __init__(self, formula: str) -> None:
        self.formula = formula


@dataclass
class Sheet:
    name: str
    header: list[str]
    rows: Iterator[tuple[int, list[Any]]]  # (line number in the file, cells)
    decimal_comma: bool


def size_refusal(size: int, *, max_bytes: int = MAX_BYTES) -> str | None:
    if size <= max_bytes:
        return None
    return (
        f"the file is {size / 1024 / 1024:,.1f} MB; the limit is "
        f"{max_bytes / 1024 / 1024:,.0f} MB (split it into several files)"
    )


def _size_check(path: Path, *, max_bytes: int) -> None:
    refusal = size_refusal(path.stat().st_size, max_bytes=max_bytes)
    if refusal:
        raise FileRefused(refusal)


def _sniff_refusal(head: bytes) -> str | None:
    """What the start of a '.csv' file shows when it is not UTF-8 text, or None."""
    if head.startswith(b"PK\x03\x04"):
        return "a ZIP archive (an XLSX workbook?), not CSV text: save it as .xlsx or as CSV UTF-8"
    if head.startswith(b"\xd0\xcf\x11\xe0"):
        return "an old Excel (.xls) workbook, not CSV text: save it as CSV UTF-8 or .xlsx"
    if head.startswith(b"%PDF"):
        return "a PDF document, not CSV text"
    if head.startswith((codecs.BOM_UTF16_LE, codecs.BOM_UTF16_BE)):
        return 'UTF-16 text ("Unicode text"); save it as CSV UTF-8'
    if b"\x00" in head:
        return "a binary file (it holds NUL bytes), not CSV text"
    decoder = codecs.getincrementaldecoder("utf-8")()
    try:
        decoder.decode(head, final=False)
    except UnicodeDecodeError as exc:
        byte = head[exc.start]
        return (
            f"text that is not UTF-8 (byte 0x{byte:02x} at offset {exc.start}, as Windows-1252 "
            "or ISO 8859-1 write accented letters); save it as CSV UTF-8"
        )
    return None


@contextmanager
def sheet_open(path: Path, *, max_bytes: int = MAX_BYTES) -> Iterator[Sheet]:
    """Open ``path`` (.csv or .xlsx) as a Sheet whose rows stream. Raises FileRefused."""
    _size_check(path, max_bytes=max_bytes)
    suffix = path.suffix.lower()
    if suffix == ".csv":
        with path.open("rb") as raw:
            refusal = _sniff_refusal(raw.read(SNIFF_BYTES))
            if refusal:
                raise FileRefused(refusal)
            raw.seek(0)
            yield _csv_sheet(path.name, raw)
    elif suffix == ".xlsx":
        try:
            book = openpyxl.load_workbook(path, read_only=True, data_only=False)
        except Exception as exc:  # openpyxl raises many kinds on a damaged file
            raise FileRefused(f"not a readable XLSX workbook ({type(exc).__name__})") from None
        try:
            yield _xlsx_sheet(path.name, book.worksheets[0])
        finally:
            book.close()
    else:
        raise FileRefused(f"a {suffix or 'nameless'} file; give .csv or .xlsx")


def _csv_sheet(name: str, raw: Any) -> Sheet:
    text = io.TextIOWrapper(raw, encoding="utf-8-sig", newline="")
    first = text.readline()
    if not first.strip():
        return Sheet(name=name, header=[], rows=iter(()), decimal_comma=False)
    delimiter = ";" if first.count(";") > first.count(",") else ","
    header = next(csv.reader([first], delimiter=delimiter))
    reader = csv.reader(text, delimiter=delimiter)

    def rows() -> Iterator[tuple[int, list[Any]]]:
        try:
            for cells in reader:
                yield reader.line_num + 1, cells
        except UnicodeDecodeError as exc:
            raise FileRefused(
                f"text that is not UTF-8 after line {reader.line_num + 1} "
                f"({exc.reason}); save it as CSV UTF-8"
            ) from None
        except csv.Error as exc:
            raise FileRefused(f"line {reader.line_num + 1}: not CSV ({exc})") from None

    return Sheet(
        name=name, header=[h.strip() for h in header], rows=rows(), decimal_comma=delimiter == ";"
    )


def _xlsx_sheet(name: str, sheet: Any) -> Sheet:
    cells_iter = sheet.iter_rows(values_only=False)
    header: list[str] = []
    for first in cells_iter:
        header = ["" if c.value is None else str(c.value).strip() for c in first]
        break
    while header and not header[-1]:
        header.pop()

    def rows() -> Iterator[tuple[int, list[Any]]]:
        for number, row in enumerate(cells_iter, start=2):
            values: list[Any] = []
            for cell in row:
                if getattr(cell, "data_type", None) == "f":
                    values.append(FormulaCell(str(cell.value)))
                else:
                    values.append(getattr(cell, "value", None))
            yield number, values

    return Sheet(name=name, header=header, rows=rows(), decimal_comma=False)


def xlsx_column_letter(index: int) -> str:
    return get_column_letter(index + 1)
