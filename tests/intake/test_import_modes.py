"""The three modes on one file, the command's output and exit status, and the acceptance
check: one bad row in 10,000 is exactly one row error, and nothing is stored all-or-nothing."""

from __future__ import annotations

from datetime import timedelta
from io import StringIO
from pathlib import Path
from typing import Any

import pytest
from django.core.management import call_command

from fleetfuel.fleet.models import MeterReading
from fleetfuel.intake.imports.apply import (
    ALL_OR_NOTHING,
    DRY_RUN,
    GOOD_ROWS_ONLY,
    file_import,
)
from fleetfuel.intake.imports.layouts import layout_for
from tests import factories as f

NOW = f.NOW
READINGS = layout_for(kind="readings")


def readings_file(path: Path, unit: Any, *, rows: int, bad_line: int | None = None) -> Path:
    """``rows`` readings 6 h apart, 3 h run between each (well inside the time elapsed);
    the row on ``bad_line`` (a line of the file, header = 1) has negative hours."""
    start = NOW - timedelta(hours=6 * rows)
    lines = ["unit,taken_at,hours"]
    for i in range(rows):
        hours = "-5" if bad_line == i + 2 else f"{1000 + 3 * i}"
        lines.append(f"{unit.fleet_number},{(start + timedelta(hours=6 * i)).isoformat()},{hours}")
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    return path


def run(*args: str) -> tuple[int, str, str]:
    out, err = StringIO(), StringIO()
    try:
        call_command("import_data", *args, stdout=out, stderr=err)
    except SystemExit as exc:
        return int(exc.code or 0), out.getvalue(), err.getvalue()
    return 0, out.getvalue(), err.getvalue()


@pytest.mark.usefixtures("clock_at_now")
def test_one_bad_row_in_10000(unit: Any, tmp_path: Path) -> None:
    path = readings_file(tmp_path / "readings.csv", unit, rows=10_000, bad_line=5_001)
    dry = file_import(path=path, layout=READINGS, mode=DRY_RUN, now=NOW)
    assert [str(e) for e in dry.errors] == [
        "readings.csv line 5001, column hours: -5 is below the lowest allowed (0)"
    ]
    assert dry.counts == {"created": 9_999, "updated": 0, "unchanged": 0, "refused": 1}
    assert MeterReading.objects.filter(unit=unit).count() == 0
    code, out, err = run(str(path))
    assert code == 1
    assert err.splitlines() == [
        "readings.csv line 5001, column hours: -5 is below the lowest allowed (0)"
    ]
    assert "stored nothing" in out
    assert MeterReading.objects.filter(unit=unit).count() == 0


@pytest.mark.usefixtures("clock_at_now")
def test_good_rows_only_stores_the_rest_and_writes_the_rejects(unit: Any, tmp_path: Path) -> None:
    path = readings_file(tmp_path / "readings.csv", unit, rows=20, bad_line=4)
    rejects = tmp_path / "rejects.csv"
    code, out, err = run(str(path), "--good-rows-only", "--rejects", str(rejects))
    assert code == 1  # a row was refused: the command says so even though it stored the rest
    assert MeterReading.objects.filter(unit=unit).count() == 19
    lines = rejects.read_text(encoding="utf-8").splitlines()
    assert lines[0] == "unit,taken_at,hours,refused_because"
    assert lines[1].endswith(',-5,"line 4, column hours: -5 is below the lowest allowed (0)"')
    assert len(lines) == 2
    # The same file again: the 19 are there already (unit + time), nothing is duplicated.
    again = file_import(path=path, layout=READINGS, mode=GOOD_ROWS_ONLY, now=NOW)
    assert again.counts == {"created": 0, "updated": 0, "unchanged": 19, "refused": 1}
    assert MeterReading.objects.filter(unit=unit).count() == 19


@pytest.mark.usefixtures("clock_at_now")
def test_a_clean_file_is_stored_and_a_rerun_changes_nothing(unit: Any, tmp_path: Path) -> None:
    path = readings_file(tmp_path / "readings.csv", unit, rows=30)
    first = file_import(path=path, layout=READINGS, mode=ALL_OR_NOTHING, now=NOW)
    assert first.ok and first.stored and first.counts["created"] == 30
    code, out, _ = run(str(path))
    assert code == 0 and "0 created, 0 updated, 30 unchanged; 0 refused" in out
    assert MeterReading.objects.filter(unit=unit).count() == 30


def test_good_rows_only_needs_a_rejects_file(tmp_path: Path) -> None:
    with pytest.raises(Exception, match="--rejects"):
        call_command("import_data", str(tmp_path), "--good-rows-only")
