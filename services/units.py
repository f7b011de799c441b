"""Unit conversions for display.

fleetfuel stores SI-style values (bar gauge, litres, millilitres, degrees
Celsius, engine hours) and converts only when showing them. The factors are
the exact definitions in NIST SP 811 (2008), Appendix B:

* 1 bar = 100 kPa (exact);
* 1 psi (pound-force per square inch) = 0.45359237 kg x 9.80665 m/s^2 / (0.0254 m)^2
  = 6.894 757 293 168... kPa, i.e. the rounded 6.894757 kPa of NIST SP 811 B.8;
* 1 US gallon = 231 in^3 = 3.785411784 L (exact); 1 US fluid ounce = 1/128 US gallon
  = 29.5735295625 mL (exact);
* 1 imperial gallon = 4.54609 L (exact);
* t/°F = 1.8 x t/°C + 32.

Pressure conversions change units only: a gauge pressure stays gauge.

Numbers typed on a form are read here too: in the site's unit system in, the stored unit out
(``parse_number``, ``to_si``), and back for an input's value (``from_si``, ``number_text``).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass
from typing import Final

KPA_PER_BAR: Final = 100.0
# Exact: pound (avoirdupois) 0.45359237 kg, standard gravity 9.80665 m/s^2, inch 0.0254 m.
KPA_PER_PSI: Final = 0.45359237 * 9.80665 / 0.0254**2 / 1000.0
LITRES_PER_US_GAL: Final = 3.785411784
LITRES_PER_IMP_GAL: Final = 4.54609
ML_PER_US_FL_OZ: Final = 29.5735295625

NO_VALUE: Final = "—"

QUANTITIES: Final = frozenset(
    {"pressure_bar_gauge", "volume_l", "volume_ml", "temperature_c", "hours", "flow_l_per_h"}
)
SYSTEMS: Final = frozenset({"metric", "us"})


def bar_to_psi(bar: float) -> float:
    """Pressure in bar to psi (gauge stays gauge, absolute stays absolute)."""
    return bar * KPA_PER_BAR / KPA_PER_PSI


def psi_to_bar(psi: float) -> float:
    """Pressure in psi to bar (gauge stays gauge, absolute stays absolute)."""
    return psi * KPA_PER_PSI / KPA_PER_BAR


def litres_to_us_gal(litres: float) -> float:
    """Litres to US liquid gallons."""
    return litres / LITRES_PER_US_GAL


def us_gal_to_litres(us_gal: float) -> float:
    """US liquid gallons to litres."""
    return us_gal * LITRES_PER_US_GAL


def litres_to_imp_gal(litres: float) -> float:
    """Litres to imperial gallons."""
    return litres / LITRES_PER_IMP_GAL


def imp_gal_to_litres(imp_gal: float) -> float:
    """Imperial gallons to litres."""
    return imp_gal * LITRES_PER_IMP_GAL


def ml_to_us_fl_oz(ml: float) -> float:
    """Millilitres to US fluid ounces."""
    return ml / ML_PER_US_FL_OZ


def us_fl_oz_to_ml(us_fl_oz: float) -> float:
    """US fluid ounces to millilitres."""
    return us_fl_oz * ML_PER_US_FL_OZ


def celsius_to_fahrenheit(celsius: float) -> float:
    """Temperature in degrees Celsius to degrees Fahrenheit."""
    return celsius * 1.8 + 32.0


def fahrenheit_to_celsius(fahrenheit: float) -> float:
    """Temperature in degrees Fahrenheit to degrees Celsius."""
    return (fahrenheit - 32.0) / 1.8


def _number(value: float) -> str:
    """Format with thousands separators; decimals by size.

    Two decimals below 1, one decimal below 100, none from 100 up: enough for a
    service record, never more precision than a workshop gauge shows.
    """
    size = abs(value)
    decimals = 2 if size < 1 else 1 if size < 100 else 0
    text = f"{value:,.{decimals}f}"
    return "0" if text.lstrip("-").strip("0.,") == "" else text


def display_quantity(*, value: float | None, quantity: str, system: str) -> str:
    """Show a stored value in the user's unit system, with its unit.

    ``quantity`` names what is stored (see :data:`QUANTITIES`); ``system`` is
    ``"metric"`` or ``"us"``. Hours are never converted. ``None`` shows as an
    em dash.
    """
    if quantity not in QUANTITIES:
        known = ", ".join(sorted(QUANTITIES))
        raise ValueError(f"unknown quantity {quantity!r}; expected one of: {known}")
    if system not in SYSTEMS:
        raise ValueError(f"unknown unit system {system!r}; expected 'metric' or 'us'")
    if value is None:
        return NO_VALUE
    if not math.isfinite(value):
        raise ValueError(f"cannot display {value!r} for {quantity}: not a finite number")

    us = system == "us"
    match quantity:
        case "pressure_bar_gauge":
            return f"{_number(bar_to_psi(value))} psig" if us else f"{_number(value)} bar(g)"
        case "volume_l":
            return f"{_number(litres_to_us_gal(value))} US gal" if us else f"{_number(value)} L"
        case "volume_ml":
            return f"{_number(ml_to_us_fl_oz(value))} US fl oz" if us else f"{_number(value)} mL"
        case "temperature_c":
            return f"{_number(celsius_to_fahrenheit(value))} °F" if us else f"{_number(value)} °C"
        case "flow_l_per_h":
            return f"{_number(litres_to_us_gal(value))} US gal/h" if us else f"{_number(value)} L/h"
        case _:  # "hours": engine hours read the same in every system
            return f"{_number(value)} h"


# --------------------------------------------------------------------------- typed numbers

# The stored unit of each quantity a form takes, in words (for labels).
UNIT_WORDS: Final = {"pressure_bar_gauge": "bar gauge", "volume_ml": "mL", "flow_l_per_h": "L/h"}


@dataclass(frozen=True, slots=True)
class InputUnit:
    label: str  # shown beside the input


INPUT_UNITS: Final = {
    ("pressure_bar_gauge", "metric"): InputUnit("bar(g)"),
    ("pressure_bar_gauge", "us"): InputUnit("psig"),
    ("volume_ml", "metric"): InputUnit("mL"),
    ("volume_ml", "us"): InputUnit("US fl oz"),
    ("flow_l_per_h", "metric"): InputUnit("L/h"),
    ("flow_l_per_h", "us"): InputUnit("US gal/h"),
}

# US customary: (typed -> stored, stored -> shown) for each quantity a form takes.
US_CONVERSIONS: Final[dict[str, tuple[Callable[[float], float], Callable[[float], float]]]] = {
    "pressure_bar_gauge": (psi_to_bar, bar_to_psi),
    "volume_ml": (us_fl_oz_to_ml, ml_to_us_fl_oz),
    "flow_l_per_h": (us_gal_to_litres, litres_to_us_gal),
}


def input_unit(*, quantity: str, system: str) -> InputUnit:
    """The unit a number of ``quantity`` is typed in at a site of ``system``."""
    unit = INPUT_UNITS.get((quantity, "us" if system == "us" else "metric"))
    if unit is None:
        raise ValueError(f"no input unit for {quantity!r}")
    return unit


def _conversion(quantity: str, direction: int) -> Callable[[float], float]:
    if quantity not in US_CONVERSIONS:
        raise ValueError(f"cannot convert {quantity!r}")
    return US_CONVERSIONS[quantity][direction]


def to_si(*, value: float, quantity: str, system: str) -> float:
    """A number typed in the site's unit system, in the stored unit."""
    return value if system != "us" else _conversion(quantity, 0)(value)


