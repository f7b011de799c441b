"""Fuel quality checked against ISO 4406 Table 1, EN 590, ASTM D975, the World-Wide Fuel
Charter, Fregolente et al. (2012), hand-worked figures and pint."""

from __future__ import annotations

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from services import fuel_quality as fq

UREG = pint.UnitRegistry()
Q_ = UREG.Quantity

# ISO 4406:1999 Table 1 (unchanged in ISO 4406:2021), particles per mL: code -> (more than,
# up to and including). Copied from the standard's table as reproduced in filter makers'
# contamination guides, not from the code under test.
ISO4406_TABLE_1 = {
    0: (0.0, 0.01), 1: (0.01, 0.02), 2: (0.02, 0.04), 3: (0.04, 0.08), 4: (0.08, 0.16),
    5: (0.16, 0.32), 6: (0.32, 0.64), 7: (0.64, 1.3), 8: (1.3, 2.5), 9: (2.5, 5.0),
    10: (5.0, 10.0), 11: (10.0, 20.0), 12: (20.0, 40.0), 13: (40.0, 80.0), 14: (80.0, 160.0),
    15: (160.0, 320.0), 16: (320.0, 640.0), 17: (640.0, 1_300.0), 18: (1_300.0, 2_500.0),
    19: (2_500.0, 5_000.0), 20: (5_000.0, 10_000.0), 21: (10_000.0, 20_000.0),
    22: (20_000.0, 40_000.0), 23: (40_000.0, 80_000.0), 24: (80_000.0, 160_000.0),
    25: (160_000.0, 320_000.0), 26: (320_000.0, 640_000.0), 27: (640_000.0, 1_300_000.0),
    28: (1_300_000.0, 2_500_000.0),
}  # fmt: skip

codes_in_table = st.integers(min_value=0, max_value=28)


def quality_make(**changes: object) -> fq.FuelQuality:
    fields: dict[str, object] = {
        "codes": None,
        "counts_per_ml": None,
        "water_mg_kg": None,
        "fame_pct_v": None,
        "temperature_c": None,
        "label": "sample",
    }
    fields.update(changes)
    return fq.FuelQuality(**fields)  # type: ignore[arg-type]


# --- ISO 4406 Table 1 -----------------------------------------------------------------


@pytest.mark.parametrize(("code", "limits"), sorted(ISO4406_TABLE_1.items()))
def test_table_1_boundaries(code, limits):
    # ISO 4406:1999 Table 1: each code is "more than" lower "up to and including" upper.
    lower, upper = limits
    assert fq.count_range(code) == (lower, upper)
    assert fq.scale_number(upper) == code
    if code > 0:
        assert fq.scale_number(lower * (1 + 1e-9)) == code
        assert fq.scale_number(lower) == code - 1
    if code < 28:
        assert fq.scale_number(upper * (1 + 1e-9)) == code + 1


def test_zero_particles_is_code_0_and_negative_is_refused():
    # ISO 4406:1999 Table 1 starts at 0 particles/mL.
    assert fq.scale_number(0.0) == 0
    with pytest.raises(ValueError, match="0 or more"):
        fq.scale_number(-1.0)


def test_above_table_1_is_refused_not_clamped():
    # ISO 4406:1999 Table 1 ends with code 28 at 2,500,000/mL.
    with pytest.raises(ValueError, match="above ISO 4406 Table 1 range"):
        fq.scale_number(2_500_001.0)
    with pytest.raises(ValueError, match="outside ISO 4406 Table 1"):
        fq.count_range(29)
    with pytest.raises(ValueError, match="outside ISO 4406 Table 1"):
        fq.count_range(-1)


def test_worked_example_per_100_ml():
    # Worked example (ISO 4406, as filter makers' guides reproduce it): 300,000 / 50,000 /
    # 700 particles per 100 mL give 19/16/10. pint converts per 100 mL to per mL.
    per_100_ml = (300_000, 50_000, 700)
    first, second, third = ((n / Q_(100, "mL")).to("1 / mL").magnitude for n in per_100_ml)
    assert fq.codes_from_counts(per_ml=(first, second, third)) == (19, 16, 10)


def test_table_is_not_a_power_of_two():
    # ISO 4406:1999 Table 1 rounds 1.28 up to 1.3 and 2.56 down to 2.5 per mL: 1.29/mL is
    # code 7 by the table but would be code 8 by a 2^n formula (0.01 x 2^7 = 1.28).
    assert fq.scale_number(1.29) == 7
    assert fq.scale_number(2.55) == 9


@given(codes_in_table)
def test_upper_limit_maps_back_to_its_code(code):
    assert fq.scale_number(fq.count_range(code)[1]) == code


