"""Fuel quality: ISO 4406 cleanliness codes, and water in fuel.

Which fuel each fueling brought, and which is "current": services/fuel_intake.py.

Sources:

* ISO 4406:1999 Table 1 (kept in ISO 4406:2021): scale numbers 0 to 28 for particles
  per mL at >=4, >=6 and >=14 um(c). The limits are rounded, so the table is used,
  never a 2^n formula. Each scale number covers counts *more than* its lower limit
  *up to and including* its upper limit.
* World-Wide Fuel Charter, 6th edition (2019), categories 2-4: 18/16/13 at the nozzle.
* EN 590: water <= 200 mg/kg; density at 15 °C 820-845 kg/m3.
* ASTM D975 (No. 1-D, 2-D): water and sediment <= 0.05 % vol.
* Dissolved water: petroleum diesel about 100-200 ppm (trade guidance); B100
  1,500-1,980 mg/kg between 10 and 50 °C (Fregolente et al., J. Chem. Eng. Data
  57(6):1817, 2012).

"ppm" for water in fuel means mg/kg throughout (as the World-Wide Fuel Charter uses it).
"""

from __future__ import annotations

import bisect
import math
import re
from dataclasses import dataclass
from typing import Final

Codes = tuple[int | None, int, int]
Counts = tuple[float | None, float, float]

# --- ISO 4406 -------------------------------------------------------------------------

# ISO 4406:1999 Table 1, "up to and including" limits in particles per mL, codes 0..28.
_UPPER_PER_ML: Final = (
    0.01, 0.02, 0.04, 0.08, 0.16, 0.32, 0.64, 1.3, 2.5, 5.0,
    10.0, 20.0, 40.0, 80.0, 160.0, 320.0, 640.0, 1_300.0, 2_500.0, 5_000.0,
    10_000.0, 20_000.0, 40_000.0, 80_000.0, 160_000.0, 320_000.0, 640_000.0,
    1_300_000.0, 2_500_000.0,
)  # fmt: skip
MAX_SCALE_NUMBER: Final = len(_UPPER_PER_ML) - 1  # 28
CHANNEL_SIZES_UM: Final = (4, 6, 14)  # um(c), calibrated to ISO 11171

_MARKS: Final = ("≥", ">=")  # "fewer than 20 particles counted" (ISO 4406)
_DIGITS: Final = re.compile(r"[0-9]+")


def scale_number(particles_per_ml: float) -> int:
    """ISO 4406 scale number for a count per mL: the code whose range holds it.

    A range is "more than" its lower limit "up to and including" its upper one;
    0 particles is code 0. Counts above 2,500,000/mL are outside Table 1.
    """
    if math.isnan(particles_per_ml) or particles_per_ml < 0:
        raise ValueError(f"particle count must be 0 or more per mL, got {particles_per_ml}")
    if particles_per_ml > _UPPER_PER_ML[-1]:
        raise ValueError(
            f"{particles_per_ml:,.0f} particles/mL is above ISO 4406 Table 1 range "
            f"(code {MAX_SCALE_NUMBER} ends at {_UPPER_PER_ML[-1]:,.0f}/mL)"
        )
    return bisect.bisect_left(_UPPER_PER_ML, particles_per_ml)


def count_range(scale_number: int) -> tuple[float, float]:
    """(lower, upper) particles per mL of a scale number: lower exclusive, upper inclusive."""
    _check_scale_number(scale_number)
    lower = 0.0 if scale_number == 0 else _UPPER_PER_ML[scale_number - 1]
    return lower, _UPPER_PER_ML[scale_number]


def _check_scale_number(code: int) -> None:
    if not 0 <= code <= MAX_SCALE_NUMBER:
        raise ValueError(
            f"scale number {code} is outside ISO 4406 Table 1 (0 to {MAX_SCALE_NUMBER})"
        )


def _check_codes(codes: Codes) -> None:
    if len(codes) != 3:
        raise ValueError(f"expected three scale numbers, got {len(codes)}")
    for code in codes:
        if code is not None:
            _check_scale_number(code)
    first, second, third = codes
    pairs = [(second, third, 1)] if first is None else [(first, second, 0), (second, third, 1)]
    for smaller, larger, i in pairs:
        if larger > smaller:
            raise ValueError(
                f"scale number {larger} at >={CHANNEL_SIZES_UM[i + 1]} um(c) is above "
                f"{smaller} at >={CHANNEL_SIZES_UM[i]} um(c): counts are cumulative, so a "
                "larger size cannot have more particles"
            )


