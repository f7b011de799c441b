"""Source-level range and standing rules, checked against ISO 4406 Table 1 (1999, kept in
2021), the World-Wide Fuel Charter 6th ed. (2019) 18/16/13, and EN 590's 200 mg/kg water."""

from __future__ import annotations

from datetime import UTC, datetime, timedelta

import pytest

from services import source_quality as sq

WWFC = (18, 16, 13)  # World-Wide Fuel Charter, 6th ed. (2019), categories 2-4
EN590_WATER = 200.0  # EN 590, mg/kg by EN ISO 12937
NOW = datetime(2026, 12, 2, 6, 0, tzinfo=UTC)


def test_common_delivered_diesel_two_over_is_in_range_with_a_margin_of_two() -> None:
    # 20/18/15 is two scale numbers over 18/16/13 on every channel: ISO 4406 Table 1 ranges
    # double per number, so about four times the particles, inside a margin of two.
    verdict = sq.sample_range_check(codes=(20, 18, 15), water_mg_kg=80, reference=WWFC, margin=2)
    assert not verdict.out_of_range and verdict.reasons == ()


def test_the_dirty_delivery_is_out_of_range_on_every_channel() -> None:
    verdict = sq.sample_range_check(codes=(22, 20, 17), water_mg_kg=140, reference=WWFC, margin=2)
    assert verdict.out_of_range and verdict.particles_over and not verdict.water_over
    assert len(verdict.reasons) == 3
    # 22 vs 18 at >=4 um(c): 4 numbers, 2^4 = 16 times (Table 1: 20,000-40,000 vs 1,300-2,500
    # per mL, 16 times at both ends within the table's rounding).
    assert "4 scale numbers above" in verdict.reasons[0] and "16 times" in verdict.reasons[0]
    assert "≥4 µm(c)" in verdict.reasons[0] and "≥14 µm(c)" in verdict.reasons[2]


def test_one_channel_over_is_enough() -> None:
    verdict = sq.sample_range_check(codes=(18, 16, 16), water_mg_kg=None, reference=WWFC, margin=2)
    assert verdict.out_of_range and len(verdict.reasons) == 1 and "≥14 µm(c)" in verdict.reasons[0]


def test_water_over_en590_only_above_200() -> None:
    at_limit = sq.sample_range_check(codes=None, water_mg_kg=EN590_WATER, reference=WWFC, margin=2)
    over = sq.sample_range_check(codes=(19, 17, 14), water_mg_kg=780, reference=WWFC, margin=2)
    assert not at_limit.out_of_range  # EN 590: "max 200 mg/kg", 200 itself complies
    assert over.out_of_range and over.water_over and not over.particles_over
    assert "780 mg/kg" in over.reasons[0] and "EN 590" in over.reasons[0]


def test_a_missing_first_channel_is_not_compared_and_few_counted_is_said() -> None:
    verdict = sq.sample_range_check(
        codes=(None, 16, 16), marks=("", "", "≥"), water_mg_kg=None, reference=WWFC, margin=2
    )
    assert verdict.out_of_range and "uncertain" in verdict.reasons[0]
    assert "-/16/≥16" in verdict.reasons[0]  # ISO 4406:2021 writes the mark before the number


def test_bad_inputs_are_refused() -> None:
    with pytest.raises(ValueError, match="water_mg_kg"):
        sq.sample_range_check(codes=None, water_mg_kg=float("nan"), reference=WWFC, margin=2)
    with pytest.raises(ValueError, match="margin"):
        sq.sample_range_check(codes=None, water_mg_kg=10, reference=WWFC, margin=-1)


def test_strictest_reference_is_the_cleanest_channel_by_channel() -> None:
    assert sq.reference_strictest(references=[]) == WWFC
    assert sq.reference_strictest(references=[(18, 16, 13), (None, 15, 14)]) == (18, 15, 13)


def test_a_sample_stands_until_a_newer_sample_a_delivery_or_its_age() -> None:
    sampled = NOW - timedelta(days=10)
    stands = sq.sample_standing_check(
        sampled_at=sampled, deliveries_at=[sampled - timedelta(hours=2)],
        later_sample_at=None, max_age_days=90, now=NOW,
    )  # fmt: skip
    assert stands.stands
    delivered = sq.sample_standing_check(
        sampled_at=sampled, deliveries_at=[NOW - timedelta(days=3)],
        later_sample_at=None, max_age_days=90, now=NOW,
    )  # fmt: skip
    assert delivered.standing is sq.Standing.DELIVERY_SINCE
    newer = sq.sample_standing_check(
        sampled_at=sampled, deliveries_at=[NOW - timedelta(days=3)],
        later_sample_at=NOW - timedelta(days=2), max_age_days=90, now=NOW,
    )  # fmt: skip
    assert newer.standing is sq.Standing.NEWER_SAMPLE
    aged = sq.sample_standing_check(
        sampled_at=NOW - timedelta(days=91), deliveries_at=[],
        later_sample_at=None, max_age_days=90, now=NOW,
    )  # fmt: skip
    assert aged.standing is sq.Standing.AGED and "91 days" in aged.reason
    with pytest.raises(ValueError, match="after now"):
        sq.sample_standing_check(
            sampled_at=NOW + timedelta(hours=1), deliveries_at=[], later_sample_at=None,
            max_age_days=90, now=NOW,
        )  # fmt: skip


