"""Row errors: each refused row names its line, its column and a specific reason."""

from __future__ import annotations

import math
from datetime import timedelta
from pathlib import Path
from typing import Any

import pytest
from hypothesis import given
from hypothesis import strategies as st

from fleetfuel.fleet.models import FuelSample, MeterReading, Unit
from fleetfuel.intake.imports.apply import DRY_RUN, GOOD_ROWS_ONLY, file_import
from fleetfuel.intake.imports.columns import CellError, Column, cell_parse, number_parse
from fleetfuel.intake.imports.layouts import layout_for
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.ledger.verification import ledger_verify
from services.fuel_quality import parse_iso4406
from tests import factories as f

NOW = f.NOW
T1 = (NOW - timedelta(days=2)).isoformat()
T2 = (NOW - timedelta(days=1)).isoformat()


def errors(tmp_path: Path, kind: str, text: str) -> list[str]:
    path = tmp_path / f"{kind}.csv"
    path.write_text(text, encoding="utf-8")
    result = file_import(path=path, layout=layout_for(kind=kind), mode=DRY_RUN, now=NOW)
    assert not result.file_error, result.file_error
    return [str(e) for e in result.errors]


def test_unknown_fleet_number(unit: Any, tmp_path: Path) -> None:
    found = errors(tmp_path, "readings", f"unit,taken_at,hours\nNOPE-9,{T1},10\n")
    assert found == ["readings.csv line 2, column unit: no unit with fleet number 'NOPE-9'"]


def test_duplicate_rows_in_one_file(unit: Any, tmp_path: Path) -> None:
    n = unit.fleet_number
    found = errors(tmp_path, "readings", f"unit,taken_at,hours\n{n},{T1},10\n{n},{T1},10\n")
    assert found == ["readings.csv line 3: the same row as line 2 (unit, site, taken_at)"]


def test_a_date_in_the_future(unit: Any, tmp_path: Path) -> None:
    later = (NOW + timedelta(days=210)).isoformat()
    found = errors(
        tmp_path, "readings", f"unit,taken_at,hours\n{unit.fleet_number},{later},13000\n"
    )
    assert found == [
        "readings.csv line 2, column taken_at: The reading is dated 2027-01-11 12:00, in the "
        "future: no later than 10 minutes after now (2026-06-15 13:00)."  # in the depot's time
    ]


def test_hours_between_neighbours_and_beyond_elapsed_time(unit: Any, tmp_path: Path) -> None:
    """The issue's case: 11,100 h dated between readings of 10,974 h and 11,025 h. An engine
    runs at most 24 h a day (common practice), and the meter only counts up."""
    MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(days=10), hours=10_974)
    MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(days=1), hours=11_025)
    n = unit.fleet_number
    day5 = (NOW - timedelta(days=5)).isoformat()
    day9 = (NOW - timedelta(days=9, hours=12)).isoformat()
    found = errors(
        tmp_path, "readings", f"unit,taken_at,hours\n{n},{day5},11100\n{n},{day9},11000\n"
    )
    assert len(found) == 2
    assert found[0].startswith("readings.csv line 2, column hours: ")
    # 126 h gained in the 120 h since 10,974 h (and above the later 11,025 h besides)
    assert "10,974.0 h" in found[0] and "at most 24 h a day" in found[0]
    assert found[1].startswith("readings.csv line 3, column hours: ")
    assert "10,974" in found[1]  # 26 h gained in 12 h since the earlier neighbour


def test_hours_going_backwards(unit: Any, tmp_path: Path) -> None:
    MeterReading.objects.create(unit=unit, taken_at=NOW - timedelta(days=5), hours=11_025)
    found = errors(tmp_path, "readings", f"unit,taken_at,hours\n{unit.fleet_number},{T1},10974\n")
    assert len(found) == 1
    assert found[0].startswith("readings.csv line 2, column hours: 10,974.0 h is lower than")


@pytest.mark.parametrize(
    ("litres", "reason"),
    [
        ("-40", "-40 is below the lowest allowed (0.1)"),
        ("nan", "'nan' is not a finite number"),
        ("inf", "'inf' is not a finite number"),
        ("1e9", "1e+09 is above the highest allowed (20000)"),
        ("12,5", "'12,5' is not a number (this file has ',' between columns"),
    ],
)
def test_bad_litres(unit: Any, tmp_path: Path, litres: str, reason: str) -> None:
    text = f'unit,fueled_at,litres\n{unit.fleet_number},{T1},"{litres}"\n'
    found = errors(tmp_path, "fuelings", text)
    assert len(found) == 1
    assert found[0].startswith(f"fuelings.csv line 2, column litres: {reason}")


@pytest.mark.parametrize(
    ("code", "accepted"),
    [
        ("18/16/13", True),
        (">=22/18/13", True),
        ("-/16/13", True),
        ("18/16", False),  # the two-number form of ISO 4406:1987
        ("19/17/14/extra", False),
        ("16/18/13", False),  # more particles >=6 um(c) than >=4 um(c): counts are cumulative
    ],
)
def test_iso4406_codes(site: Any, tmp_path: Path, code: str, accepted: bool) -> None:
    tank = f.source_make(name="Tank A", site=site)
    text = f"reference,source,sampled_at,iso4406\nS-1,{tank.name},{T1},{code}\n"
    found = errors(tmp_path, "samples", text)
    # ISO 4406:2021 clause 4 (three scale numbers, >=4/>=6/>=14 um(c)); the model's parser
    # decides, and the import says what it said.
    try:
        parse_iso4406(code)
        parser_accepts = True
    except ValueError as exc:
        parser_accepts, message = False, str(exc)
    assert parser_accepts is accepted
    if accepted:
        assert found == []
    else:
        assert found == [f"samples.csv line 2, column iso4406: {message}"]
    assert FuelSample.objects.count() == 0  # a dry run


