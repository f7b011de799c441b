"""The data model refuses bad input with clear, field-level errors."""

from __future__ import annotations

from datetime import UTC, date, datetime
from typing import Any

import pytest
from django.core.exceptions import ValidationError
from django.db import IntegrityError, transaction

from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
    FuelSample,
    MeterReading,
    MeterReplacement,
    Unit,
)
from tests import factories as f


def test_fleet_number_is_unique_per_site(unit: Any, other_site: Any) -> None:
    dup = Unit(
        site=unit.site,
        unit_class=unit.unit_class,
        fleet_number=unit.fleet_number,
        make="M",
        model="X",
        serial_number="S",
        year=2020,
        cylinders=6,
        in_service_on=date(2020, 1, 1),
    )
    with pytest.raises(ValidationError) as err:
        dup.full_clean()
    assert "already at this site" in str(err.value)
    # The same number at another depot is fine.
    dup.site = other_site
    dup.full_clean()
    with transaction.atomic(), pytest.raises(IntegrityError):
        Unit.objects.create(
            **{
                **{
                    k: getattr(unit, k)
                    for k in (
                        "site",
                        "unit_class",
                        "fleet_number",
                        "make",
                        "model",
                        "serial_number",
                        "year",
                        "cylinders",
                        "in_service_on",
                    )
                }
            }
        )


def test_one_fitted_part_per_position(unit: Any) -> None:
    with transaction.atomic(), pytest.raises(IntegrityError):
        Component.objects.create(
            unit=unit,
            kind=ComponentKind.INJECTOR,
            position=2,
            installed_on=date(2026, 1, 1),
            installed_hours=0,
        )
    # A removed part frees the position.
    Component.objects.filter(unit=unit, kind=ComponentKind.INJECTOR, position=2).update(
        removed_on=date(2026, 2, 1)
    )
    Component.objects.create(
        unit=unit,
        kind=ComponentKind.INJECTOR,
        position=2,
        installed_on=date(2026, 2, 1),
        installed_hours=10,
    )
    # Single parts (no position) are unique too: a second fitted fine filter is refused.
    with transaction.atomic(), pytest.raises(IntegrityError):
        Component.objects.create(
            unit=unit,
            kind=ComponentKind.FINE_FILTER,
            installed_on=date(2026, 1, 1),
            installed_hours=0,
        )


def test_injector_needs_a_cylinder_within_the_engine(unit: Any) -> None:
    c = Component(
        unit=unit,
        kind=ComponentKind.INJECTOR,
        position=None,
        installed_on=date(2026, 1, 1),
        installed_hours=0,
    )
    with pytest.raises(ValidationError, match="cylinder number"):
        c.clean()
    c.position = 9
    with pytest.raises(ValidationError, match="6 cylinders"):
        c.clean()


def test_meter_reading_cannot_go_backwards_without_a_replacement(unit: Any) -> None:
    MeterReading.objects.create(unit=unit, taken_at=datetime(2026, 3, 1, tzinfo=UTC), hours=1200)
    lower = MeterReading(unit=unit, taken_at=datetime(2026, 3, 5, tzinfo=UTC), hours=15)
    with pytest.raises(ValidationError) as err:
        lower.full_clean()
    assert "lower than the previous reading" in str(err.value)
    assert "hours" in err.value.message_dict
    MeterReplacement.objects.create(
        unit=unit,
        replaced_at=datetime(2026, 3, 4, tzinfo=UTC),
        old_meter_final=1230,
        new_meter_start=0,
    )
    lower.full_clean()  # accepted now


@pytest.mark.parametrize(
    "text,message",
    [
        ("18/16", "three"),
        ("18/x/13", "not a scale number"),
        ("18/16/31", "outside"),
        ("13/16/18", ""),  # a larger size cannot have more particles than a smaller one
    ],
)
def test_sample_code_is_parsed_strictly(db: Any, text: str, message: str) -> None:
    source = f.source_make()
    sample = FuelSample(
        reference="LAB-1", source=source, sampled_at=datetime(2026, 3, 1, tzinfo=UTC), iso4406=text
    )
    with pytest.raises(ValidationError) as err:
        sample.full_clean()
    assert "iso4406" in err.value.message_dict
    assert message in " ".join(err.value.message_dict["iso4406"])


def test_sample_from_counts_gets_its_code(db: Any) -> None:
    # ISO 4406:1999 Table 1: 3,000/mL -> 19 (2,500 < n <= 5,000); 500 -> 16; 7 -> 10.
    sample = FuelSample(
        reference="LAB-2",
        source=f.source_make(),
        sampled_at=datetime(2026, 3, 1, tzinfo=UTC),
        count_4_per_ml=3000,
        count_6_per_ml=500,
        count_14_per_ml=7,
    )
    sample.full_clean()
    assert (sample.code_4, sample.code_6, sample.code_14) == (19, 16, 10)
    assert sample.iso4406 == "19/16/10"


def test_sample_comes_from_a_source_or_a_unit_not_both(unit: Any) -> None:
    sample = FuelSample(
        reference="LAB-3",
        source=f.source_make(),
        unit=unit,
        sampled_at=datetime(2026, 3, 1, tzinfo=UTC),
        iso4406="18/16/13",
    )
    with pytest.raises(ValidationError, match="either a fuel source or a unit"):
        sample.full_clean()


def test_site_time_zone_is_checked(db: Any) -> None:
    site = f.site_make()
    site.time_zone = "Mars/Olympus"
    with pytest.raises(ValidationError, match="time zone"):
        site.full_clean()


def test_fitting_a_unit_gives_every_part_once_and_per_cylinder_parts_per_cylinder(
    site: Any, unit_class: Any
) -> None:
    from fleetfuel.fleet.actions import unit_fuel_system_fit

    unit = Unit.objects.create(
        site=site,
        unit_class=unit_class,
        fleet_number="FIT-1",
        make="M",
        model="X",
        serial_number="S",
        year=2020,
        cylinders=8,
        in_service_on=date(2020, 1, 1),
    )
    parts = unit_fuel_system_fit(
        unit=unit,
        installed_on=date(2020, 1, 1),
        filters_installed_on=date(2026, 5, 1),
        filters_installed_hours=4200,
    )
    kinds = [p.kind for p in parts]
    # Nine single parts plus an injector and a high-pressure connector per cylinder.
    assert len(parts) == 9 + 2 * 8 == len({(p.kind, p.position) for p in parts})
    assert kinds.count(ComponentKind.INJECTOR) == kinds.count(ComponentKind.HP_CONNECTOR) == 8
    fine = next(p for p in parts if p.kind == ComponentKind.FINE_FILTER)
    rail = next(p for p in parts if p.kind == ComponentKind.RAIL)
    assert (fine.installed_on, fine.installed_hours) == (date(2026, 5, 1), 4200)
    assert (rail.installed_on, rail.installed_hours) == (date(2020, 1, 1), 0)
