"""Water in fuel: how much a fuel holds dissolved, and what is left free for a separator.

Sources:

* Petroleum diesel: Hibbard, R. R. and Schalla, R. L., "Solubility of water in hydrocarbons",
  NACA Research Memorandum E52D24 (1952): for nonolefinic hydrocarbons and petroleum
  fractions, log10 X = -(4200 H/C + 1050) (1/T - 0.0016) + 2.00, X the water in mol %, H/C the
  hydrogen-to-carbon weight ratio, T in K. Diesel's H/C and mean molar mass below are
  ``from memory`` (typical middle-distillate figures). No measured solubility of petroleum
  diesel below 10 °C was found for this module: below 10 °C the correlation is extrapolated,
  and as it falls with temperature that is the conservative direction (less held dissolved,
  more free water). Fregolente et al. (below) found B100 held 10 to 15 times what their
  diesel held; where B100's figure / 15 is lower than the correlation (above about 30 °C),
  it is used instead: the lower of the two published figures.
* FAME (B100): Fregolente, P. B. L., Fregolente, L. V. and Wolf Maciel, M. R., "Water content
  in biodiesel, diesel, and biodiesel-diesel blends", J. Chem. Eng. Data 57(6):1817-1821
  (2012), doi:10.1021/je300279c: 1,500 mg/kg at 283.15 K to 1,980 mg/kg at 323.15 K. Between
  and beyond those two points ln(solubility) is taken linear in 1/T (the van 't Hoff form that
  Hibbard and Schalla found for hydrocarbons; applying it to FAME is ``from memory``).
* A blend: linear in the FAME volume fraction between the two (an approximation, common
  practice).
* EN 590: density 820-845 kg/m3 at 15 °C, the reference temperature used when none is known.

"ppm" for water in fuel means mg/kg throughout (as the World-Wide Fuel Charter uses it).
"""

from __future__ import annotations

import math
from typing import Final

from services.fuel_quality import FUEL_TEMPERATURE_RANGE_C, FuelQuality

WATER_DENSITY_KG_L: Final = 1.0  # common practice for the mg/kg <-> % vol conversion
WATER_MOLAR_MASS_G_MOL: Final = 18.015
DEFAULT_FUEL_TEMPERATURE_C: Final = 15.0  # EN 590 reference temperature for density

DIESEL_H_C_WEIGHT_RATIO: Final = 0.155  # from memory: about 13.4 % H, 86.6 % C by mass
DIESEL_MOLAR_MASS_G_MOL: Final = 200.0  # from memory: a typical middle-distillate mean
# Fregolente et al. (2012): dissolved water in B100, (temperature K, mg/kg).
B100_SATURATION_POINTS: Final = ((283.15, 1_500.0), (323.15, 1_980.0))
B100_TO_DIESEL_RATIO_MAX: Final = 15.0  # Fregolente et al. (2012): B100 held 10-15x diesel


def _kelvin(temperature_c: float) -> float:
    low, high = FUEL_TEMPERATURE_RANGE_C
    if not (math.isfinite(temperature_c) and low <= temperature_c <= high):
        raise ValueError(
            f"temperature_c must be a number from {low:g} to {high:g} °C, got {temperature_c}"
        )
    return temperature_c + 273.15


def hydrocarbon_water_mol_pct(*, h_c_weight_ratio: float, temperature_c: float) -> float:
    """Water dissolved in a hydrocarbon at saturation, mol %, by Hibbard and Schalla (1952)."""
    if not (math.isfinite(h_c_weight_ratio) and 0 < h_c_weight_ratio < 0.34):
        raise ValueError(f"h_c_weight_ratio must be above 0 and below 0.34, got {h_c_weight_ratio}")
    kelvin = _kelvin(temperature_c)
    log_x = -(4200.0 * h_c_weight_ratio + 1050.0) * (1.0 / kelvin - 0.0016) + 2.00
    return float(10.0**log_x)


def diesel_saturation_mg_kg(*, temperature_c: float) -> float:
    """Most water petroleum diesel holds dissolved (mg/kg): the lower of two published figures.

    Hibbard and Schalla (1952) for a hydrocarbon of diesel's H/C and molar mass, and
    Fregolente et al. (2012), who found B100 held 10 to 15 times what their diesel held:
    B100's figure / 15. The lower is the conservative side (more free water); the
    correlation governs in the cold, Fregolente's ratio above about 30 °C.
    """
    x = (
        hydrocarbon_water_mol_pct(
            h_c_weight_ratio=DIESEL_H_C_WEIGHT_RATIO, temperature_c=temperature_c
        )
        / 100.0
    )
    water = x * WATER_MOLAR_MASS_G_MOL
    correlation = water / (water + (1.0 - x) * DIESEL_MOLAR_MASS_G_MOL) * 1e6
    by_ratio = b100_saturation_mg_kg(temperature_c=temperature_c) / B100_TO_DIESEL_RATIO_MAX
    return min(correlation, by_ratio)


