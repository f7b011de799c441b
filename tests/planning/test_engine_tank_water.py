"""The separator's current fuel: the unit's tank, well mixed, as the filters' current fuel.

Hand-worked volumes (a fill into a full tank makes its own room, services/tank.py) and the
mass balance of a mix (mg/kg is per kilogram of fuel: water = sum of litres x density x mg/kg,
density by volume). Each fuel's free water is services.fuel_water's, checked there against
Hibbard and Schalla, NACA RM E52D24 (1952).
"""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from fleetfuel.fleet.models import Unit, UnitClass
from fleetfuel.planning import engine_tank
from services import fuel_intake as fi
from services import fuel_quality as fq
from services import fuel_water as fw
from tests.services.test_fuel_quality import quality_make

NOW = datetime(2026, 6, 15, 12, tzinfo=UTC)


def test_fuels_of_two_densities_mix_their_water_by_mass() -> None:
    unit = Unit(tank_capacity_l=1000.0, unit_class=UnitClass(typical_tank_l=None))
    a = quality_make(water_mg_kg=500.0, temperature_c=15.0, fame_pct_v=0.0, density_kg_l=0.820)
    b = quality_make(water_mg_kg=300.0, temperature_c=15.0, fame_pct_v=0.0, density_kg_l=0.850)
    paired = [
        (fi.Fueling(at=NOW - timedelta(days=2), litres=500.0, source_id=1, ref="1"), a),
        (fi.Fueling(at=NOW - timedelta(days=1), litres=500.0, source_id=1, ref="2"), b),
    ]
    water, density, _ = engine_tank.tank_water(
        unit=unit, paired=paired, hours=[], burn_l_per_h=20.0, now=NOW,
        reference_mg_kg=200.0, coldest_c=None,
    )  # fmt: skip
    # Nothing burned: the tank of 1,000 L holds 250 L of its first fuel (the reference, at the
    # default density), 250 L of the first fill and the 500 L of the second.
    free = {
        q: fw.free_water_or_reference(quality=q, reference_mg_kg=200.0, coldest_c=None)
        for q in (None, a, b)
    }
    litres = {None: 250.0, a: 250.0, b: 500.0}
    rho = {None: fq.DEFAULT_DENSITY_KG_L, a: 0.820, b: 0.850}
    kg = {q: litres[q] * rho[q] for q in litres}
    assert density == pytest.approx(sum(kg.values()) / 1000.0)
    assert water == pytest.approx(sum(kg[q] * free[q] for q in kg) / sum(kg.values()))
