"""The CSV export on PostgreSQL: ``COPY (SELECT ...) TO STDOUT`` does the joins and formats
every cell in SQL; Python only hashes the bytes as they pass and restores CRLF line ends.

The bytes are the same as those of the Python path (``exports.csv_stream`` over
``exports.export_rows``), which stays the path on SQLite and for XLSX. Cell by cell, the SQL
writes what ``exports.cell_text`` writes:

* text: empty text becomes NULL (COPY writes NULL as an empty cell, but an empty string as
  ``""``); text whose first character is a formula trigger gets one leading ``'``;
* whole numbers (integer columns, and floats with no fractional part) as integer digits;
  other floats as PostgreSQL's shortest round-trip text (``extra_float_digits`` >= 1), which
  ``exports.float_format`` copies where it differs from Python's ``repr``;
* times as ``YYYY-MM-DDTHH:MM:SS.ffffffZ`` in UTC (the year unpadded, as Python's
  ``strftime('%Y')`` on Linux writes it); booleans as ``true``/``false``;
* the kind's label and the mechanic's name as in ``exports.export_rows``.

COPY's CSV quoting is the csv module's QUOTE_MINIMAL (a cell is quoted when it holds a comma,
a quote, CR or LF, quotes doubled); COPY ends lines with LF on the wire, so each block is
given CRLF line ends (RFC 4180) before it is hashed and sent.
"""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Iterator, Mapping
from contextlib import suppress
from typing import Any

import psycopg
from django.contrib.auth import get_user_model
from django.db import connections
from django.db.models import F, Field, ForeignKey, QuerySet

from fleetfuel.fleet.models import Unit

from .exports import (
    COLUMNS,
    CORRECTION,
    CORRECTION_SUFFIX,
    FLUSH_BYTES,
    FORMULA_TRIGGERS,
    KIND_LABELS,
    csv_stream,
    export_rows,
    view_annotate,
)
from .models import ServiceEvent

# str.strip() with no argument removes the characters for which str.isspace() is true; the
# mechanic's name is stripped of the same set in SQL (tests check it against Python's).
PYTHON_WHITESPACE = (
    "\t\n\x0b\x0c\r\x1c\x1d\x1e\x1f \x85\xa0\u1680\u2000\u2001\u2002\u2003\u2004\u2005\u2006"
    "\u2007\u2008\u2009\u200a\u2028\u2029\u202f\u205f\u3000"
)
_TRIGGER_CODES = ", ".join(str(ord(c)) for c in FORMULA_TRIGGERS)
_INTEGER_TYPES = {
    "AutoField", "BigAutoField", "SmallAutoField", "IntegerField", "BigIntegerField",
    "SmallIntegerField", "PositiveIntegerField", "PositiveBigIntegerField",
    "PositiveSmallIntegerField",
}  # fmt: skip


def _text_sql(expr: str) -> str:
    """A text cell: NULL for empty text, one ``'`` before a formula trigger."""
    return (
        f"CASE WHEN ascii({expr}) IN ({_TRIGGER_CODES}) THEN '''' || {expr} "
        f"ELSE NULLIF({expr}, '') END"
    )


def _float_sql(expr: str) -> str:
    """A float cell, as ``exports.float_format`` writes it.

    Whole values below 2**63 go through bigint (exact). Whole values beyond it are written in
    full, as Python's ``str(int(value))`` does: the value is m * 2**k with m below 2**54, and
    numeric arithmetic on m and 2**k is exact (float8 -> numeric alone keeps 15 digits only).
    Other values are float8's own text, shortest round-trip form. NaN and infinities cannot
    be recorded (the canonical JSON refuses them), so they need no branch.
    """
    exponent = f"(floor(ln(abs({expr})) / ln(2))::int - 53)"
    return (
        f"CASE WHEN {expr} = trunc({expr}) AND abs({expr}) < 9223372036854775807::float8 "
        f"THEN {expr}::int8::text "
        f"WHEN {expr} <> trunc({expr}) THEN {expr}::text "
        f"ELSE trunc(({expr} / 2::float8 ^ {exponent})::int8 * 2::numeric ^ {exponent})::text "
        "END"
    )


def _time_sql(expr: str) -> str:
    """A timestamptz cell in the canonical form (services/ledger.py), in UTC."""
    return f"""to_char({expr} AT TIME ZONE 'UTC', 'FMYYYY-MM-DD"T"HH24:MI:SS.US"Z"')"""


def _bool_sql(expr: str) -> str:
    return f"CASE WHEN {expr} THEN 'true' WHEN NOT {expr} THEN 'false' END"


def _int_sql(expr: str) -> str:
    return expr  # COPY writes integers as Python's str(int) does


