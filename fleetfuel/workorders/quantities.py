"""Quantities typed on the tablet: the site's unit system in, the stored (SI-style) unit out.

Stored: bar gauge, mL, L/h. Shown and typed: the same for a metric site; psig, US fl oz and
US gal/h for a US site (factors from services/units.py, NIST SP 811).
"""

from __future__ import annotations

import math
from collections.abc import Callable
from dataclasses import dataclass

from fleetfuel.fleet.models import MeasurementLimit
from services import units


@dataclass(frozen=True)
class InputUnit:
    label: str  # shown beside the input
    step: str  # the input's step attribute


def input_unit(quantity: str, system: str) -> InputUnit:
    us = system == "us"
    match quantity:
        case "pressure_bar_gauge":
            return InputUnit("psig", "0.1") if us else InputUnit("bar(g)", "0.01")
        case "volume_ml":
            return InputUnit("US fl oz", "0.1") if us else InputUnit("mL", "1")
        case "flow_l_per_h":
            return InputUnit("US gal/h", "0.01") if us else InputUnit("L/h", "0.1")
    raise ValueError(f"no input unit for {quantity!r}")


# US customary: (typed -> stored, stored -> shown) for each stored quantity.
US_CONVERSIONS: dict[str, tuple[Callable[[float], float], Callable[[float], float]]] = {
    "pressure_bar_gauge": (units.psi_to_bar, units.bar_to_psi),
    "volume_ml": (units.us_fl_oz_to_ml, units.ml_to_us_fl_oz),
    "flow_l_per_h": (units.us_gal_to_litres, units.litres_to_us_gal),
}


def _conversion(quantity: str, direction: int) -> Callable[[float], float]:
    if quantity not in US_CONVERSIONS:
        raise ValueError(f"cannot convert {quantity!r}")
    return US_CONVERSIONS[quantity][direction]


def to_si(value: float, quantity: str, system: str) -> float:
    """A number typed in the site's unit system, in the stored unit."""
    return value if system != "us" else _conversion(quantity, 0)(value)


def from_si(value: float, quantity: str, system: str) -> float:
    """A stored number in the site's unit system (for an input's value)."""
    return value if system != "us" else _conversion(quantity, 1)(value)


def number_text(value: float | None) -> str:
    """A stored number as an input's value: at most four decimals, no trailing zeros."""
    if value is None:
        return ""
    text = f"{round(value, 4):.4f}".rstrip("0").rstrip(".")
    return "0" if text in {"-0", ""} else text


def parse_number(raw: str, *, label: str, minimum: float | None = 0) -> float | None:
    """A typed number (a comma as decimal mark is accepted), None when blank."""
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


def limit_text(limit: MeasurementLimit, system: str) -> str:
    """'pass 4.0 – 7.0 bar(g)', 'pass at least 1.5 bar(g)', 'pass at most 0.30 bar(g)'."""

    def show(v: float) -> str:
        return units.display_quantity(value=v, quantity=limit.quantity, system=system)

    if limit.low is not None and limit.high is not None:
        low = show(limit.low).rsplit(" ", 1)[0]
        return f"pass {low} – {show(limit.high)}"
    if limit.low is not None:
        return f"pass at least {show(limit.low)}"
    return f"pass at most {show(limit.high)}"  # type: ignore[arg-type]


def measurement_passed(value: float | None, limit: MeasurementLimit | None) -> bool | None:
    if value is None or limit is None:
        return None
    if limit.low is not None and value < limit.low:
        return False
    return not (limit.high is not None and value > limit.high)
