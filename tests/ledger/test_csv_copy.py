"""The CSV export by PostgreSQL's COPY (csv_copy.py) gives the bytes of the Python path (the csv
module over export_rows): the same data exported both ways is compared byte for byte and by
SHA-256 (hashlib, FIPS 180-4), cells are checked against PostgreSQL's own float8 output, and
the standard-library recipe (third_party_check.py) accepts both files."""

from __future__ import annotations

import csv
import hashlib
import io
import json
import random
import struct
import subprocess
import sys
from datetime import UTC, datetime, timedelta
from pathlib import Path
from typing import Any

import pytest
from django.core.management import call_command
from django.db import connection
from django.urls import reverse

from fleetfuel.fleet.models import ComponentKind, Site, Unit
from fleetfuel.ledger import csv_copy
from fleetfuel.ledger.actions import service_event_append, service_event_correct
from fleetfuel.ledger.csv_copy import (
    PYTHON_WHITESPACE,
    cell_sql_build,
    copy_csv_stream,
    line_ends_convert,
)
from fleetfuel.ledger.exports import HEADERS, csv_stream, export_rows, float_format
from fleetfuel.ledger.manifest import export_start
from fleetfuel.ledger.models import ExportLog, ServiceEvent
from fleetfuel.ledger.selectors import HistoryScope
from fleetfuel.workorders.models import WorkOrder
from tests import factories as f

RECIPE = Path(__file__).with_name("third_party_check.py")
AWKWARD_TEXT = [
    "=SUM(A1:A9)", "+44 20 7946 0000", "-12 bar", "@risk", "'quoted", "\ttab first",
    "\rCR first", 'say "when", then stop', "line one\nline two", "crlf\r\ninside", "a,b,c",
    "Ölstand prüfen — 滤清器 🚜", "  spaced  ", "\\.", '"', ",", "plain",
]  # fmt: skip
# Floats whose text is easy to get wrong: PostgreSQL's float8 output (shortest round trip)
# differs from Python's repr from 1e15 to 1e16 and for whole values past 2**63.
AWKWARD_FLOATS = [
    0.1, 12.0, 1e-7, -0.0, 0.1 + 0.2, 1234.5, -1.5, 1e15 + 0.5, 4.5e15 + 0.25, 1e16, 2.0**63,
    2.0**70, -(2.0**64), 5e-324, 1.7976931348623157e308, 0.0001, 0.00001, 999999999999999.9,
]  # fmt: skip


def pg_text(sql: str, params: list[Any]) -> list[str]:
    with connection.cursor() as cursor:
        cursor.execute(sql, params)
        return [row[0] for row in cursor.fetchall()]


def both_ways(events: Any, heads: dict[int, int]) -> tuple[bytes, bytes, list[Any], list[Any]]:
    """The export by the Python path and by COPY, with what each passed to on_done."""
    python_done: list[Any] = []
    copy_done: list[Any] = []
    python_bytes = b"".join(
        csv_stream(
            export_rows(events=events, heads=heads),
            on_done=lambda n, digest: python_done.append((n, digest)),
        )
    )
    copy_bytes = b"".join(
        copy_csv_stream(
            events=events, heads=heads, on_done=lambda n, digest: copy_done.append((n, digest))
        )
    )
    return python_bytes, copy_bytes, python_done, copy_done


def test_python_whitespace_is_what_str_strip_removes() -> None:
    # Python's own definition (str.isspace, which str.strip() with no argument uses).
    assert "".join(c for c in map(chr, range(0x110000)) if c.isspace()) == PYTHON_WHITESPACE
    assert (PYTHON_WHITESPACE + "Ann" + PYTHON_WHITESPACE).strip() == "Ann"


def test_line_ends_convert_gives_what_the_csv_module_writes() -> None:
    rng = random.Random(396)
    rows = [
        [rng.choice([*AWKWARD_TEXT, "", "x"]) for _ in range(rng.randint(1, 6))] for _ in range(500)
    ]
    crlf = io.StringIO()
    csv.writer(crlf, lineterminator="\r\n").writerows(rows)
    # COPY's rows: quoted like the csv module's with CRLF as line terminator (a cell holding
    # CR or LF is quoted), but ended by LF alone.
    lf = "".join(line.removesuffix("\r\n") + "\n" for line in _lines_of(rows))
    assert lf != crlf.getvalue() and lf.count("\n") > len(rows)
    assert line_ends_convert(block=lf.encode()) == crlf.getvalue().encode()
    assert line_ends_convert(block=b"a,b\n1,2\n") == b"a,b\r\n1,2\r\n"