def test_every_refused_row_is_reported(unit: Any, tmp_path: Path) -> None:
    n = unit.fleet_number
    text = f"unit,taken_at,hours\n{n},{T1},x\n{n},{T2},\nNOPE,{T2},3\n{n},yesterday,4\n"
    found = errors(tmp_path, "readings", text)
    assert found == [
        "readings.csv line 2, column hours: 'x' is not a number (this file has ',' between "
        "columns, so '.' is its decimal mark)",
        "readings.csv line 3, column hours: a value is required",
        "readings.csv line 4, column unit: no unit with fleet number 'NOPE'",
        "readings.csv line 5, column taken_at: 'yesterday' is not a date and time in ISO 8601 "
        "(e.g. 2026-06-15T07:30:00+01:00)",
    ]


NUMBER = Column("litres", "litres", "number", low=0.1, high=20_000)


@given(st.text(max_size=30))
def test_any_text_is_a_value_or_a_cell_error(text: str) -> None:
    """The parsers never crash: any cell gives a value within the column's limits, or a
    CellError saying why not (property-based, hypothesis)."""
    for decimal_comma in (False, True):
        try:
            value = cell_parse(NUMBER, text, header="litres", decimal_comma=decimal_comma)
        except CellError as exc:
            assert str(exc)
        else:
            assert math.isfinite(value) and 0.1 <= value <= 20_000


@given(st.floats(allow_nan=True, allow_infinity=True))
def test_numbers_written_by_python_read_back(value: float) -> None:
    if math.isfinite(value):
        assert number_parse(repr(value), decimal_comma=False) == value
        assert number_parse(repr(value).replace(".", ","), decimal_comma=True) == value
    else:
        with pytest.raises(CellError):
            number_parse(repr(value), decimal_comma=False)


@given(st.text(alphabet="0123456789/-≥>= x", max_size=14))
def test_malformed_codes_are_refused_by_the_parser_with_a_reason(text: str) -> None:
    try:
        codes = parse_iso4406(text)
    except ValueError as exc:
        assert str(exc)
    else:
        assert len(codes) == 3  # ISO 4406:1999 and later: three scale numbers


def test_service_events_join_the_units_chain(unit: Any, manager: Any, tmp_path: Path) -> None:
    n = unit.fleet_number
    text = (
        "unit,kind,performed_at,hour_meter,component,water_ml,recorded_by\n"
        f"{n},separator_drained,{T1},1000,primary_filter,40,{manager.username}\n"
        f"{n},separator_drained,{T2},1010,primary_filter,35,nobody\n"
        f"{n},filter_changed,{T2},1010,rail,,{manager.username}\n"
        f"{n},separator_drained,{T1},1000,primary_filter,40,{manager.username}\n"
    )
    path = tmp_path / "service_events.csv"
    path.write_text(text, encoding="utf-8")
    result = file_import(
        path=path, layout=layout_for(kind="service_events"), mode=GOOD_ROWS_ONLY, now=NOW
    )
    assert [str(e) for e in result.errors] == [
        "service_events.csv line 3, column recorded_by: no user named 'nobody'",
        "service_events.csv line 5: the same row as line 2 "
        "(unit, site, kind, performed_at, component_kind, cylinder, measurement_name)",
    ]
    # The rail is fitted on the test unit (fleet.actions.unit_fuel_system_fit): line 4 stands.
    assert result.counts["created"] == 2
    assert ServiceEvent.objects.filter(unit=unit).count() == 2
    assert ledger_verify(unit_ids=[unit.pk]).ok


def test_units_name_their_site_and_class(site: Any, unit_class: Any, tmp_path: Path) -> None:
    head = (
        "site,fleet_number,unit_class,make,model,serial_number,year,cylinders,in_service_on,"
        "tank_us_gal\n"
    )
    good = f"{site.code},LD-7,{unit_class.name},Maker,M-1,S77,2019,6,2019-03-01,100\n"
    text = (
        head
        + good
        + (
            f"nowhere,LD-8,{unit_class.name},Maker,M-1,S78,2019,6,2019-03-01,\n"
            f"{site.code},LD-9,Spaceship,Maker,M-1,S79,2019,6,2019-03-01,\n"
            f"{site.code},LD-10,{unit_class.name},Maker,M-1,S80,1900,6,2019-03-01,\n"
        )
    )
    path = tmp_path / "units.csv"
    path.write_text(text, encoding="utf-8")
    layout = layout_for(kind="units")
    result = file_import(path=path, layout=layout, mode=GOOD_ROWS_ONLY, now=NOW)
    assert [str(e) for e in result.errors] == [
        "units.csv line 3, column site: no site with code 'nowhere'",
        "units.csv line 4, column unit_class: no unit class named 'Spaceship'",
        "units.csv line 5, column year: 1900 is below the lowest allowed (1950)",
    ]
    unit = Unit.objects.get(fleet_number="LD-7")
    # NIST Handbook 44 Appendix C: 1 US gallon = 3.785411784 L (exact).
    assert unit.tank_capacity_l == pytest.approx(378.5411784)
    # The same file again with another tank: the unit is updated, not duplicated.
    path.write_text(head + good.replace(",100\n", ",120\n"), encoding="utf-8")
    again = file_import(path=path, layout=layout, mode=GOOD_ROWS_ONLY, now=NOW)
    assert again.counts == {"created": 0, "updated": 1, "unchanged": 0, "refused": 0}
    assert Unit.objects.filter(fleet_number="LD-7").count() == 1