def from_si(*, value: float, quantity: str, system: str) -> float:
    """A stored number in the site's unit system (for an input's value)."""
    return value if system != "us" else _conversion(quantity, 1)(value)


def number_text(value: float | None) -> str:
    """A number as an input's value: at most four decimals, no trailing zeros."""
    if value is None:
        return ""
    text = f"{round(value, 4):.4f}".rstrip("0").rstrip(".")
    return "0" if text in {"-0", ""} else text


def parse_number(*, raw: str, label: str, minimum: float | None = 0) -> float | None:
    """A typed number (a comma as decimal mark is accepted), None when blank.

    Raises ValueError naming ``label`` when the text is no finite number or is below
    ``minimum``.
    """
    text = raw.strip().replace(" ", "")
    if not text:
        return None
    if text.count(",") == 1 and "." not in text:
        text = text.replace(",", ".")
    try:
        value = float(text)
    except ValueError:
        raise ValueError(f"{label}: “{raw.strip()}” is not a number.") from None
    if not math.isfinite(value):
        raise ValueError(f"{label}: “{raw.strip()}” is not a number.")
    if minimum is not None and value < minimum:
        raise ValueError(f"{label} cannot be below {minimum:g}.")
    return value


def limits_text(*, low: float | None, high: float | None, quantity: str, system: str) -> str:
    """A pass band in words: 'pass 4.0 – 7.0 bar(g)', 'pass at least 1.5 bar(g)',
    'pass at most 0.30 bar(g)'."""

    def show(v: float | None) -> str:
        return display_quantity(value=v, quantity=quantity, system=system)

    if low is not None and high is not None:
        return f"pass {show(low).rsplit(' ', 1)[0]} – {show(high)}"
    if low is not None:
        return f"pass at least {show(low)}"
    return f"pass at most {show(high)}"