def parse_iso4406(text: str) -> Codes:
    """Read a code such as ``18/16/13``, ``-/16/13`` or ``≥22/18/13``.

    ``-`` in the first place means a microscope count (no >=4 um(c) figure).
    A ``≥`` or ``>=`` mark (fewer than 20 particles counted) is accepted and dropped:
    the number stands. The two-number form of ISO 4406:1987 is refused.
    """
    parts = [part.strip() for part in text.strip().split("/")]
    if len(parts) != 3:
        message = f"expected three scale numbers separated by '/', got {len(parts)}"
        if len(parts) == 2:
            message += " (ISO 4406:1999 and later use three numbers, or '-' for the first)"
        raise ValueError(message)
    numbers: list[int | None] = []
    for position, part in enumerate(parts):
        if part == "-":
            if position != 0:
                raise ValueError("'-' (no count) is allowed only in the first place")
            numbers.append(None)
            continue
        bare = part
        for mark in _MARKS:
            if bare.startswith(mark):
                bare = bare.removeprefix(mark).strip()
                break
        if not _DIGITS.fullmatch(bare):
            raise ValueError(f"{part!r} is not a scale number")
        numbers.append(int(bare))
    first, second, third = numbers
    if second is None or third is None:  # unreachable: '-' only in the first place
        raise ValueError("'-' (no count) is allowed only in the first place")
    codes: Codes = (first, second, third)
    _check_codes(codes)
    return codes


def format_iso4406(codes: Codes) -> str:
    """Write codes as ``18/16/13`` (``-`` for a missing first number)."""
    _check_codes(codes)
    return "/".join("-" if code is None else str(code) for code in codes)


def codes_from_counts(*, per_ml: Counts) -> Codes:
    """Scale numbers for cumulative counts per mL at >=4, >=6 and >=14 um(c)."""
    first, second, third = per_ml
    if (first is not None and first < second) or second < third:
        raise ValueError(f"counts {per_ml} increase with particle size: cumulative counts cannot")
    return (
        None if first is None else scale_number(first),
        scale_number(second),
        scale_number(third),
    )


# --- reference fuel -------------------------------------------------------------------

REFERENCE_CODES: Final = (18, 16, 13)  # World-Wide Fuel Charter, 6th ed. (2019), cat. 2-4
EN590_WATER_MAX_MG_KG: Final = 200.0  # EN 590, by EN ISO 12937
EN590_DENSITY_RANGE: Final = (820.0, 845.0)  # EN 590, kg/m3 at 15 °C
ASTM_D975_WATER_SEDIMENT_MAX_PCT_V: Final = 0.05  # ASTM D975 No. 1-D and 2-D, by D2709
DEFAULT_DENSITY_KG_L: Final = 0.835  # a typical value inside the EN 590 range, not a limit


@dataclass(frozen=True, slots=True)
class FuelQuality:
    """What a sample says about a fuel. Raw lab counts win over codes when both exist."""

    codes: Codes | None
    counts_per_ml: Counts | None
    water_mg_kg: float | None
    fame_pct_v: float | None
    temperature_c: float | None
    label: str  # where it came from, e.g. "sample S-0142 of Bulk tank B, 2026-03-04"

    def __post_init__(self) -> None:
        if self.codes is not None:
            _check_codes(self.codes)
        if self.counts_per_ml is not None:
            codes_from_counts(per_ml=self.counts_per_ml)  # validates range and order
        if self.water_mg_kg is not None and not self.water_mg_kg >= 0:
            raise ValueError(f"water must be 0 mg/kg or more, got {self.water_mg_kg}")
        if self.fame_pct_v is not None and not 0 <= self.fame_pct_v <= 100:
            raise ValueError(f"FAME must be 0 to 100 % V/V, got {self.fame_pct_v}")


def channel_for_rating(rating_um: float | None) -> int:
    """ISO 4406 channel whose count loads a filter of this rating (common practice).

    0 (>=4 um(c)) up to 4 um; 1 (>=6 um(c)) above 4 and below 10 um; 2 (>=14 um(c))
    from 10 um. Unknown rating: channel 0, the conservative choice, because the
    finest channel always has the highest count.
    """
    if rating_um is None:
        return 0
    if not (math.isfinite(rating_um) and rating_um > 0):
        raise ValueError(f"filter rating must be a positive number of um, got {rating_um}")
    return 0 if rating_um <= 4 else 1 if rating_um < 10 else 2


def channel_check(channel: int) -> None:
    if channel not in (0, 1, 2):
        raise ValueError(f"channel must be 0, 1 or 2 (>=4, >=6, >=14 um(c)), got {channel}")


def concentration_per_ml(*, quality: FuelQuality, channel: int) -> float:
    """Particles per mL in one channel: the lab count, else the code's upper limit.

    The upper limit of the code's range is the conservative reading of a code.
    Raises LookupError when the sample has nothing for that channel.
    """
    channel_check(channel)
    if quality.counts_per_ml is not None:
        count = quality.counts_per_ml[channel]
        if count is not None:
            return count
    if quality.codes is not None:
        code = quality.codes[channel]
        if code is not None:
            return count_range(code)[1]
    raise LookupError(f"{quality.label} has no count at >={CHANNEL_SIZES_UM[channel]} um(c)")