@given(
    st.floats(min_value=0, max_value=2_500_000, allow_nan=False),
    st.floats(min_value=0, max_value=2_500_000, allow_nan=False),
)
def test_scale_number_never_decreases_with_count(a, b):
    low, high = sorted((a, b))
    assert fq.scale_number(low) <= fq.scale_number(high)


# --- parsing and writing codes --------------------------------------------------------


@pytest.mark.parametrize(
    ("text", "codes"),
    [
        ("18/16/13", (18, 16, 13)),
        ("  18/16/13\n", (18, 16, 13)),
        ("-/16/13", (None, 16, 13)),  # ISO 4406:2021: microscope counts
        ("≥22/18/13", (22, 18, 13)),  # ISO 4406: ">=" marks fewer than 20 counted
        (">=22/18/13", (22, 18, 13)),
        ("14/12/≥7", (14, 12, 7)),  # the example in ISO 4406 guides
        ("18 / 16 / 13", (18, 16, 13)),
        ("0/0/0", (0, 0, 0)),
        ("28/28/28", (28, 28, 28)),
    ],
)
def test_parse_accepts(text, codes):
    assert fq.parse_iso4406(text) == codes


@pytest.mark.parametrize(
    ("text", "message"),
    [
        ("16/13", "got 2 .*ISO 4406:1999 and later use three numbers"),  # ISO 4406:1987 form
        ("18/16/13/10", "got 4"),
        ("18/31/13", "scale number 31 is outside ISO 4406 Table 1 \\(0 to 28\\)"),
        ("18/a/13", "'a' is not a scale number"),
        ("18/16.5/13", "'16.5' is not a scale number"),
        ("18//13", "'' is not a scale number"),
        ("18/-/13", "allowed only in the first place"),
        ("16/18/13", "cannot have more particles"),  # counts are cumulative (ISO 4406 3.1)
        ("-/13/16", "cannot have more particles"),
        ("", "got 1"),
    ],
)
def test_parse_refuses_with_a_clear_message(text, message):
    with pytest.raises(ValueError, match=message):
        fq.parse_iso4406(text)


@given(st.lists(codes_in_table, min_size=3, max_size=3), st.booleans())
def test_format_then_parse_round_trip(numbers, microscope):
    high, mid, low = sorted(numbers, reverse=True)
    codes = (None if microscope else high, mid, low)
    assert fq.parse_iso4406(fq.format_iso4406(codes)) == codes


def test_format_writes_a_dash_and_refuses_impossible_codes():
    assert fq.format_iso4406((None, 16, 13)) == "-/16/13"
    with pytest.raises(ValueError, match="cannot have more particles"):
        fq.format_iso4406((13, 16, 18))


def test_counts_that_grow_with_size_are_refused():
    with pytest.raises(ValueError, match="increase with particle size"):
        fq.codes_from_counts(per_ml=(100.0, 200.0, 10.0))


# --- reference fuel and limits --------------------------------------------------------


def test_reference_fuel_and_limits():
    # World-Wide Fuel Charter 6th ed. (2019), categories 2-4: 18/16/13.
    assert fq.REFERENCE_CODES == (18, 16, 13)
    # EN 590: water <= 200 mg/kg = 0.02 % m/m (pint: percent -> mg/kg).
    assert Q_(0.02, "percent").to("mg/kg").magnitude == fq.EN590_WATER_MAX_MG_KG
    # EN 590: density at 15 °C 820-845 kg/m3; the default is a typical value inside it.
    assert fq.EN590_DENSITY_RANGE == (820.0, 845.0)
    low, high = (Q_(d, "kg/m^3").to("kg/L").magnitude for d in fq.EN590_DENSITY_RANGE)
    assert low < fq.DEFAULT_DENSITY_KG_L < high
    # ASTM D975 No. 1-D and 2-D: water and sediment <= 0.05 % vol.
    assert fq.ASTM_D975_WATER_SEDIMENT_MAX_PCT_V == 0.05


def test_reference_concentration_is_the_upper_limit_of_18_16_13():
    # ISO 4406:1999 Table 1: 18 -> 2,500/mL, 16 -> 640/mL, 13 -> 80/mL.
    for channel, per_ml in enumerate((2_500.0, 640.0, 80.0)):
        assert fq.concentration_or_reference(quality=None, channel=channel) == (per_ml, True)


# --- channels and concentrations ------------------------------------------------------


@pytest.mark.parametrize(
    ("rating", "channel"),
    [(None, 0), (2.0, 0), (4.0, 0), (4.5, 1), (7.0, 1), (9.9, 1), (10.0, 2), (30.0, 2)],
)
def test_channel_for_rating(rating, channel):
    # common practice: a filter rated x um is loaded by the ISO 4406 channel at or just
    # above x (channels >=4, >=6, >=14 um(c)); unknown rating -> finest (highest count).
    assert fq.channel_for_rating(rating) == channel


