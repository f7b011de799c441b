"""The service history as files a third party can read and check: CSV (XLSX: xlsx.py).

Rows come from one query ordered by unit and seq, read in chunks through a server-side cursor
(``.iterator``), so an export of a million entries holds a chunk in memory, not the table.
Every hashed field is a column of its own, written in its canonical form (services/ledger.py),
so the chain can be recomputed from the file; text cells that a spreadsheet would take for a
formula are escaped with a leading single quote.
"""

from __future__ import annotations

import csv
import hashlib
import io
from collections.abc import Callable, Iterable, Iterator, Mapping
from decimal import Decimal
from pathlib import Path
from typing import Any

from django.db.models import QuerySet

from services.ledger import canonical_value

from .actions import CONTENT_FIELDS
from .effective import CORRECTION, EFFECTIVE_KIND, SUPERSEDED_BY
from .models import ServiceEvent

CHUNK = 2000
FLUSH_BYTES = 64 * 1024
XLSX_MAX_ROWS = 1_048_576  # Excel's sheet limit, the header row included

# Text starting with one of these is taken for a formula by spreadsheet programs (OWASP CSV
# injection); a leading single quote is escaped too, so "drop one leading quote" undoes it.
FORMULA_TRIGGERS = ("=", "+", "-", "@", "\t", "\r", "'")

KIND_LABELS = dict(ServiceEvent.Kind.choices)
CORRECTION_SUFFIX = " (correction)"

# The corrected view beside the recorded rows (fleetfuel/ledger/effective.py): every row is
# exported, so the chain can be checked; ``in_effect`` marks the rows that make the corrected
# view, ``effective_kind`` the kind each stands for, ``superseded_by`` the correction that took
# a row's place (its own values are the original, kept).
VIEW_ANNOTATIONS = {"effective_kind": EFFECTIVE_KIND, "superseded_by": SUPERSEDED_BY}

# (column, values() lookup). Unit identification and what was done follow 49 CFR 396.3(b);
# each hashed field (CONTENT_FIELDS) is a column under its own name; the chain fields close it.
COLUMNS: tuple[tuple[str, str | None], ...] = (
    ("site", "unit__site__name"),
    ("fleet_number", "unit__fleet_number"),
    ("make", "unit__make"),
    ("model", "unit__model"),
    ("serial_number", "unit__serial_number"),
    ("year", "unit__year"),
    ("owner", "unit__owner"),
    ("tire_size", "unit__tire_size"),
    ("event_id", "id"),
    ("seq", "seq"),
    ("performed_at", "performed_at"),
    ("kind", "kind"),
    ("nature", None),  # the effective kind's label; a correction's ends " (correction)"
    ("mechanic", None),  # who recorded it, by name
    ("hour_meter", "hour_meter"),
    ("component_kind", "component_kind"),
    ("cylinder", "cylinder"),
    ("part_number", "part_number"),
    ("old_serial", "old_serial"),
    ("new_serial", "new_serial"),
    ("parts_used", "parts_used"),
    ("water_ml", "water_ml"),
    ("water_appearance", "water_appearance"),
    ("measurement_name", "measurement_name"),
    ("value", "value"),
    ("low_limit", "low_limit"),
    ("high_limit", "high_limit"),
    ("passed", "passed"),
    ("dp_before_bar", "dp_before_bar"),
    ("notes", "notes"),
    ("reason", "reason"),
    ("corrects_id", "corrects_id"),
    ("corrected_kind", "corrected_kind"),
    ("effective_kind", "effective_kind"),
    ("in_effect", None),  # true when no later correction took the row's place
    ("superseded_by", "superseded_by"),
    ("work_order", "work_order__number"),
    ("work_order_id", "work_order_id"),
    ("component_id", "component_id"),
    ("recorded_by_id", "recorded_by_id"),
    ("recorded_at", "recorded_at"),
    ("unit_id", "unit_id"),
    ("prev_hash", "prev_hash"),
    ("hash", "hash"),
)
HEADERS = tuple(name for name, _ in COLUMNS)
_LOOKUPS = tuple(lookup for _, lookup in COLUMNS if lookup) + (
    "recorded_by__username",
    "recorded_by__first_name",
    "recorded_by__last_name",
)
assert set(CONTENT_FIELDS) <= set(HEADERS), "every hashed field must be exported"


def cell_escape(text: str) -> str:
    """Neutralise a spreadsheet formula: prefix a single quote."""
    return "'" + text if text.startswith(FORMULA_TRIGGERS) else text


def float_format(*, value: float) -> str:
    """A float cell: whole values as integer digits, others in shortest round-trip form.

    Written as PostgreSQL's float8 output writes them (the COPY export, csv_copy.py, must give
    the same bytes). The two differ from Python's ``repr`` only from 1e15 to 1e16, where
    PostgreSQL switches to an exponent one decade earlier (``1.0000000000000005e+15``, not
    ``1000000000000000.5``); there the digits are repr's, in the exponent form. Either text
    parses back to the same float, so the hash check reads both alike.
    """
    if value.is_integer():
        return str(int(value))
    text = repr(value)
    if 1e15 <= abs(value) < 1e16 and "e" not in text:
        return f"{Decimal(text):e}"
    return text


