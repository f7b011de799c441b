"""The well-mixed tank (services/tank.py) against a hand-worked mixing example and the
mass balance of a perfectly mixed vessel (any chemical-engineering text on the continuous
stirred tank, e.g. Levenspiel, Chemical Reaction Engineering, 3rd ed., ch. 5): burning b
litres from a tank of V litres and refilling with b litres of fuel at c1 leaves

    c_n = c1 + (c0 - c1) r^n,  r = 1 - b / V,

after n cycles (a geometric series), and the contaminant burned over them sums to
n b c1 + V (c0 - c1) (1 - r^n)."""

from __future__ import annotations

import math
from datetime import UTC, datetime, timedelta

import pytest
from hypothesis import given
from hypothesis import strategies as st

from services.tank import (
    FALLBACK_TANK_L,
    UNLOGGED_LABEL,
    Fill,
    Measure,
    fills_displaced,
    path_litres,
    tank_capacity,
    tank_run,
)

T0 = datetime(2026, 11, 1, tzinfo=UTC)


def day(n: float) -> datetime:
    return T0 + timedelta(days=n)


def initial(conc: float = 1_000.0) -> Fill:
    return Fill(at=T0, litres=400.0, concentration_per_ml=conc, reference_assumed=True,
                label="fuel in the tank before the first fueling")  # fmt: skip


DIRTY = Fill(at=day(2), litres=200.0, concentration_per_ml=4_000.0, reference_assumed=False,
             label="200 L from Bulk tank B, sample S-1")  # fmt: skip
PATH = [(day(0), 0.0), (day(2), 200.0), (day(4), 300.0)]  # cumulative litres burned


def test_hand_worked_mixing_example() -> None:
    # By hand: 400 L at 1,000/mL; 200 L burned by day 2 (200 x 1,000 = 200,000). 200 L at
    # 4,000/mL fills it: (200 x 1,000 + 200 x 4,000) / 400 = 2,500/mL. 100 L burned by day 4,
    # half of each: 100 x 2,500 = 250,000. Left: 150 L of each, still 2,500/mL.
    s = tank_run(capacity_l=400.0, initial=initial(), fills=[DIRTY], measures=[], burned=PATH,
                 since=day(0), until=day(4))  # fmt: skip
    assert math.isclose(s.concentration_per_ml, 2_500.0)
    assert math.isclose(s.burned_since, 300.0)
    assert math.isclose(s.loading_since, 450_000.0)
    first, dirty = s.parcels
    assert dirty.fill is DIRTY
    assert math.isclose(dirty.burned_since, 50.0) and math.isclose(dirty.left, 150.0)
    assert math.isclose(first.burned_total, 250.0) and math.isclose(first.left, 150.0)
    assert not s.reference_assumed  # half of the tank is sampled fuel


def test_only_fuel_burned_after_since_counts() -> None:
    # From day 2 on only the 100 L at 2,500/mL counts: 250,000.
    s = tank_run(capacity_l=400.0, initial=initial(), fills=[DIRTY], measures=[], burned=PATH,
                 since=day(2), until=day(4))  # fmt: skip
    assert math.isclose(s.burned_since, 100.0)
    assert math.isclose(s.loading_since, 250_000.0)


def test_fuel_put_in_but_not_burned_loads_nothing() -> None:
    # 1,000 L of dirty fuel into a tank that has not run since: nothing burned, nothing
    # loaded, but the tank now holds it (a fill bigger than the tank fills it).
    big = Fill(at=day(1), litres=1_000.0, concentration_per_ml=16_000.0,
               reference_assumed=False, label="1,000 L dirty")  # fmt: skip
    s = tank_run(capacity_l=400.0, initial=initial(), fills=[big], measures=[],
                 burned=[(day(0), 0.0), (day(5), 0.0)], since=day(1), until=day(5))  # fmt: skip
    assert s.burned_since == 0.0 and s.loading_since == 0.0
    assert math.isclose(s.concentration_per_ml, 16_000.0)


