"""Columns of an import layout, and how one cell becomes a value.

A column names its value once (``key``) and the headers it accepts: the first is the SI
header the export and the templates write (``litres``, ``bar``); the others carry their
conversion to SI (``us_gal``, ``psi``). Stored values are SI (services/units.py).
"""

from __future__ import annotations

import math
import re
from collections.abc import Callable
from dataclasses import dataclass
from datetime import date, datetime
from typing import Any

Convert = Callable[[float], float]


class CellError(ValueError):
    """A cell that cannot be read as its column's type; the message is the reason."""


@dataclass(frozen=True)
class Column:
    key: str
    header: str
    type: str = "text"  # text | number | integer | datetime | date | choice
    required: bool = True
    low: float | None = None  # in SI, inclusive
    high: float | None = None
    max_length: int | None = None
    choices: tuple[str, ...] = ()
    alternatives: tuple[tuple[str, Convert], ...] = ()
    note: str = ""  # for the documentation

    @property
    def headers(self) -> tuple[str, ...]:
        return (self.header, *(name for name, _ in self.alternatives))

    def convert_for(self, header: str) -> Convert | None:
        return dict(self.alternatives).get(header)


_INTEGER = re.compile(r"[+-]?[0-9]+")
_COMMA_FILE_HINT = " (this file has ',' between columns, so '.' is its decimal mark)"
_NUMBER = re.compile(r"[+-]?([0-9]+\.?[0-9]*|\.[0-9]+)([eE][+-]?[0-9]+)?")


def cell_blank(value: Any) -> bool:
    return value is None or (isinstance(value, str) and not value.strip())


def number_parse(value: Any, *, decimal_comma: bool) -> float:
    """A finite number from a cell: a spreadsheet's number, or text as the file's locale
    writes it (``1234.5``; ``1234,5`` or ``1.234,5`` where the decimal mark is a comma)."""
    if isinstance(value, bool):
        raise CellError(f"{value} is not a number")
    if isinstance(value, int | float):
        number = float(value)
    else:
        text = str(value).strip().replace("\u00a0", "").replace(" ", "")
        if decimal_comma and "," in text:
            text = text.replace(".", "").replace(",", ".")
        if text.lower().lstrip("+-") in ("nan", "inf", "infinity"):
            raise CellError(f"{str(value).strip()!r} is not a finite number")
        if not _NUMBER.fullmatch(text):
            hint = "" if decimal_comma else _COMMA_FILE_HINT
            raise CellError(f"{str(value).strip()!r} is not a number{hint}")
        number = float(text)
    if not math.isfinite(number):
        raise CellError(f"{value!r} is not a finite number")
    return number


def integer_parse(value: Any, *, decimal_comma: bool) -> int:
    if isinstance(value, float) and value.is_integer():
        return int(value)
    if isinstance(value, int) and not isinstance(value, bool):
        return value
    text = str(value).strip()
    if not _INTEGER.fullmatch(text):
        raise CellError(f"{text!r} is not a whole number")
    return int(text)


def datetime_parse(value: Any) -> datetime:
    """An ISO 8601 time (``2026-06-15T12:00:00+00:00``, ``2026-06-15 12:00``) or a
    spreadsheet's date-time cell. Without an offset it is read in the unit's (or the
    source's) depot time zone, later."""
    if isinstance(value, datetime):
        return value
    if isinstance(value, date):
        return datetime(value.year, value.month, value.day)
    text = str(value).strip()
    try:
        return datetime.fromisoformat(text.replace("Z", "+00:00") if text.endswith("Z") else text)
    except ValueError:
        raise CellError(
            f"{text!r} is not a date and time in ISO 8601 (e.g. 2026-06-15T07:30:00+01:00)"
        ) from None


def date_parse(value: Any) -> date:
    if isinstance(value, datetime):
        return value.date()
    if isinstance(value, date):
        return value
    text = str(value).strip()
    try:
        return date.fromisoformat(text)
    except ValueError:
        raise CellError(f"{text!r} is not a date in ISO 8601 (e.g. 2026-06-15)") from None


def cell_parse(column: Column, value: Any, *, header: str, decimal_comma: bool) -> Any:
    """The cell's value in SI, or None for a blank optional cell. Raises CellError."""
    if cell_blank(value):
        if column.required:
            raise CellError("a value is required")
        return "" if column.type in ("text", "choice") else None
    if column.type == "number":
        result: Any = number_parse(value, decimal_comma=decimal_comma)
        convert = column.convert_for(header)
        result = convert(result) if convert else result
        _range_check(column, result, header=header, convert=convert)
        return result
    if column.type == "integer":
        result = integer_parse(value, decimal_comma=decimal_comma)
        _range_check(column, result, header=header, convert=None)
        return result
    if column.type == "datetime":
        return datetime_parse(value)
    if column.type == "date":
        return date_parse(value)
    text = str(value).strip()
    if column.type == "choice" and text not in column.choices:
        raise CellError(f"{text!r} is not one of: {', '.join(column.choices)}")
    if column.max_length is not None and len(text) > column.max_length:
        raise CellError(f"longer than {column.max_length} characters")
    return text


def _range_check(column: Column, value: float, *, header: str, convert: Convert | None) -> None:
    unit = f" {column.header}" if convert else ""
    if column.low is not None and value < column.low:
        raise CellError(f"{value:g}{unit} is below the lowest allowed ({column.low:g}{unit})")
    if column.high is not None and value > column.high:
        raise CellError(f"{value:g}{unit} is above the highest allowed ({column.high:g}{unit})")