def test_channel_for_rating_refuses_nonsense():
    with pytest.raises(ValueError, match="positive"):
        fq.channel_for_rating(0.0)


def test_lab_counts_win_over_codes_and_codes_read_as_upper_limit():
    both = quality_make(codes=(19, 16, 10), counts_per_ml=(3_000.0, 500.0, 7.0))
    assert fq.concentration_per_ml(quality=both, channel=1) == 500.0
    # ISO 4406:1999 Table 1: code 16 covers up to and including 640/mL.
    codes_only = quality_make(codes=(19, 16, 10))
    assert fq.concentration_per_ml(quality=codes_only, channel=1) == 640.0


def test_missing_channel_raises_or_falls_back_to_the_reference():
    microscope = quality_make(codes=(None, 16, 13), label="S-0142")
    with pytest.raises(LookupError, match="S-0142"):
        fq.concentration_per_ml(quality=microscope, channel=0)
    # WWFC 6th ed. 18/16/13 -> 2,500/mL at >=4 um(c) (ISO 4406:1999 Table 1).
    assert fq.concentration_or_reference(quality=microscope, channel=0) == (2_500.0, True)
    assert fq.concentration_or_reference(quality=microscope, channel=2) == (80.0, False)


def test_fuel_quality_refuses_impossible_values():
    with pytest.raises(ValueError, match="outside ISO 4406"):
        quality_make(codes=(30, 16, 13))
    with pytest.raises(ValueError, match="FAME"):
        quality_make(fame_pct_v=120.0)
    with pytest.raises(ValueError, match="water"):
        quality_make(water_mg_kg=-5.0)


# --- water ----------------------------------------------------------------------------


def test_mg_kg_to_pct_vol_worked_figures():
    # Hand-worked, water at 1 g/mL: 200 mg/kg x 0.820 kg/L = 164 mg/L = 0.0164 % vol;
    # 0.05 % vol = 500 mg/L / 0.820 kg/L = 610 mg/kg.
    assert fq.mg_kg_to_pct_vol(mg_kg=200.0, density_kg_l=0.820) == pytest.approx(0.0164)
    assert fq.pct_vol_to_mg_kg(pct_vol=0.05, density_kg_l=0.820) == pytest.approx(610, abs=0.5)


@pytest.mark.parametrize(("mg_kg", "density"), [(200.0, 0.820), (610.0, 0.845), (35.0, 0.835)])
def test_mg_kg_to_pct_vol_agrees_with_pint(mg_kg, density):
    # pint: mass fraction x fuel density / water density (1 kg/L, common practice) -> %.
    fraction = Q_(mg_kg, "mg/kg") * Q_(density, "kg/L") / Q_(1.0, "kg/L")
    expected = fraction.to("percent").magnitude
    assert fq.mg_kg_to_pct_vol(mg_kg=mg_kg, density_kg_l=density) == pytest.approx(expected)
    assert fq.pct_vol_to_mg_kg(pct_vol=expected, density_kg_l=density) == pytest.approx(mg_kg)


def test_astm_d975_limit_is_looser_than_en_590_in_mg_kg():
    # ASTM D975 0.05 % vol is about 590-610 mg/kg over the EN 590 density range, three
    # times EN 590's 200 mg/kg (hand-worked as above).
    for density in (0.820, 0.845):
        mg_kg = fq.pct_vol_to_mg_kg(
            pct_vol=fq.ASTM_D975_WATER_SEDIMENT_MAX_PCT_V, density_kg_l=density
        )
        assert 590 < mg_kg <= 610
        assert mg_kg > 2.9 * fq.EN590_WATER_MAX_MG_KG


@pytest.mark.parametrize("temperature", [10.0, 20.0, 30.0, 40.0, 50.0])
def test_diesel_saturation_within_the_trade_band(temperature):
    # Trade guidance (common practice): petroleum diesel holds about 100-200 ppm dissolved.
    saturation = fq.dissolved_water_saturation_mg_kg(temperature_c=temperature, fame_pct_v=0.0)
    assert 100.0 <= saturation <= 200.0


def test_b100_saturation_matches_fregolente():
    # Fregolente et al., J. Chem. Eng. Data 57(6):1817 (2012): 1,500-1,980 mg/kg for B100
    # between 283.15 K and 323.15 K (10 and 50 °C).
    at = fq.dissolved_water_saturation_mg_kg
    assert at(temperature_c=10.0, fame_pct_v=100.0) == pytest.approx(1_500.0)
    assert at(temperature_c=50.0, fame_pct_v=100.0) == pytest.approx(1_980.0)
    assert 1_500.0 < at(temperature_c=30.0, fame_pct_v=100.0) < 1_980.0