def test_burn_and_refill_follows_the_geometric_series() -> None:
    v, b, c0, c1, n = 400.0, 100.0, 10_000.0, 1_000.0, 6
    fills = [Fill(at=day(k + 0.5), litres=b, concentration_per_ml=c1, reference_assumed=False,
                  label=f"refill {k}") for k in range(n)]  # fmt: skip
    path = [(day(0), 0.0)] + [(day(k + 0.5), b * (k + 1)) for k in range(n)]
    s = tank_run(capacity_l=v, initial=initial(c0), fills=fills, measures=[], burned=path,
                 since=day(0), until=day(n))  # fmt: skip
    r = 1 - b / v
    assert math.isclose(s.concentration_per_ml, c1 + (c0 - c1) * r**n)
    assert math.isclose(s.loading_since, n * b * c1 + v * (c0 - c1) * (1 - r**n))


def test_a_tank_sample_replaces_what_the_books_say() -> None:
    # By hand: as above to day 3 (50 L more at 2,500 = 125,000); the tank's own sample then
    # reads 3,000/mL and the last 50 L carry that: 200,000 + 125,000 + 150,000 = 475,000.
    sample = Measure(at=day(3), concentration_per_ml=3_000.0, label="tank sample T-1")
    s = tank_run(capacity_l=400.0, initial=initial(), fills=[DIRTY], measures=[sample],
                 burned=PATH, since=day(0), until=day(4))  # fmt: skip
    assert math.isclose(s.loading_since, 200_000.0 + 125_000.0 + 150_000.0)
    assert math.isclose(s.concentration_per_ml, 3_000.0)
    assert all(p.measured_by == "tank sample T-1" for p in s.parcels if p.left > 0)


def test_a_fill_beyond_the_room_scales_the_old_fuel_down() -> None:
    # 300 L into a full 400 L tank that burned nothing: the books were 300 L out; 100 L of
    # the old fuel stay: (100 x 1,000 + 300 x 4,000) / 400 = 3,250/mL.
    fill = Fill(at=day(1), litres=300.0, concentration_per_ml=4_000.0, reference_assumed=False,
                label="300 L")  # fmt: skip
    s = tank_run(capacity_l=400.0, initial=initial(), fills=[fill], measures=[], burned=[],
                 since=day(0), until=day(2))  # fmt: skip
    assert math.isclose(s.concentration_per_ml, 3_250.0)


def test_path_is_linear_between_points_and_steps_take_the_later_value() -> None:
    path = [(day(0), 0.0), (day(2), 100.0), (day(2), 150.0)]
    assert path_litres(path, day(1)) == 50.0
    assert path_litres(path, day(2)) == 150.0
    assert path_litres(path, day(9)) == 150.0 and path_litres(path, day(-1)) == 0.0


def test_capacity_falls_back_in_order() -> None:
    assert tank_capacity(unit_l=600.0, class_l=300.0, largest_fill_l=200.0)[0] == 600.0
    assert tank_capacity(unit_l=None, class_l=300.0, largest_fill_l=200.0)[0] == 300.0
    assert tank_capacity(unit_l=None, class_l=None, largest_fill_l=250.0)[0] == 250.0
    assert tank_capacity(unit_l=None, class_l=None, largest_fill_l=None)[0] == FALLBACK_TANK_L


def test_bad_numbers_are_refused_by_name() -> None:
    with pytest.raises(ValueError, match="litres"):
        Fill(at=T0, litres=math.nan, concentration_per_ml=1.0, reference_assumed=True, label="x")
    with pytest.raises(ValueError, match="capacity"):
        tank_run(capacity_l=0.0, initial=initial(), fills=[], measures=[], burned=[],
                 since=T0, until=T0)  # fmt: skip


def test_burning_more_than_the_log_holds_never_over_counts_a_fueling() -> None:
    # Mass balance: what is burned is what the tank held plus fuel the log never saw. By hand:
    # 400 L at 1,000/mL plus DIRTY's 200 L (mix 2,500/mL after 200 L burned) and then 600 L
    # more burned by day 4 with no fueling: the 400 L in the tank go (200 L of each parcel),
    # and 200 L come from fuel not in the log, taken at the last mix (2,500/mL).
    path = [(day(0), 0.0), (day(2), 200.0), (day(4), 800.0)]
    s = tank_run(capacity_l=400.0, initial=initial(), fills=[DIRTY], measures=[], burned=path,
                 since=day(0), until=day(4))  # fmt: skip
    logged = [p for p in s.parcels if p.fill.label != UNLOGGED_LABEL]
    for parcel in logged[1:]:  # every fueling: burned at most what it put in
        assert parcel.burned_total <= parcel.fill.litres + 1e-9
    (unlogged,) = [p for p in s.parcels if p.fill.label == UNLOGGED_LABEL]
    assert math.isclose(unlogged.burned_total, 200.0)
    assert math.isclose(s.burned_since, 800.0)
    # 200 x 1,000 + 400 x 2,500 + 200 x 2,500
    assert math.isclose(s.loading_since, 200_000.0 + 1_000_000.0 + 500_000.0)