def _lines_of(rows: list[list[str]]) -> list[str]:
    lines = []
    for row in rows:
        one = io.StringIO()
        csv.writer(one, lineterminator="\r\n").writerow(row)
        lines.append(one.getvalue())
    return lines


def test_float_format_round_trips_and_keeps_whole_numbers_whole() -> None:
    assert [float_format(value=v) for v in (0.1, 12.0, 1e-7, -0.0, 1e15 + 0.5)] == [
        "0.1", "12", "1e-07", "0", "1.0000000000000005e+15",
    ]  # fmt: skip
    assert float_format(value=2.0**70) == str(2**70)
    rng = random.Random(4406)
    values = AWKWARD_FLOATS + [rng.uniform(-1, 1) * 10 ** rng.randint(-12, 20) for _ in range(5000)]
    for value in values:
        assert float(float_format(value=value)) == value  # Python's own float parser


@pytest.mark.django_db
def test_float_cells_match_postgresql_float8_output(postgres: None) -> None:
    """The SQL float cell, run by PostgreSQL, against float_format on the same doubles."""
    rng = random.Random(180)
    values = list(AWKWARD_FLOATS)
    while len(values) < 30000:
        (value,) = struct.unpack("<d", rng.getrandbits(64).to_bytes(8, "little"))
        if value == value and abs(value) != float("inf"):  # NaN and infinities are refused
            values.append(value)
    values += [rng.uniform(-1, 1) * 10 ** rng.randint(-12, 20) for _ in range(10000)]
    values += [round(rng.uniform(0, 20000), rng.randint(0, 3)) for _ in range(10000)]
    cell = cell_sql_build(lookup="value", expr="t.x")
    texts = pg_text(
        f"SELECT {cell} FROM unnest(%s::float8[]) WITH ORDINALITY AS t(x, i) ORDER BY t.i",
        [values],
    )
    assert texts == [float_format(value=v) for v in values]


@pytest.fixture
def awkward_history(mechanic: Any, manager: Any, unit_class: Any) -> dict[str, Any]:
    """Two units with entries full of awkward values, a third with none, and the heads."""
    site = f.site_make(name='Depot "East", bay 3', code="east")
    first = f.unit_make(site=site, unit_class=unit_class, fleet_number="=E-1")
    Unit.objects.filter(pk=first.pk).update(owner="=Lessor, Ltd.", make="Ölwerk", tire_size="")
    first.refresh_from_db()
    second = f.unit_make(site=site, unit_class=unit_class, fleet_number="E-2")
    f.unit_make(site=site, unit_class=unit_class, fleet_number="E-3")  # no entries
    mechanic.first_name, mechanic.last_name = "\u3000Zoë\t", "=Ng"
    mechanic.save()
    manager.first_name, manager.last_name = "", "\u2003=Boss\x1c"  # only Python's whitespace
    manager.save()
    blank = f.user_make("mechanic", username="@wrench")  # no names: the username is shown
    order = WorkOrder.objects.create(
        number="=WO-7", unit=first, due_on=f.NOW.date(), created_by=manager, created_at=f.NOW
    )
    primary = first.components.get(kind=ComponentKind.PRIMARY_FILTER)
    at = datetime(2026, 3, 1, 8, 15, 30, 123456, tzinfo=UTC)
    for i, value in enumerate(AWKWARD_FLOATS):
        text = AWKWARD_TEXT[i % len(AWKWARD_TEXT)]
        service_event_append(
            unit=first if i % 3 else second, kind=ServiceEvent.Kind.MEASUREMENT,
            performed_at=at + timedelta(days=i, microseconds=i),
            recorded_by=(mechanic, blank)[i % 2],
            recorded_at=at + timedelta(days=i, seconds=1, microseconds=999999 - i),
            measurement_name=text, value=value, low_limit=-value if i % 4 else None,
            high_limit=AWKWARD_FLOATS[-1 - i], passed=(True, False, None)[i % 3],
            hour_meter=1000 + i / 10, notes=AWKWARD_TEXT[-1 - i % len(AWKWARD_TEXT)],
            parts_used=text if i % 2 else "", part_number=text[:60], cylinder=i % 7 or None,
        )  # fmt: skip
    drained = service_event_append(
        unit=first, kind=ServiceEvent.Kind.SEPARATOR_DRAINED, performed_at=at, recorded_by=mechanic,
        component=primary, component_kind=ComponentKind.PRIMARY_FILTER, water_ml=12.0,
        water_appearance=ServiceEvent.Appearance.CLOUDY, work_order=order, dp_before_bar=1e-7,
    )  # fmt: skip
    service_event_correct(event=drained, reason="=typed in the wrong box", recorded_by=manager,
                          water_ml=0.1, notes='=1+1, "really"\n')  # fmt: skip
    # Corrected again, to another kind: the first correction is superseded, the kind changes.
    service_event_correct(event=drained, reason="an inspection", recorded_by=manager,
                          kind=ServiceEvent.Kind.INSPECTION)  # fmt: skip
    service_event_append(  # a year before 1000: Python's %Y does not pad it
        unit=second, kind=ServiceEvent.Kind.INSPECTION, recorded_by=blank,
        performed_at=datetime(999, 12, 31, 23, 59, 59, 5, tzinfo=UTC), notes="odd clock",
    )  # fmt: skip
    return {"site": site, "first": first, "second": second}