def concentration_or_reference(*, quality: FuelQuality | None, channel: int) -> tuple[float, bool]:
    """(particles per mL, used_reference): the sample's figure, else the reference fuel's.

    The reference is the upper limit of :data:`REFERENCE_CODES` for that channel.
    """
    channel_check(channel)
    if quality is not None:
        try:
            return concentration_per_ml(quality=quality, channel=channel), False
        except LookupError:
            pass
    return count_range(REFERENCE_CODES[channel])[1], True


def plan_reference_concentration(*, reference_iso4406: str, channel: int) -> float:
    """Particles per mL of a plan's reference fuel in one channel (its code's upper limit).

    A code with no figure in that channel (a microscope count, ``-/16/13``) takes the
    reference fuel's (:data:`REFERENCE_CODES`) there.
    """
    channel_check(channel)
    code = parse_iso4406(reference_iso4406)[channel]
    return count_range(REFERENCE_CODES[channel] if code is None else code)[1]


# --- water ----------------------------------------------------------------------------

WATER_DENSITY_KG_L: Final = 1.0  # common practice for the mg/kg <-> % vol conversion
DEFAULT_FUEL_TEMPERATURE_C: Final = 15.0  # EN 590 reference temperature for density

# Dissolved-water saturation, mg/kg, linear between the two ends of the measured range.
# B100: Fregolente et al. (2012), 1,500 mg/kg at 10 °C to 1,980 mg/kg at 50 °C.
# Petroleum diesel: a linear model through the ends of the trade-guidance band
# (100-200 ppm) placed at the same temperatures. A model, not a measurement.
SATURATION_TEMPERATURE_RANGE_C: Final = (10.0, 50.0)
_DIESEL_SATURATION_MG_KG: Final = (100.0, 200.0)
_B100_SATURATION_MG_KG: Final = (1_500.0, 1_980.0)


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
    if not amount >= 0:
        raise ValueError(f"water content must be 0 or more, got {amount}")
    if not (math.isfinite(density_kg_l) and density_kg_l > 0):
        raise ValueError(f"fuel density must be a positive number of kg/L, got {density_kg_l}")


def dissolved_water_saturation_mg_kg(*, temperature_c: float, fame_pct_v: float) -> float:
    """Most water (mg/kg) the fuel holds dissolved at this temperature and FAME content.

    Temperature is clamped to 10-50 °C, the range of the B100 measurements; below
    10 °C this overstates what the fuel can hold, so free water is understated there.
    A blend is interpolated linearly by FAME fraction (an approximation, common practice).
    """
    if math.isnan(temperature_c):
        raise ValueError("temperature must be a number")
    if not 0 <= fame_pct_v <= 100:
        raise ValueError(f"FAME must be 0 to 100 % V/V, got {fame_pct_v}")
    low_t, high_t = SATURATION_TEMPERATURE_RANGE_C
    share = (min(max(temperature_c, low_t), high_t) - low_t) / (high_t - low_t)
    diesel = _DIESEL_SATURATION_MG_KG[0] + share * (
        _DIESEL_SATURATION_MG_KG[1] - _DIESEL_SATURATION_MG_KG[0]
    )
    b100 = _B100_SATURATION_MG_KG[0] + share * (
        _B100_SATURATION_MG_KG[1] - _B100_SATURATION_MG_KG[0]
    )
    fame = fame_pct_v / 100.0
    return (1.0 - fame) * diesel + fame * b100


def free_water_mg_kg(
    *, total_mg_kg: float, temperature_c: float | None, fame_pct_v: float | None
) -> float:
    """Water above saturation (what a separator can remove), never below 0.

    Unknown temperature: 15 °C (the EN 590 reference temperature for density).
    Unknown FAME: 0 (petroleum diesel).
    """
    if not total_mg_kg >= 0:
        raise ValueError(f"water content must be 0 mg/kg or more, got {total_mg_kg}")
    saturation = dissolved_water_saturation_mg_kg(
        temperature_c=DEFAULT_FUEL_TEMPERATURE_C if temperature_c is None else temperature_c,
        fame_pct_v=0.0 if fame_pct_v is None else fame_pct_v,
    )
    return max(0.0, total_mg_kg - saturation)


def free_water_or_reference(*, quality: FuelQuality | None, reference_mg_kg: float) -> float:
    """Free water (mg/kg) in a fuel: its sample's water, else the plan's reference water.

    The sample's temperature and FAME apply either way; without a sample, the defaults of
    :func:`free_water_mg_kg` (15 °C, petroleum diesel).
    """
    total = (
        quality.water_mg_kg
        if quality is not None and quality.water_mg_kg is not None
        else reference_mg_kg
    )
    return free_water_mg_kg(
        total_mg_kg=total,
        temperature_c=quality.temperature_c if quality is not None else None,
        fame_pct_v=quality.fame_pct_v if quality is not None else None,
    )
