"""A bulk tank's fuel at a fueling's instant is worked out once per state of the tank and
shared by every unit of the batch (engine_tank.source_fuel_at): the answer must be the one
the tank run gives at that very instant, whatever the deliveries, samples and instants."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

from hypothesis import given
from hypothesis import strategies as st

from fleetfuel.planning.engine_tank import SourceFuel, source_fuel, source_fuel_at
from services import fuel_intake as fi
from services import fuel_quality as fq

START = datetime(2026, 1, 1, tzinfo=UTC)
hours = st.integers(0, 24 * 60)
codes = st.tuples(st.integers(14, 24), st.integers(12, 22), st.integers(9, 19)).filter(
    lambda c: c[0] >= c[1] >= c[2]
)


def sample(at: int, code: tuple[int, int, int]) -> fi.Sample:
    quality = fq.FuelQuality(
        codes=code, counts_per_ml=None, water_mg_kg=80.0, fame_pct_v=0.0, temperature_c=15.0,
        label=f"sample at {at} h",
    )  # fmt: skip
    return fi.Sample(
        at=START + timedelta(hours=at), source_id=1, unit_sample=False, quality=quality
    )


@given(
    deliveries=st.lists(st.tuples(hours, st.integers(1_000, 40_000)), min_size=1, max_size=8),
    samples=st.lists(st.tuples(hours, codes), max_size=5),
    instants=st.lists(st.tuples(hours, st.sampled_from([0, 1, 2])), min_size=1, max_size=12),
)
def test_the_shared_answer_is_the_tank_run_at_that_instant(
    deliveries: list[tuple[int, int]],
    samples: list[tuple[int, tuple[int, int, int]]],
    instants: list[tuple[int, int]],
) -> None:
    def source() -> SourceFuel:
        return SourceFuel(
            deliveries=[(START + timedelta(hours=h), float(litres), f"delivery at {h} h")
                        for h, litres in sorted(deliveries)],
            samples=[sample(h, code) for h, code in samples],
        )  # fmt: skip

    shared = source()  # one for every instant, as a batch keeps it
    for h, channel in instants:
        at = START + timedelta(hours=h)
        alone = source_fuel(source=source(), at=at, channel=channel)
        assert source_fuel_at(source=shared, at=at, channel=channel) == alone