@pytest.mark.django_db
def test_copy_export_gives_the_python_paths_bytes(
    postgres: None, awkward_history: dict[str, Any], mechanic: Any
) -> None:
    site, first = awkward_history["site"], awkward_history["first"]
    day = datetime(2026, 3, 5, tzinfo=UTC).date()
    scopes = [
        HistoryScope(allowed_site_ids=None),
        HistoryScope(allowed_site_ids=(site.pk,), site=site),
        HistoryScope(allowed_site_ids=None, fleet_numbers=("=E-1",)),
        HistoryScope(allowed_site_ids=None, date_from=day, date_to=day + timedelta(days=6)),
        HistoryScope(allowed_site_ids=(Site.objects.exclude(pk=site.pk).first().pk,)),  # none
    ]
    checked = 0
    for n, scope in enumerate(scopes):
        _, heads = export_start(scope=scope, fmt="csv", via="command", user=None, scheduled={})
        # Appended after the heads were noted: left out both ways.
        service_event_append(unit=first, kind=ServiceEvent.Kind.INSPECTION, performed_at=f.NOW,
                             recorded_by=mechanic, notes=f"late {n}")  # fmt: skip
        events = scope.events(with_kind=False)
        python_bytes, copy_bytes, python_done, copy_done = both_ways(events, heads)
        assert copy_bytes == python_bytes
        rows = list(csv.reader(io.StringIO(copy_bytes.decode("utf-8"), newline="")))
        assert tuple(rows[0]) == HEADERS and all(len(r) == len(HEADERS) for r in rows)
        digest = hashlib.sha256(copy_bytes).hexdigest()
        assert copy_done == python_done == [(len(rows) - 1, digest)]
        assert f"late {n}" not in {row[HEADERS.index("notes")] for row in rows}
        checked += len(rows) - 1
    assert checked > len(AWKWARD_FLOATS) * 2  # the scopes did select rows

    _, heads = export_start(scope=scopes[0], fmt="csv", via="command", user=None, scheduled={})
    python_bytes, copy_bytes, _, _ = both_ways(scopes[0].events(with_kind=False), heads)
    assert copy_bytes == python_bytes
    # The awkward values did reach the file, as the csv module reads it back.
    rows = list(csv.DictReader(io.StringIO(copy_bytes.decode("utf-8"), newline="")))
    cells = {name: {row[name] for row in rows} for name in HEADERS}
    names = cells["measurement_name"]
    assert {"'=SUM(A1:A9)", "'+44 20 7946 0000", "'-12 bar", "'@risk", "''quoted",
            "'\ttab first", "'\rCR first", 'say "when", then stop', "line one\nline two",
            "Ölstand prüfen — 滤清器 🚜", "  spaced  ", ""} <= names  # fmt: skip
    assert {"0.1", "12", "1e-07", "0", "1.0000000000000005e+15", str(2**70)} <= cells["value"]
    assert {"true", "false", ""} == cells["passed"]
    assert {"Zoë\t =Ng", "'=Boss", "'@wrench"} <= cells["mechanic"]  # stripped, then escaped
    assert cells["site"] == {'Depot "East", bay 3'} and "'=Lessor, Ltd." in cells["owner"]
    assert "'=WO-7" in cells["work_order"] and "Water separator drained" in cells["nature"]
    assert "2026-03-01T08:15:30.123456Z" in cells["performed_at"]
    assert "999-12-31T23:59:59.000005Z" in cells["performed_at"]
    assert "'=typed in the wrong box" in cells["reason"]


