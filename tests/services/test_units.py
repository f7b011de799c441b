"""Unit conversions checked against pint and the exact definitions of NIST SP 811 (2008)."""

from __future__ import annotations

import math

import pint
import pytest
from hypothesis import given
from hypothesis import strategies as st

from services import units

# One registry for the whole test module (pint's own advice: one UnitRegistry per program).
UREG = pint.UnitRegistry()
Q_ = UREG.Quantity

finite = st.floats(min_value=-1e6, max_value=1e6, allow_nan=False, allow_infinity=False)


# --- conversions against pint ----------------------------------------------------------


@pytest.mark.parametrize(
    ("convert", "value", "from_unit", "to_unit"),
    [
        (units.bar_to_psi, 3.5, "bar", "psi"),
        (units.psi_to_bar, 50.0, "psi", "bar"),
        (units.litres_to_us_gal, 120.0, "L", "US_liquid_gallon"),
        (units.us_gal_to_litres, 55.0, "US_liquid_gallon", "L"),
        (units.litres_to_imp_gal, 120.0, "L", "imperial_gallon"),
        (units.imp_gal_to_litres, 40.0, "imperial_gallon", "L"),
        (units.ml_to_us_fl_oz, 350.0, "mL", "US_fluid_ounce"),
        (units.us_fl_oz_to_ml, 8.0, "US_fluid_ounce", "mL"),
    ],
)
def test_linear_conversions_agree_with_pint(convert, value, from_unit, to_unit):
    # Reference: pint's default registry (definitions from NIST SP 811 Appendix B).
    expected = Q_(value, from_unit).to(to_unit).magnitude
    assert convert(value) == pytest.approx(expected, rel=1e-12)


@pytest.mark.parametrize("celsius", [-40.0, -12.5, 0.0, 12.5, 37.0, 100.0])
def test_temperatures_agree_with_pint(celsius):
    # Reference: pint offset units degC/degF.
    expected = Q_(celsius, UREG.degC).to(UREG.degF).magnitude
    assert units.celsius_to_fahrenheit(celsius) == pytest.approx(expected, abs=1e-9)
    assert units.fahrenheit_to_celsius(expected) == pytest.approx(celsius, abs=1e-9)


# --- conversions against the exact definitions -----------------------------------------


def test_bar_is_100_kpa_and_about_14_5038_psi():
    # 1 bar = 100 kPa exactly (NIST SP 811, Table 9); 14.5038 psi (NIST SP 811 B.8's psi
    # factor 6.894 757 kPa, to 6 figures).
    assert units.psi_to_bar(units.bar_to_psi(1.0)) == pytest.approx(1.0, rel=1e-15)
    assert round(units.bar_to_psi(1.0), 4) == 14.5038


def test_psi_matches_nist_rounded_figure():
    # NIST SP 811 B.8: 1 psi = 6.894 757 E+03 Pa (7 significant figures).
    kpa_per_psi = units.psi_to_bar(1.0) * 100.0
    assert round(kpa_per_psi, 6) == 6.894757


def test_gallons_and_fluid_ounces_are_exact():
    # NIST SP 811 B.8 / NIST Handbook 44: US gal = 231 in^3 = 3.785 411 784 L exactly;
    # US fl oz = 1/128 US gal = 29.573 529 562 5 mL; imperial gallon = 4.546 09 L exactly.
    assert units.us_gal_to_litres(1.0) == 3.785411784
    assert units.us_fl_oz_to_ml(128.0) == pytest.approx(3785.411784, rel=1e-15)
    assert units.us_fl_oz_to_ml(1.0) == 29.5735295625
    assert units.imp_gal_to_litres(1.0) == 4.54609


@pytest.mark.parametrize(("celsius", "fahrenheit"), [(0.0, 32.0), (100.0, 212.0), (-40.0, -40.0)])
def test_temperature_fixed_points(celsius, fahrenheit):
    # NIST SP 811 4.2.1.1: t/°F = 1.8 t/°C + 32; water's ice and boiling points, and -40.
    assert units.celsius_to_fahrenheit(celsius) == pytest.approx(fahrenheit, abs=1e-12)


@given(finite)
def test_round_trips(value):
    # Inverse pairs must undo each other (property of the exact definitions above).
    assert units.psi_to_bar(units.bar_to_psi(value)) == pytest.approx(value, abs=1e-9)
    assert units.litres_to_us_gal(units.us_gal_to_litres(value)) == pytest.approx(value, abs=1e-9)
    assert units.fahrenheit_to_celsius(units.celsius_to_fahrenheit(value)) == pytest.approx(
        value, abs=1e-9
    )