def b100_saturation_mg_kg(*, temperature_c: float) -> float:
    """Most water B100 holds dissolved (mg/kg): Fregolente et al. (2012), ln S linear in 1/T."""
    kelvin = _kelvin(temperature_c)
    (t1, s1), (t2, s2) = B100_SATURATION_POINTS
    slope = math.log(s2 / s1) / (1.0 / t2 - 1.0 / t1)
    return s1 * math.exp(slope * (1.0 / kelvin - 1.0 / t1))


def dissolved_water_saturation_mg_kg(*, temperature_c: float, fame_pct_v: float) -> float:
    """Most water (mg/kg) a diesel/FAME blend holds dissolved at this temperature.

    Linear in the FAME fraction between petroleum diesel and B100 (common practice).
    """
    if not (math.isfinite(fame_pct_v) and 0 <= fame_pct_v <= 100):
        raise ValueError(f"fame_pct_v must be 0 to 100 % V/V, got {fame_pct_v}")
    fame = fame_pct_v / 100.0
    return (1.0 - fame) * diesel_saturation_mg_kg(
        temperature_c=temperature_c
    ) + fame * b100_saturation_mg_kg(temperature_c=temperature_c)


def free_water_mg_kg(
    *, total_mg_kg: float, temperature_c: float | None, fame_pct_v: float | None
) -> float:
    """Water above saturation (what a separator can remove), never below 0.

    Unknown temperature: 15 °C (the EN 590 reference temperature for density).
    Unknown FAME: 0 (petroleum diesel).
    """
    if not (math.isfinite(total_mg_kg) and total_mg_kg >= 0):
        raise ValueError(f"total_mg_kg must be 0 mg/kg or more, got {total_mg_kg}")
    saturation = dissolved_water_saturation_mg_kg(
        temperature_c=DEFAULT_FUEL_TEMPERATURE_C if temperature_c is None else temperature_c,
        fame_pct_v=0.0 if fame_pct_v is None else fame_pct_v,
    )
    return max(0.0, total_mg_kg - saturation)


def free_water_or_reference(
    *, quality: FuelQuality | None, reference_mg_kg: float, coldest_c: float | None
) -> float:
    """Free water (mg/kg) in a fuel in service: its sample's water, else the plan's reference.

    Evaluated at ``coldest_c``, the coldest fuel temperature the depot expects, where it is
    set: water that stays dissolved in a warm lab sample comes out in a cold tank. Without
    it, the sample's temperature, else 15 °C. The sample's FAME (else its source's, which the
    caller puts in ``quality``) applies; with neither, petroleum diesel.
    """
    total = (
        quality.water_mg_kg
        if quality is not None and quality.water_mg_kg is not None
        else reference_mg_kg
    )
    temperature = coldest_c
    if temperature is None and quality is not None:
        temperature = quality.temperature_c
    return free_water_mg_kg(
        total_mg_kg=total,
        temperature_c=temperature,
        fame_pct_v=quality.fame_pct_v if quality is not None else None,
    )


def mg_kg_to_pct_vol(*, mg_kg: float, density_kg_l: float) -> float:
    """Water by mass (mg/kg, "ppm") to % by volume: mg/kg x density [kg/L] / 10,000.

    Takes water at 1 kg/L. Example: 200 mg/kg in fuel of 0.820 kg/L is 0.0164 % vol.
    """
    _check_water_args(amount=mg_kg, density_kg_l=density_kg_l)
    return mg_kg * density_kg_l / WATER_DENSITY_KG_L / 10_000.0


def pct_vol_to_mg_kg(*, pct_vol: float, density_kg_l: float) -> float:
    """Water % by volume to mg/kg ("ppm"); the inverse of :func:`mg_kg_to_pct_vol`."""
    _check_water_args(amount=pct_vol, density_kg_l=density_kg_l)
    return pct_vol * 10_000.0 * WATER_DENSITY_KG_L / density_kg_l


def _check_water_args(*, amount: float, density_kg_l: float) -> None:
    if not (math.isfinite(amount) and amount >= 0):
        raise ValueError(f"water content must be 0 or more, got {amount}")
    if not (math.isfinite(density_kg_l) and density_kg_l > 0):
        raise ValueError(f"density_kg_l must be a positive number of kg/L, got {density_kg_l}")