@pytest.mark.django_db
def test_the_recipe_accepts_both_files(awkward_history: dict[str, Any], tmp_path: Path) -> None:
    """The command's file (COPY on PostgreSQL) and the Python path's, awkward values and all;
    on SQLite both are the Python path's."""
    by_command = tmp_path / "by-command.csv"
    call_command(
        "export_history", "--format", "csv", "--out", str(by_command), stdout=io.StringIO()
    )
    log = ExportLog.objects.get()
    manifest = Path(f"{by_command}.manifest.json").read_text()
    events = HistoryScope(allowed_site_ids=None).events(with_kind=False)
    heads = {u["unit_id"]: u["chain_head"]["seq"] for u in log.manifest["units"] if u["chain_head"]}
    by_python = tmp_path / "by-python.csv"
    by_python.write_bytes(b"".join(csv_stream(export_rows(events=events, heads=heads),
                                              on_done=lambda n, digest: None)))  # fmt: skip
    Path(f"{by_python}.manifest.json").write_text(manifest)
    assert by_python.read_bytes() == by_command.read_bytes()
    assert json.loads(manifest)["sha256"] == hashlib.sha256(by_python.read_bytes()).hexdigest()
    for path in (by_command, by_python):
        result = subprocess.run(
            [sys.executable, "-I", str(RECIPE), str(path)],
            capture_output=True, text=True, check=False,
        )  # fmt: skip
        assert result.returncode == 0, result.stderr
        assert result.stdout.startswith(f"OK: {log.row_count} rows, 2 unit chain(s)")


@pytest.mark.django_db
def test_web_and_command_exports_go_through_copy_on_postgres(
    postgres: None, awkward_history: dict[str, Any], as_auditor: Any, monkeypatch: Any,
    tmp_path: Path,
) -> None:  # fmt: skip
    calls: list[Any] = []
    real = csv_copy.copy_csv_stream

    def spy(**kwargs: Any) -> Any:
        calls.append(kwargs)
        return real(**kwargs)

    monkeypatch.setattr(csv_copy, "copy_csv_stream", spy)
    response = as_auditor.post(reverse("pages:export"), {"format": "csv"})
    web = b"".join(response.streaming_content)
    call_command("export_history", "--format", "csv", "--out", str(tmp_path / "x.csv"),
                 stdout=io.StringIO())  # fmt: skip
    assert len(calls) == 2
    assert (tmp_path / "x.csv").read_bytes() == web  # same rows, same heads
    log = ExportLog.objects.get(pk=int(response["X-Fleetfuel-Export"]))
    assert log.sha256 == hashlib.sha256(web).hexdigest()


@pytest.mark.django_db
def test_copy_export_keeps_floats_exact_when_the_session_rounds_them(
    postgres: None, awkward_history: dict[str, Any]
) -> None:
    scope = HistoryScope(allowed_site_ids=None)
    _, heads = export_start(scope=scope, fmt="csv", via="command", user=None, scheduled={})
    python_bytes = b"".join(
        csv_stream(export_rows(events=scope.events(with_kind=False), heads=heads),
                   on_done=lambda n, digest: None)
    )  # fmt: skip
    with connection.cursor() as cursor:
        cursor.execute("SET extra_float_digits = 0")  # PostgreSQL then prints 15 digits
    assert pg_text("SELECT (0.1::float8 + 0.2::float8)::text", []) == ["0.3"]
    copy_bytes = b"".join(
        copy_csv_stream(events=scope.events(with_kind=False), heads=heads,
                        on_done=lambda n, digest: None)
    )  # fmt: skip
    assert copy_bytes == python_bytes and b"0.30000000000000004" in copy_bytes
    assert pg_text("SHOW extra_float_digits", []) == ["0"]  # as the session had it


@pytest.mark.django_db(transaction=True)
def test_an_abandoned_copy_export_leaves_the_connection_usable(
    postgres: None, unit: Any, mechanic: Any, add_events: Any, monkeypatch: Any
) -> None:
    add_events(unit, mechanic, 5)
    monkeypatch.setattr(csv_copy, "FLUSH_BYTES", 1)  # a block per row
    scope = HistoryScope(allowed_site_ids=None)
    log, heads = export_start(scope=scope, fmt="csv", via="command", user=None, scheduled={})
    done: list[Any] = []
    stream = copy_csv_stream(
        events=scope.events(with_kind=False), heads=heads, on_done=lambda *a: done.append(a)
    )
    assert next(stream).startswith(b"site,fleet_number,")
    stream.close()  # the client went away: psycopg cancels the COPY
    assert done == []
    log.refresh_from_db()
    assert not log.finished
    assert pg_text("SELECT 'still usable'", []) == ["still usable"]
    blocks = list(copy_csv_stream(events=scope.events(with_kind=False), heads=heads,
                                  on_done=lambda *a: done.append(a)))  # fmt: skip
    assert len(blocks) == 6 and done == [(5, hashlib.sha256(b"".join(blocks)).hexdigest())]
