"""Which fuel each fueling brought, and which fuel is current: hand-worked against ISO 4406
Table 1 and the World-Wide Fuel Charter's reference fuel."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from services import fuel_intake as fi
from tests.services.test_fuel_quality import quality_make


def _at(day: int) -> datetime:
    return datetime(2026, 3, day, 12, tzinfo=UTC)


def _sample(day: int, source: int | None, label: str, *, tank: bool = False) -> fi.Sample:
    return fi.Sample(
        at=_at(day), source_id=source, unit_sample=tank, quality=quality_make(label=label)
    )


def test_fueling_takes_its_source_sample_taken_at_or_before_it():
    samples = [_sample(1, 7, "A1"), _sample(10, 7, "A10"), _sample(5, 8, "B5")]
    fuelings = [
        fi.Fueling(at=_at(3), litres=100.0, source_id=7, ref="F1"),
        fi.Fueling(at=_at(10), litres=100.0, source_id=7, ref="F2"),  # same instant counts
        fi.Fueling(at=_at(4), litres=100.0, source_id=8, ref="F3"),  # B5 is later: none
        fi.Fueling(at=_at(12), litres=100.0, source_id=None, ref="F4"),
    ]
    labels = [
        None if q is None else q.label
        for _, q in fi.quality_for_fuelings(fuelings=fuelings, samples=samples)
    ]
    assert labels == ["A1", "A10", None, None]


def test_tank_sample_overrides_back_to_the_previous_tank_sample():
    samples = [
        _sample(1, 7, "source"),
        _sample(6, None, "tank-6", tank=True),
        _sample(15, None, "tank-15", tank=True),
    ]
    fuelings = [fi.Fueling(at=_at(d), litres=50.0, source_id=7, ref=f"F{d}") for d in (2, 6, 7, 20)]
    pairs = fi.quality_for_fuelings(fuelings=fuelings, samples=samples)
    labels = [None if q is None else q.label for _, q in pairs]
    # day 2 and day 6 (at the sample) -> tank-6; day 7 -> tank-15; day 20: after every
    # tank sample, so the source sample applies.
    assert labels == ["tank-6", "tank-6", "tank-15", "source"]
    assert [f.ref for f, _ in pairs] == ["F2", "F6", "F7", "F20"]


def test_volume_weighted_concentration_hand_worked():
    # Hand-worked: 100 L of fuel coded 19/16/10 (>=6 um(c): up to 640/mL, ISO 4406:1999
    # Table 1) and 300 L with no sample (reference 18/16/13, WWFC 6th ed.: 640/mL at >=6;
    # 2,500/mL at >=4). At >=4 um(c): (100 x 5,000 + 300 x 2,500) / 400 = 3,125/mL.
    sampled = quality_make(codes=(19, 16, 10), label="S-1")
    pairs = [
        (fi.Fueling(at=_at(1), litres=100.0, source_id=1, ref="F1"), sampled),
        (fi.Fueling(at=_at(2), litres=300.0, source_id=2, ref="F2"), None),
    ]
    mean, reference_litres, labels = fi.volume_weighted_concentration(pairs=pairs, channel=0)
    assert mean == pytest.approx(3_125.0)
    assert reference_litres == 300.0
    assert labels == ["S-1"]


def test_volume_weighted_concentration_with_no_fuel_is_the_reference():
    mean, reference_litres, labels = fi.volume_weighted_concentration(pairs=[], channel=2)
    assert (mean, reference_litres, labels) == (80.0, 0.0, [])  # 13 -> 80/mL, Table 1


@pytest.mark.parametrize("litres", [-1.0, float("nan"), float("inf"), 1e12, 20_000.1])
def test_impossible_fuelings_are_refused_by_name(litres):
    # A 10^12 L fueling is a typing error; one fueling into one machine above 20,000 L is too
    # (common practice: machine tanks hold a few thousand litres).
    with pytest.raises(ValueError, match="fueling F9: litres"):
        fi.Fueling(at=_at(1), litres=litres, source_id=None, ref="F9")
    assert fi.Fueling(at=_at(1), litres=20_000.0, source_id=None, ref="F9").litres == 20_000.0


# --- the fuel now in use ---------------------------------------------------------------

NOW = datetime(2026, 3, 31, 12, tzinfo=UTC)


def _fueled(days_ago: float, litres: float = 100.0, ref: str = "F") -> fi.Fueling:
    return fi.Fueling(at=NOW - timedelta(days=days_ago), litres=litres, source_id=1, ref=ref)


def test_current_fuel_is_the_last_two_weeks_edge_included() -> None:
    # common practice: a tank turns over within days to weeks, so fuel from the last 14 days
    # is what the engine burns now.
    pairs = [(_fueled(d, ref=f"F{d}"), None) for d in (20, 14.0001, 14, 3)]
    assert [f.ref for f, _ in fi.current_fuel(pairs=pairs, now=NOW)] == ["F14", "F3"]


def test_with_nothing_in_two_weeks_the_last_three_fuelings_are_current() -> None:
    pairs = [(_fueled(d, ref=f"F{d}"), None) for d in (60, 40, 30, 20)]
    assert [f.ref for f, _ in fi.current_fuel(pairs=pairs, now=NOW)] == ["F40", "F30", "F20"]
    assert fi.current_fuel(pairs=[], now=NOW) == []


def test_current_concentration_hand_worked() -> None:
    # 8 clean fuelings (18/16/13, the WWFC 6th ed. reference: 2,500/mL at >=4 um(c)) and 6
    # dirty ones (20/18/15: 10,000/mL, ISO 4406:1999 Table 1), 200 L each, in the last two
    # weeks; an older, dirtier fueling no longer counts. (8 x 2,500 + 6 x 10,000) / 14.
    clean = quality_make(codes=(18, 16, 13), label="clean")
    dirty = quality_make(codes=(20, 18, 15), label="dirty")
    pairs = [(_fueled(20, 200.0), quality_make(codes=(23, 21, 18)))]
    pairs += [(_fueled(13.5 - d, 200.0), clean) for d in range(8)]
    pairs += [(_fueled(5.5 - d, 200.0), dirty) for d in range(6)]
    concentration, assumed = fi.current_concentration(pairs=pairs, now=NOW, channel=0)
    assert concentration == pytest.approx((8 * 2_500 + 6 * 10_000) / 14)
    assert assumed is False


def test_a_fueling_after_now_is_refused_by_name() -> None:
    later = (_fueled(-1.0, ref="F-late"), None)
    with pytest.raises(ValueError, match="fueling F-late: dated .* after now"):
        fi.current_concentration(pairs=[(_fueled(2), None), later], now=NOW, channel=0)


def test_current_concentration_without_samples_or_fuel_is_the_reference() -> None:
    # The reference fuel, 18/16/13 (WWFC 6th ed.): 640/mL at >=6 um(c) (ISO 4406 Table 1).
    unsampled = [(_fueled(2), None), (_fueled(1), None)]
    assert fi.current_concentration(pairs=unsampled, now=NOW, channel=1) == (640.0, True)
    assert fi.current_concentration(pairs=[], now=NOW, channel=1) == (640.0, True)
    # Half sampled: not all assumed.
    half = [(_fueled(2), quality_make(codes=(19, 17, 14))), (_fueled(1), None)]
    concentration, assumed = fi.current_concentration(pairs=half, now=NOW, channel=1)
    assert (concentration, assumed) == (pytest.approx((1_300 + 640) / 2), False)


# --- the burn rate ----------------------------------------------------------------------


def test_measured_burn_hand_worked() -> None:
    # Hand-worked: 1,000 h to 1,100 h over 10 days; 10 fuelings of 200 L after the first
    # reading, the last at the second reading itself: 2,000 L / 100 h = 20 L/h. A fueling at
    # the first reading filled the tank for the hours before it and does not count.
    start, end = (NOW - timedelta(days=10), 1_000.0), (NOW, 1_100.0)
    fuelings = [_fueled(10, 500.0)] + [_fueled(d, 200.0) for d in range(9, -1, -1)]
    assert fi.measured_burn(start=start, end=end, fuelings=fuelings) == pytest.approx(20.0)


def test_measured_burn_needs_ten_hours_and_some_fuel() -> None:
    # common practice: over a few hours the tank level, not the burn, decides what went in.
    fuel = [_fueled(1, 200.0)]
    short = ((NOW - timedelta(days=2), 1_000.0), (NOW, 1_009.9))
    assert fi.measured_burn(start=short[0], end=short[1], fuelings=fuel) is None
    ten = ((NOW - timedelta(days=2), 1_000.0), (NOW, 1_010.0))
    assert fi.measured_burn(start=ten[0], end=ten[1], fuelings=fuel) == pytest.approx(20.0)
    assert fi.measured_burn(start=ten[0], end=ten[1], fuelings=[]) is None


@pytest.mark.parametrize("hours", [float("nan"), float("inf"), -1.0])
def test_measured_burn_refuses_impossible_hours_by_name(hours: float) -> None:
    with pytest.raises(ValueError, match="end hours"):
        fi.measured_burn(start=(_at(1), 100.0), end=(_at(2), hours), fuelings=[])