@given(
    st.floats(min_value=-30, max_value=80, allow_nan=False),
    st.floats(min_value=-30, max_value=80, allow_nan=False),
    st.floats(min_value=0, max_value=100, allow_nan=False),
)
def test_saturation_rises_with_temperature_and_fame(t1, t2, fame):
    # Saturation rises with temperature (Fregolente 2012 for B100; common practice for
    # diesel). Fregolente (2012): biodiesel holds 10 to 15 times more water than diesel,
    # so more FAME never lowers it.
    at = fq.dissolved_water_saturation_mg_kg
    cold, warm = sorted((t1, t2))
    assert at(temperature_c=cold, fame_pct_v=fame) <= at(temperature_c=warm, fame_pct_v=fame)
    assert at(temperature_c=cold, fame_pct_v=0.0) <= at(temperature_c=cold, fame_pct_v=fame)


def test_blend_is_interpolated_by_fame_fraction():
    # common practice (an approximation): B7 (EN 590's FAME limit) sits 7 % of the way
    # from diesel to B100.
    at = fq.dissolved_water_saturation_mg_kg
    diesel = at(temperature_c=20.0, fame_pct_v=0.0)
    b100 = at(temperature_c=20.0, fame_pct_v=100.0)
    assert at(temperature_c=20.0, fame_pct_v=7.0) == pytest.approx(diesel + 0.07 * (b100 - diesel))


def test_temperature_is_clamped_to_the_measured_range():
    at = fq.dissolved_water_saturation_mg_kg
    assert at(temperature_c=-20.0, fame_pct_v=100.0) == pytest.approx(1_500.0)
    assert at(temperature_c=90.0, fame_pct_v=100.0) == pytest.approx(1_980.0)


def test_free_water():
    # Free water = total - saturation, never below zero (common practice).
    saturation_15 = fq.dissolved_water_saturation_mg_kg(temperature_c=15.0, fame_pct_v=0.0)
    free = fq.free_water_mg_kg(total_mg_kg=500.0, temperature_c=None, fame_pct_v=None)
    assert free == pytest.approx(500.0 - saturation_15)  # defaults: 15 °C, no FAME
    # B100 dissolves at least 1,500 mg/kg (Fregolente 2012): EN 590's 200 mg/kg is all
    # dissolved, whatever the temperature.
    for temperature in (0.0, 25.0, 60.0):
        assert (
            fq.free_water_mg_kg(total_mg_kg=200.0, temperature_c=temperature, fame_pct_v=100.0) == 0
        )
    # Trade band ends at 200 ppm: 700 mg/kg in diesel leaves at least 500 free.
    assert fq.free_water_mg_kg(total_mg_kg=700.0, temperature_c=50.0, fame_pct_v=0.0) >= 500.0


# --- what the engine reads from a plan and a sample -----------------------------------


def test_plan_reference_concentration_is_its_codes_upper_limit() -> None:
    # ISO 4406:1999 Table 1: code 17 is up to 1,300/mL, 15 up to 320/mL, 12 up to 40/mL.
    assert fq.plan_reference_concentration(reference_iso4406="17/15/12", channel=0) == 1_300.0
    assert fq.plan_reference_concentration(reference_iso4406="17/15/12", channel=1) == 320.0
    assert fq.plan_reference_concentration(reference_iso4406="17/15/12", channel=2) == 40.0
    # A microscope code has no >=4 um(c) figure: the WWFC 6th ed. reference (18 -> 2,500/mL)
    # stands in for that channel only.
    assert fq.plan_reference_concentration(reference_iso4406="-/15/12", channel=0) == 2_500.0
    assert fq.plan_reference_concentration(reference_iso4406="-/15/12", channel=1) == 320.0


def test_free_water_or_reference_uses_the_sample_where_it_has_water() -> None:
    # B100 holds 1,500 mg/kg dissolved at 10 °C (Fregolente 2012): 1,700 leaves 200 free.
    wet = quality_make(water_mg_kg=1_700.0, temperature_c=10.0, fame_pct_v=100.0)
    assert fq.free_water_or_reference(quality=wet, reference_mg_kg=0.0) == pytest.approx(200.0)
    # No water figure in the sample: the plan's reference water, at the sample's temperature
    # and FAME (B100 at 10 °C dissolves all of 1,000 mg/kg).
    dry_label = quality_make(temperature_c=10.0, fame_pct_v=100.0)
    assert fq.free_water_or_reference(quality=dry_label, reference_mg_kg=1_000.0) == 0.0
    # No sample at all: the reference water in petroleum diesel at 15 °C, the same as
    # free_water_mg_kg's defaults.
    assert fq.free_water_or_reference(quality=None, reference_mg_kg=500.0) == pytest.approx(
        fq.free_water_mg_kg(total_mg_kg=500.0, temperature_c=15.0, fame_pct_v=0.0)
    )
