"""Fuel quality checked against ISO 4406 Table 1 (1999, kept in 2021) and its worked example,
ISO 4406:2021's marks, ISO 19438's efficiency size, EN 590, ASTM D975, the World-Wide Fuel
Charter, hand-worked figures and pint. Water in fuel: test_fuel_water.py."""

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


def test_above_table_1_reads_28_with_a_mark_not_an_error():
    # ISO 4406:1999 Table 1 ends with code 28 at 2,500,000/mL; a count above it is reported
    # as ">28" (the code has no range of its own).
    assert fq.scale_number_marked(2_500_000.0) == (28, "")
    assert fq.scale_number_marked(2_500_001.0) == (28, ">")
    with pytest.raises(ValueError, match="it reads >28"):
        fq.scale_number(2_500_001.0)
    codes, marks = fq.codes_marked_from_counts(per_ml=(4_000_000.0, 3_000_000.0, 50_000.0))
    assert codes == (28, 28, 23) and marks == (">", ">", "")  # 50,000/mL: code 23
    assert fq.format_iso4406(codes, marks) == ">28/>28/23"
    assert fq.codes_from_counts(per_ml=(4_000_000.0, 3_000_000.0, 50_000.0)) == (28, 28, 23)
    with pytest.raises(ValueError, match="outside ISO 4406 Table 1"):
        fq.count_range(29)
    with pytest.raises(ValueError, match="outside ISO 4406 Table 1"):
        fq.count_range(-1)


def test_a_code_above_the_table_reads_more_than_code_28s_upper_limit():
    # ">28" has no upper limit in Table 1; the conservative reading must exceed 2,500,000/mL.
    quality = quality_make(codes=(28, 26, 20), marks=(">", "", ""))
    assert fq.concentration_per_ml(quality=quality, channel=0) > 2_500_000.0
    assert fq.concentration_per_ml(quality=quality, channel=1) == 640_000.0


@pytest.mark.parametrize("bad", [float("nan"), float("inf"), -1.0])
def test_counts_refuse_nan_infinity_and_negatives(bad):
    with pytest.raises(ValueError, match="0 or more"):
        fq.codes_from_counts(per_ml=(None, bad, 1.0))


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


@pytest.mark.parametrize(
    ("text", "codes", "marks", "written"),
    [
        # ISO 4406:2021: "≥" where fewer than 20 particles were counted in that range.
        ("≥22/18/13", (22, 18, 13), ("≥", "", ""), "≥22/18/13"),
        (">=22/18/13", (22, 18, 13), ("≥", "", ""), "≥22/18/13"),
        ("14/12/≥7", (14, 12, 7), ("", "", "≥"), "14/12/≥7"),
        ("-/16/≥ 13", (None, 16, 13), ("", "", "≥"), "-/16/≥13"),
        (">28/27/20", (28, 27, 20), (">", "", ""), ">28/27/20"),
        ("18/16/13", (18, 16, 13), ("", "", ""), "18/16/13"),
    ],
)
def test_marks_are_kept_through_parse_and_format(text, codes, marks, written):
    assert fq.parse_iso4406_marked(text) == (codes, marks)
    assert fq.parse_iso4406(text) == codes
    assert fq.format_iso4406(codes, marks) == written


def test_greater_than_is_only_for_28():
    with pytest.raises(ValueError, match="only as >28"):
        fq.parse_iso4406(">27/20/14")
    with pytest.raises(ValueError, match="unknown ISO 4406 mark"):
        fq.format_iso4406((18, 16, 13), ("<", "", ""))


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


@pytest.mark.parametrize(
    ("size", "channel"),
    [(2.0, 0), (4.0, 0), (5.0, 0), (6.0, 1), (10.0, 1), (13.9, 1), (14.0, 2), (25.0, 2)],
)
def test_channel_follows_the_efficiency_size(size, channel):
    # ISO 19438 states an element's efficiency at a particle size in um(c) ("beta 200 at
    # 4 um(c)"). ISO 4406 counts are cumulative (>=4, >=6, >=14 um(c)): the channel at or
    # below that size holds every particle the element is rated to stop.
    assert fq.channel_for_efficiency_size(size) == channel
    chosen, sentence = fq.filter_channel(efficiency_size_um_c=size, nominal_rating_um=30.0)
    assert chosen == channel and "ISO 19438" in sentence and "rated at" in sentence


def test_without_an_efficiency_size_the_nominal_rating_is_the_fallback_and_says_so():
    chosen, sentence = fq.filter_channel(efficiency_size_um_c=None, nominal_rating_um=10.0)
    assert chosen == fq.channel_for_rating(10.0) == 2
    assert "nominal 10 µm rating" in sentence and "record the size" in sentence
    # A 10 um nominal element rated "beta 200 at 4 um(c)" is loaded by the >=4 um(c) count.
    assert fq.filter_channel(efficiency_size_um_c=4.0, nominal_rating_um=10.0)[0] == 0


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
    with pytest.raises(ValueError, match="fame_pct_v"):
        quality_make(fame_pct_v=120.0)
    with pytest.raises(ValueError, match="water_mg_kg"):
        quality_make(water_mg_kg=-5.0)


@pytest.mark.parametrize(
    ("field", "value"),
    [
        ("water_mg_kg", float("nan")),
        ("water_mg_kg", float("inf")),
        ("fame_pct_v", float("nan")),
        ("temperature_c", float("nan")),
        ("temperature_c", float("-inf")),
        ("density_kg_l", float("nan")),
        ("density_kg_l", 5.0),
    ],
)
def test_fuel_quality_refuses_nan_and_infinity_by_name(field, value):
    with pytest.raises(ValueError, match=field):
        quality_make(**{field: value})


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