def field_resolve(*, lookup: str) -> Field[Any, Any]:
    """The model field a values() lookup ends on (a foreign key's target for ``x_id``)."""
    model: Any = ServiceEvent
    *path, last = lookup.split("__")
    for name in path:
        model = model._meta.get_field(name).related_model
    field = model._meta.get_field(last)
    return field.target_field if isinstance(field, ForeignKey) else field


# The corrected view's columns are annotations (exports.VIEW_ANNOTATIONS), not model fields.
_ANNOTATION_TYPES = {"effective_kind": "CharField", "superseded_by": "BigAutoField"}


def cell_sql_build(*, lookup: str, expr: str) -> str:
    """The SQL that formats one column's cell, chosen by the model field's type."""
    kind = _ANNOTATION_TYPES.get(lookup) or field_resolve(lookup=lookup).get_internal_type()
    if kind in {"CharField", "TextField"}:
        return _text_sql(expr)
    if kind == "FloatField":
        return _float_sql(expr)
    if kind == "DateTimeField":
        return _time_sql(expr)
    if kind == "BooleanField":
        return _bool_sql(expr)
    if kind in _INTEGER_TYPES:
        return _int_sql(expr)
    raise TypeError(f"no CSV cell form for {lookup} ({kind}): add one here and to cell_text")


def _units_sql(
    *, lookups: list[str], alias: Mapping[str, str], using: str
) -> tuple[str, list[object]]:
    """Each unit's cells (site, fleet number, ...), formatted once per unit, by unit id.

    OFFSET 0 keeps PostgreSQL from merging the subquery into the export's query, where the
    cells would be formatted again for every row."""
    units = Unit.objects.order_by().values(
        unit_key=F("pk"), **{alias[lookup]: F(lookup.removeprefix("unit__")) for lookup in lookups}
    )
    sql, params = units.query.get_compiler(using=using).as_sql()
    cells = ", ".join(
        f"{cell_sql_build(lookup=lookup, expr=f'u.{alias[lookup]}')} AS {alias[lookup]}"
        for lookup in lookups
    )
    return f"SELECT u.unit_key, {cells} FROM ({sql}) u OFFSET 0", list(params)


def _mechanics_sql(*, using: str) -> tuple[str, list[object]]:
    """Each person's mechanic cell (full name, else user name), formatted once, by user id."""
    people = get_user_model().objects.order_by()
    people = people.values("first_name", "last_name", "username", user_key=F("pk"))
    sql, params = people.query.get_compiler(using=using).as_sql()
    name = "COALESCE(NULLIF(btrim(m.first_name || ' ' || m.last_name, %s), ''), m.username)"
    cell = _text_sql(name)
    return (
        f"SELECT m.user_key, {cell} AS mechanic FROM ({sql}) m OFFSET 0",
        [PYTHON_WHITESPACE] * cell.count("%s") + list(params),
    )


def copy_statement_build(
    *, events: QuerySet[ServiceEvent], heads: Mapping[int, int]
) -> tuple[str, list[object]]:
    """The COPY statement and its parameters (merged client-side by psycopg).

    Django compiles the filtered query (the scope's joins and conditions) with one alias per
    lookup; around it, the heads noted at the start cut each unit's chain, and every cell is
    formatted: the unit's cells and the mechanic's once per unit and per person, the others
    once per row. Rows come by unit and seq, as in ``exports.export_rows``.
    """
    lookups = [lookup for _, lookup in COLUMNS if lookup]
    alias = {lookup: f"c{i}" for i, lookup in enumerate(lookups)}
    per_unit = [lookup for lookup in lookups if lookup.startswith("unit__")]
    inner = view_annotate(events).order_by()
    inner = inner.values(
        **{alias[lookup]: F(lookup) for lookup in lookups if lookup not in per_unit}
    )
    inner_sql, inner_params = inner.query.get_compiler(using=events.db).as_sql()
    units_sql, units_params = _units_sql(lookups=per_unit, alias=alias, using=events.db)
    mechanics_sql, mechanics_params = _mechanics_sql(using=events.db)

    def col(lookup: str) -> str:
        return f"s.{alias[lookup]}"

    # The kind's label, worked out once per row (its parameters appear once) and formatted
    # below like any text column. Whether the row is in effect is read in the outer query
    # from the sorted subquery's superseded_by: written here, beside the inner query's
    # columns, PostgreSQL would run superseded_by's two subqueries again.
    kind, shown = col("kind"), f"COALESCE({col('effective_kind')}, {col('kind')})"
    whens = " ".join("WHEN %s THEN %s" for _ in KIND_LABELS)
    nature = (
        f"(CASE {shown} {whens} ELSE {shown} END) "
        f"|| CASE WHEN {kind} = %s THEN %s ELSE '' END AS nature"
    )
    params: list[object] = [str(part) for pair in KIND_LABELS.items() for part in pair]
    params += [str(CORRECTION), CORRECTION_SUFFIX]
    cells = []
    for name, lookup in COLUMNS:
        if lookup in per_unit:
            cells.append(col(lookup))  # formatted in _units_sql
        elif lookup:
            cells.append(cell_sql_build(lookup=lookup, expr=col(lookup)))
        elif name == "nature":
            cells.append(_text_sql("s.nature"))
        elif name == "mechanic":
            cells.append("s.mechanic")  # formatted in _mechanics_sql
        elif name == "in_effect":
            cells.append(_bool_sql(f"{col('superseded_by')} IS NULL"))
        else:
            raise ValueError(f"no source for column {name}")
    select = ", ".join(
        f'{cell} AS "{name}"' for cell, (name, _) in zip(cells, COLUMNS, strict=True)
    )
    unit_id, seq = col("unit_id"), col("seq")
    # Sorted narrow, formatted after (but for the unit's and the mechanic's cells, formatted
    # once each before): the subquery's order satisfies the outer ORDER BY, so PostgreSQL
    # sorts the raw values once and never the wide formatted rows.
    statement = (
        f"COPY (SELECT {select} FROM (SELECT s.*, u.*, m.mechanic, {nature} "
        f"FROM ({inner_sql}) s JOIN ({units_sql}) u ON u.unit_key = {unit_id} "
        f"JOIN ({mechanics_sql}) m ON m.user_key = {col('recorded_by_id')} "
        "JOIN unnest(%s::bigint[], %s::bigint[]) AS h(unit_id, head_seq) "
        f"ON h.unit_id = {unit_id} AND {seq} <= h.head_seq ORDER BY {unit_id}, {seq}) s "
        f"ORDER BY {unit_id}, {seq}) TO STDOUT WITH (FORMAT csv, HEADER)"
    )
    params += [*inner_params, *units_params, *mechanics_params, list(heads), list(heads.values())]
    return statement, params