@given(
    fills=st.lists(st.tuples(st.floats(0.1, 3), st.floats(0, 20_000)), max_size=400),
    burn_per_day=st.floats(0, 120),
)
def test_every_litre_is_burned_or_still_in_the_tank(
    fills: list[tuple[float, float]], burn_per_day: float
) -> None:
    # Mass balance of the vessel (Levenspiel, ch. 5): each fill tops the tank up with what
    # was burned since the one before (so none overflows), and what went in is what was
    # burned plus what is left; what was burned is the path's. Over a year of top-ups,
    # however many parcels the tank has seen.
    capacity, at, put_in = 400.0, 0.0, []
    for gap, conc in fills:
        at += gap
        put_in.append(Fill(at=day(at), litres=burn_per_day * gap, concentration_per_ml=conc,
                           reference_assumed=False, label=f"fill at day {at}"))  # fmt: skip
    end = at + 1
    s = tank_run(capacity_l=capacity, initial=initial(), fills=put_in, measures=[],
                 burned=[(day(0), 0.0), (day(end), burn_per_day * end)], since=day(0),
                 until=day(end))  # fmt: skip
    total_in = capacity + sum(f.litres for f in put_in)
    burned = sum(p.burned_total for p in s.parcels)
    left = sum(p.left for p in s.parcels)
    assert math.isclose(burned + left, total_in, rel_tol=1e-9)
    assert math.isclose(s.burned_since, burn_per_day * end, rel_tol=1e-9, abs_tol=1e-9)
    assert all(p.fill.label != UNLOGGED_LABEL for p in s.parcels)  # never burned dry


def test_fills_before_the_first_draw_push_the_old_fuel_out_geometrically() -> None:
    # A full tank of V litres topped with b litres keeps (V - b) / V of what it held: after n
    # fills (V - b)^n / V^n of the fuel from before them (the geometric series above, with
    # nothing burned). Half the tank each time: 0.5^40 = 9.1e-13 is the first power below
    # 1e-12, so of 100 such fills before the first draw, the 60 oldest can be left out.
    fills = [(day(n / 10), 200.0) for n in range(100)]
    assert fills_displaced(fills=fills, capacity_l=400.0, first_draw_at=day(20)) == 60
    # A draw before them: each fill then has room of its own, none is pushed out unburned.
    assert fills_displaced(fills=fills, capacity_l=400.0, first_draw_at=day(-1)) == 0


@given(
    fills=st.lists(
        st.tuples(st.floats(0.1, 3), st.floats(1, 450), st.floats(0, 20_000)),
        min_size=1,
        max_size=150,
    ),  # fmt: skip
    first_draw=st.floats(0, 200),
)
def test_leaving_out_the_displaced_fills_changes_nothing_that_shows(
    fills: list[tuple[float, float, float]], first_draw: float
) -> None:
    capacity, at, put_in = 400.0, 0.0, []
    for gap, litres, conc in fills:
        at += gap
        put_in.append(Fill(at=day(at), litres=litres, concentration_per_ml=conc,
                           reference_assumed=False, label=f"fill at day {at}"))  # fmt: skip
    path = [(day(first_draw), 0.0), (day(at + 1), 50.0 * (at + 1 - first_draw))]
    skip = fills_displaced(fills=[(f.at, f.litres) for f in put_in], capacity_l=capacity,
                           first_draw_at=day(first_draw))  # fmt: skip
    run = {
        kept: tank_run(capacity_l=capacity, initial=initial(), fills=put_in[kept:], measures=[],
                       burned=path, since=day(first_draw), until=day(at + 1))
        for kept in (0, skip)
    }  # fmt: skip
    whole, short = run[0], run[skip]
    assert math.isclose(short.loading_since, whole.loading_since, rel_tol=1e-9, abs_tol=1e-3)
    assert math.isclose(short.concentration_per_ml, whole.concentration_per_ml, rel_tol=1e-9,
                        abs_tol=1e-6)  # fmt: skip