# --- display --------------------------------------------------------------------------


def _pint_text(value: float, from_unit: str, to_unit: str) -> str:
    """The converted number as the display should show it, computed by pint."""
    magnitude = Q_(value, from_unit).to(to_unit).magnitude
    return f"{magnitude:,.1f}"


@pytest.mark.parametrize(
    ("value", "quantity", "metric", "us"),
    [
        (3.5, "pressure_bar_gauge", "3.5 bar(g)", f"{_pint_text(3.5, 'bar', 'psi')} psig"),
        (120.0, "volume_l", "120 L", f"{_pint_text(120.0, 'L', 'US_liquid_gallon')} US gal"),
        (350.0, "volume_ml", "350 mL", f"{_pint_text(350.0, 'mL', 'US_fluid_ounce')} US fl oz"),
        (
            12.5,
            "temperature_c",
            "12.5 °C",
            f"{Q_(12.5, UREG.degC).to(UREG.degF).magnitude:.1f} °F",
        ),
        (
            45.0,
            "flow_l_per_h",
            "45.0 L/h",
            f"{_pint_text(45.0, 'L/h', 'US_liquid_gallon/h')} US gal/h",
        ),
    ],
)
def test_display_in_both_systems(value, quantity, metric, us):
    # Expected US figures come from pint; the metric text is the stored value itself.
    assert units.display_quantity(value=value, quantity=quantity, system="metric") == metric
    assert units.display_quantity(value=value, quantity=quantity, system="us") == us


def test_display_examples_from_the_brief():
    # Hand-checked: 3.5 bar x 14.5038 = 50.76 psi; 120 L / 3.785 = 31.70 US gal;
    # 350 mL / 29.57 = 11.84 fl oz; 12.5 x 1.8 + 32 = 54.5 °F.
    show = units.display_quantity
    assert show(value=3.5, quantity="pressure_bar_gauge", system="us") == "50.8 psig"
    assert show(value=120.0, quantity="volume_l", system="us") == "31.7 US gal"
    assert show(value=350.0, quantity="volume_ml", system="us") == "11.8 US fl oz"
    assert show(value=12.5, quantity="temperature_c", system="us") == "54.5 °F"


@pytest.mark.parametrize("system", ["metric", "us"])
def test_hours_are_never_converted(system):
    assert units.display_quantity(value=1234.0, quantity="hours", system=system) == "1,234 h"


@pytest.mark.parametrize("quantity", sorted(units.QUANTITIES))
def test_missing_value_shows_a_dash(quantity):
    assert units.display_quantity(value=None, quantity=quantity, system="us") == "—"


def test_rail_pressure_shows_whole_numbers_with_separators():
    # 1,800 bar x 14.5038 = 26,107 psi (NIST SP 811 B.8 factor, hand-worked).
    show = units.display_quantity
    assert show(value=1800.0, quantity="pressure_bar_gauge", system="metric") == "1,800 bar(g)"
    assert show(value=1800.0, quantity="pressure_bar_gauge", system="us") == "26,107 psig"


def test_small_values_keep_two_decimals_and_zero_has_no_sign():
    show = units.display_quantity
    assert show(value=0.35, quantity="volume_l", system="metric") == "0.35 L"
    assert show(value=-0.001, quantity="temperature_c", system="metric") == "0 °C"


def test_unknown_quantity_or_system_is_refused():
    with pytest.raises(ValueError, match="unknown quantity 'speed'"):
        units.display_quantity(value=1.0, quantity="speed", system="metric")
    with pytest.raises(ValueError, match="unknown unit system 'imperial'"):
        units.display_quantity(value=1.0, quantity="volume_l", system="imperial")
    with pytest.raises(ValueError, match="not a finite number"):
        units.display_quantity(value=math.nan, quantity="volume_l", system="metric")


# --- typed numbers: the site's unit system in, the stored unit out -------------------------


@pytest.mark.parametrize(
    ("quantity", "value", "typed_unit", "stored_unit"),
    [
        ("pressure_bar_gauge", 58.0, "psi", "bar"),  # gauge stays gauge
        ("volume_ml", 2.5, "US_fluid_ounce", "mL"),
        ("flow_l_per_h", 12.0, "US_liquid_gallon/h", "L/h"),
    ],
)
def test_typed_us_numbers_are_stored_in_si_as_pint_converts_them(
    quantity, value, typed_unit, stored_unit
):
    # Reference: pint's default registry (NIST SP 811 Appendix B definitions).
    expected = Q_(value, typed_unit).to(stored_unit).magnitude
    stored = units.to_si(value=value, quantity=quantity, system="us")
    assert stored == pytest.approx(expected, rel=1e-12)
    assert units.from_si(value=stored, quantity=quantity, system="us") == pytest.approx(value)