def line_ends_convert(*, block: bytes) -> bytes:
    """LF -> CRLF at the ends of rows, not inside quoted cells; ``block`` is whole rows.

    Outside quotes, COPY writes LF only at a row's end (a cell holding CR or LF is quoted), and
    whole rows start outside quotes, so the pieces between ``"`` alternate outside and inside
    (a doubled quote inside a cell leaves an empty outside piece).
    """
    if b'"' not in block:
        return block.replace(b"\n", b"\r\n")
    pieces = block.split(b'"')
    pieces[::2] = [piece.replace(b"\n", b"\r\n") for piece in pieces[::2]]
    return b'"'.join(pieces)


def copy_csv_stream(
    *,
    events: QuerySet[ServiceEvent],
    heads: Mapping[int, int],
    on_done: Callable[[int, str], None],
) -> Iterator[bytes]:
    """The CSV by COPY, in blocks of about 64 KiB, hashed as it goes (PostgreSQL only).

    ``on_done(row_count, sha256_hex)`` runs once the last byte has been produced; a stream
    abandoned half-way never calls it (psycopg cancels the COPY and drains it).
    """
    statement, params = copy_statement_build(events=events, heads=heads)
    digest = hashlib.sha256()
    with connections[events.db].cursor() as wrapper:
        cursor = wrapper.cursor  # psycopg's own: Django's wrapper has no copy()
        # Below 1, float8 is printed with 15 digits at most and would not round-trip.
        cursor.execute("SELECT current_setting('extra_float_digits')::int")
        (float_digits,) = cursor.fetchone()
        if float_digits < 1:
            cursor.execute("SET extra_float_digits = 1")
        try:
            with cursor.copy(statement, params) as copy:
                pending: list[Any] = []
                size = 0
                for data in copy:  # one row per message
                    pending.append(data)
                    size += len(data)
                    if size >= FLUSH_BYTES:
                        block = line_ends_convert(block=b"".join(pending))
                        pending, size = [], 0
                        digest.update(block)
                        yield block
                block = line_ends_convert(block=b"".join(pending))
                digest.update(block)
                if block:
                    yield block
            count = cursor.rowcount
        finally:
            if float_digits < 1:
                # In a transaction aborted by a cancelled COPY the SET is rolled back anyway.
                with suppress(psycopg.Error):
                    cursor.execute(f"SET extra_float_digits = {int(float_digits)}")
    on_done(count, digest.hexdigest())


def history_csv_stream(
    *,
    events: QuerySet[ServiceEvent],
    heads: Mapping[int, int],
    on_done: Callable[[int, str], None],
) -> Iterator[bytes]:
    """The service history as CSV: by COPY on PostgreSQL, by the csv module elsewhere."""
    if connections[events.db].vendor == "postgresql":
        return copy_csv_stream(events=events, heads=heads, on_done=on_done)
    return csv_stream(export_rows(events=events, heads=heads), on_done=on_done)