def test_reach_starts_at_the_delivery_and_sums_litres_per_unit() -> None:
    sampled = NOW - timedelta(days=12)
    delivered = sampled - timedelta(hours=5)
    earlier = sampled - timedelta(days=40)
    assert (
        sq.reach_start_find(
            sampled_at=sampled, delivery_at=None, deliveries_at=[earlier, delivered]
        )
        == delivered
    )
    assert sq.reach_start_find(sampled_at=sampled, delivery_at=earlier, deliveries_at=[]) == earlier
    assert sq.reach_start_find(sampled_at=sampled, delivery_at=None, deliveries_at=[]) == sampled
    fuelings = [
        sq.Fuelled(unit_id=1, at=delivered - timedelta(hours=1), litres=500),  # before: out
        sq.Fuelled(unit_id=1, at=delivered + timedelta(hours=1), litres=210.5),
        sq.Fuelled(unit_id=1, at=NOW - timedelta(days=1), litres=189.5),
        sq.Fuelled(unit_id=2, at=NOW - timedelta(days=2), litres=300),
    ]
    reach = sq.reach_sum(fuelings=fuelings, start=delivered, end=NOW)
    assert [(r.unit_id, r.litres, r.fuelings) for r in reach] == [(1, 400.0, 2), (2, 300.0, 1)]
    with pytest.raises(ValueError, match="litres"):
        sq.reach_sum(fuelings=[sq.Fuelled(unit_id=1, at=NOW, litres=-1)], start=NOW, end=NOW)


def test_explanation_names_the_sample_and_the_litres() -> None:
    verdict = sq.sample_range_check(codes=(22, 20, 17), water_mg_kg=140, reference=WWFC, margin=2)
    standing = sq.SampleStanding(sq.Standing.AGED, "it is 100 days old")
    reach = [sq.UnitReach(unit_id=1, litres=1234.0, fuelings=3, first_at=NOW, last_at=NOW)]
    lines = sq.decision_explain(
        sample_label="Sample FS-D001", verdict=verdict, standing=standing,
        reach_start=NOW - timedelta(days=12), reach=reach,
    )  # fmt: skip
    assert lines[0] == "Sample FS-D001: out of range."
    assert lines[1].startswith("ISO 4406 22/20/17")
    assert any("1,234 L" in line and "1 unit " in line for line in lines)
    assert "litres burned not yet worked out" in lines[-3]
    assert lines[-2] == "Per unit: unit 1 fuelled 1,234 L."
    assert lines[-1].endswith("Resample.")


def test_explanation_gives_the_litres_burned_in_total_and_per_unit() -> None:
    verdict = sq.sample_range_check(codes=(22, 20, 17), water_mg_kg=140, reference=WWFC, margin=2)
    standing = sq.SampleStanding(sq.Standing.STANDS, "it is the latest word on the tank")
    fuelings = [
        sq.Fuelled(unit_id=1, at=NOW - timedelta(days=2), litres=300, ref=11),
        sq.Fuelled(unit_id=1, at=NOW - timedelta(days=1), litres=200, ref=12),
        sq.Fuelled(unit_id=2, at=NOW - timedelta(days=1), litres=400, ref=21),
    ]
    # Summed by hand: unit 1 burned 120 + 30 L of its two fuelings, unit 2 is not worked out.
    burned = {1: {11: 120.0, 12: 30.0, 99: 500.0}}
    reach = sq.reach_sum(fuelings=fuelings, start=NOW - timedelta(days=3), end=NOW, burned=burned)
    assert [(r.unit_id, r.burned) for r in reach] == [(1, 150.0), (2, None)]
    lines = sq.decision_explain(
        sample_label="Sample FS-D001", verdict=verdict, standing=standing,
        reach_start=NOW - timedelta(days=3), reach=reach, names={1: "KQ-H01", 2: "KQ-H02"},
    )  # fmt: skip
    assert "of the 500 L that went into the 1 unit worked out so far, 150 L" in lines[-2]
    assert lines[-1] == "Per unit: KQ-H01 fuelled 500 L, burned 150 L; KQ-H02 fuelled 400 L."
    full = sq.reach_sum(
        fuelings=fuelings[:2], start=NOW - timedelta(days=3), end=NOW, burned=burned
    )
    lines = sq.decision_explain(
        sample_label="Sample FS-D001", verdict=verdict, standing=standing,
        reach_start=NOW - timedelta(days=3), reach=full, names={1: "KQ-H01"},
    )  # fmt: skip
    assert (
        "500 L were fuelled from this source into 1 unit; 150 L of it has been burned"
        in (lines[-2])
    )