def test_58_psi_is_just_under_4_bar():
    # Hand-worked with NIST SP 811 B.8: 58 x 6.894 757 kPa = 399.896 kPa = 3.99896 bar.
    assert units.to_si(value=58.0, quantity="pressure_bar_gauge", system="us") == pytest.approx(
        3.99896, abs=1e-5
    )


@pytest.mark.parametrize("quantity", ["pressure_bar_gauge", "volume_ml", "flow_l_per_h"])
def test_metric_numbers_are_stored_as_typed(quantity):
    assert units.to_si(value=4.25, quantity=quantity, system="metric") == 4.25
    assert units.from_si(value=4.25, quantity=quantity, system="metric") == 4.25


def test_a_quantity_without_a_us_unit_is_refused():
    with pytest.raises(ValueError, match="cannot convert 'hours'"):
        units.to_si(value=1.0, quantity="hours", system="us")
    with pytest.raises(ValueError, match="no input unit for 'hours'"):
        units.input_unit(quantity="hours", system="metric")


@pytest.mark.parametrize(
    ("quantity", "system", "label"),
    [
        # psig: pounds-force per square inch, gauge (the g marks gauge, as bar(g) does).
        ("pressure_bar_gauge", "metric", "bar(g)"),
        ("pressure_bar_gauge", "us", "psig"),
        ("volume_ml", "metric", "mL"),
        ("volume_ml", "us", "US fl oz"),
        ("flow_l_per_h", "us", "US gal/h"),
    ],
)
def test_input_units_name_the_typed_unit(quantity, system, label):
    assert units.input_unit(quantity=quantity, system=system).label == label
    # The typed unit is the one the display shows, so what is typed reads back the same.
    shown = units.display_quantity(value=1.0, quantity=quantity, system=system)
    assert shown.endswith(label)


@pytest.mark.parametrize(
    ("raw", "number"),
    [("4.5", 4.5), (" 4,5 ", 4.5), ("1 200", 1200.0), ("0", 0.0), ("", None), ("  ", None)],
)
def test_typed_numbers_are_read_with_a_comma_or_a_point(raw, number):
    assert units.parse_number(raw=raw, label="Water drained") == number


@pytest.mark.parametrize("raw", ["five", "nan", "inf", "1,2,3", "1.2,3"])
def test_text_that_is_no_finite_number_is_refused_with_the_fields_label(raw):
    with pytest.raises(ValueError, match=f"^Measured value: “{raw}” is not a number.$"):
        units.parse_number(raw=raw, label="Measured value", minimum=None)


def test_numbers_below_the_minimum_are_refused():
    with pytest.raises(ValueError, match="^Water drained cannot be below 0.$"):
        units.parse_number(raw="-1", label="Water drained")
    assert units.parse_number(raw="-1", label="Measured value", minimum=None) == -1.0


@pytest.mark.parametrize(
    ("value", "text"),
    [(None, ""), (4.0, "4"), (3.99896, "3.999"), (0.123456, "0.1235"), (-0.00001, "0")],
)
def test_number_text_for_an_input(value, text):
    assert units.number_text(value) == text


@given(st.floats(min_value=-1e6, max_value=1e6, allow_nan=False))
def test_number_text_reads_back_within_half_its_last_decimal(value):
    text = units.number_text(value)
    assert units.parse_number(raw=text, label="x", minimum=None) == pytest.approx(
        value, abs=0.5e-4 + 1e-9
    )


def test_limits_in_words_in_both_systems():
    # US figures from pint: 4.0 bar and 7.0 bar in psi (shown whole from 100 up).
    lo_psi = f"{Q_(4.0, 'bar').to('psi').magnitude:,.1f}"
    hi_psi = f"{Q_(7.0, 'bar').to('psi').magnitude:,.0f}"
    text = units.limits_text
    q = "pressure_bar_gauge"
    assert text(low=4.0, high=7.0, quantity=q, system="metric") == "pass 4.0 – 7.0 bar(g)"
    assert text(low=4.0, high=7.0, quantity=q, system="us") == f"pass {lo_psi} – {hi_psi} psig"
    assert text(low=1.5, high=None, quantity=q, system="metric") == "pass at least 1.5 bar(g)"
    assert text(low=None, high=0.3, quantity=q, system="metric") == "pass at most 0.30 bar(g)"