def cell_text(value: object) -> str:
    """A CSV cell: canonical numbers and times, true/false, empty for none, escaped text.

    Branches on the exact type, most frequent first: it runs once per cell.
    """
    if value is None:
        return ""
    kind = type(value)
    if kind is str:
        return "'" + value if value.startswith(FORMULA_TRIGGERS) else value
    if kind is int:
        return str(value)
    if kind is float:
        return float_format(value=value)
    if kind is bool:
        return "true" if value else "false"
    if isinstance(value, str):
        return cell_escape(value)
    return str(canonical_value(value))


def mechanic_name(*, first_name: str, last_name: str, username: str) -> str:
    """The person who recorded an entry, as exports and the history show them: the full name
    (as ``User.get_full_name``), else the user name."""
    return f"{first_name} {last_name}".strip() or username


def _mechanic(row: Mapping[str, Any]) -> str:
    return mechanic_name(
        first_name=row["recorded_by__first_name"],
        last_name=row["recorded_by__last_name"],
        username=row["recorded_by__username"],
    )


def nature_text(*, kind: str, effective_kind: str | None) -> str:
    """The ``nature`` cell: the label of the kind a row stands for, a correction's marked."""
    shown = effective_kind or kind
    label = KIND_LABELS.get(shown, shown)
    return label + CORRECTION_SUFFIX if kind == CORRECTION else label


def view_annotate(events: QuerySet[ServiceEvent]) -> QuerySet[ServiceEvent]:
    """``events`` with the corrected view's columns (``VIEW_ANNOTATIONS``)."""
    return events.annotate(**VIEW_ANNOTATIONS)


def _derived(name: str, row: Mapping[str, Any]) -> object:
    if name == "nature":
        return nature_text(kind=row["kind"], effective_kind=row["effective_kind"])
    if name == "in_effect":
        return row["superseded_by"] is None
    return _mechanic(row)


def export_rows(
    *, events: QuerySet[ServiceEvent], heads: Mapping[int, int]
) -> Iterator[tuple[object, ...]]:
    """Raw row values in column order, by unit and seq, up to each unit's head at the start.

    ``heads`` maps unit id to the head seq noted when the export began; entries appended while
    the export runs are left out, so the rows agree with the manifest's heads.
    """
    rows = view_annotate(events).order_by("unit_id", "seq").values(*_LOOKUPS)
    for row in rows.iterator(chunk_size=CHUNK):
        if row["seq"] > heads.get(row["unit_id"], 0):
            continue
        yield tuple(row[lookup] if lookup else _derived(name, row) for name, lookup in COLUMNS)


def csv_stream(
    rows: Iterable[tuple[object, ...]], *, on_done: Callable[[int, str], None]
) -> Iterator[bytes]:
    """CSV (RFC 4180, UTF-8, CRLF) in chunks of about 64 KiB, hashed as it goes.

    ``on_done(row_count, sha256_hex)`` runs once the last byte has been produced; a stream
    abandoned half-way never calls it.
    """
    buffer = io.StringIO()
    writer = csv.writer(buffer, lineterminator="\r\n")
    digest = hashlib.sha256()
    writer.writerow(HEADERS)
    count = 0
    for row in rows:
        writer.writerow([cell_text(value) for value in row])
        count += 1
        if buffer.tell() >= FLUSH_BYTES:
            chunk = buffer.getvalue().encode("utf-8")
            buffer.seek(0)
            buffer.truncate()
            digest.update(chunk)
            yield chunk
    chunk = buffer.getvalue().encode("utf-8")
    digest.update(chunk)
    if chunk:
        yield chunk
    on_done(count, digest.hexdigest())


UNIT_HEADERS = (
    "site", "fleet_number", "make", "model", "serial_number", "year", "owner", "tire_size",
    "in_service_on", "disposed_on", "head_seq", "head_hash",
    "scheduled_task", "due_on", "due_hours", "status",
)  # fmt: skip


def unit_sheet_rows(unit: Mapping[str, Any]) -> Iterator[tuple[object, ...]]:
    """One row per scheduled task of a manifest unit (one row if it has none)."""
    head = unit["chain_head"] or {"seq": None, "hash": None}
    ident = (
        unit["site"], unit["fleet_number"], unit["make"], unit["model"], unit["serial_number"],
        unit["year"], unit["owner"], unit["tire_size"], unit["in_service_on"],
        unit["disposed_on"], head["seq"], head["hash"],
    )  # fmt: skip
    if not unit["scheduled"]:
        yield ident + (None, None, None, None)
    for item in unit["scheduled"]:
        yield ident + (item["label"], item["due_on"], item["due_hours"], item["status"])


def file_sha256(path: Path) -> str:
    digest = hashlib.sha256()
    with path.open("rb") as handle:
        for block in iter(lambda: handle.read(1 << 20), b""):
            digest.update(block)
    return digest.hexdigest()
