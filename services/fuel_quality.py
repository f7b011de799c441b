"""Fuel quality: ISO 4406 cleanliness codes, and what a sample says about a fuel.

Which fuel each fueling brought, and which is "current": services/fuel_intake.py.
Water dissolved and free: services/fuel_water.py.

Sources:

* ISO 4406:1999 Table 1 (kept in ISO 4406:2021): scale numbers 0 to 28 for particles
  per mL at >=4, >=6 and >=14 um(c). The limits are rounded, so the table is used,
  never a 2^n formula. Each scale number covers counts *more than* its lower limit
  *up to and including* its upper limit. A count above the last range is written ">28".
  ISO 4406:2021 marks a scale number "≥" where fewer than 20 particles were counted in
  that size range (the figure is statistically uncertain): the mark is kept, not dropped.
* ISO 19438 (diesel fuel filters): an element's efficiency is stated at a particle size
  (e.g. "beta 200 at 4 um(c)"); that size picks the ISO 4406 channel that loads it.
* World-Wide Fuel Charter, 6th edition (2019), categories 2-4: 18/16/13 at the nozzle.
* EN 590: water <= 200 mg/kg; density at 15 °C 820-845 kg/m3.
* ASTM D975 (No. 1-D, 2-D): water and sediment <= 0.05 % vol.
"""

from __future__ import annotations

import bisect
import math
import re
from dataclasses import dataclass
from typing import Final

Codes = tuple[int | None, int, int]
Counts = tuple[float | None, float, float]
Marks = tuple[str, str, str]  # per channel: "", FEW_COUNTED or ABOVE_TABLE

FEW_COUNTED: Final = "≥"  # fewer than 20 particles counted in that range (ISO 4406:2021)
ABOVE_TABLE: Final = ">"  # more than the last range of Table 1: ">28"
NO_MARKS: Final[Marks] = ("", "", "")

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
    0 particles is code 0. Counts above 2,500,000/mL are outside Table 1: use
    :func:`scale_number_marked`, which reads them as ">28".
    """
    if not (math.isfinite(particles_per_ml) and particles_per_ml >= 0):
        raise ValueError(f"particle count must be 0 or more per mL, got {particles_per_ml}")
    if particles_per_ml > _UPPER_PER_ML[-1]:
        raise ValueError(
            f"{particles_per_ml:,.0f} particles/mL is above ISO 4406 Table 1 range "
            f"(code {MAX_SCALE_NUMBER} ends at {_UPPER_PER_ML[-1]:,.0f}/mL): it reads "
            f"{ABOVE_TABLE}{MAX_SCALE_NUMBER}"
        )
    return bisect.bisect_left(_UPPER_PER_ML, particles_per_ml)


def scale_number_marked(particles_per_ml: float) -> tuple[int, str]:
    """(scale number, mark): above Table 1's last range, (28, ">"), written ">28"."""
    if math.isfinite(particles_per_ml) and particles_per_ml > _UPPER_PER_ML[-1]:
        return MAX_SCALE_NUMBER, ABOVE_TABLE
    return scale_number(particles_per_ml), ""


def count_range(scale_number: int) -> tuple[float, float]:
    """(lower, upper) particles per mL of a scale number: lower exclusive, upper inclusive."""
    _check_scale_number(scale_number)
    lower = 0.0 if scale_number == 0 else _UPPER_PER_ML[scale_number - 1]
    return lower, _UPPER_PER_ML[scale_number]


# A ">28" reading has no upper limit in Table 1; it is read as the next doubling of the table's
# pattern (common practice), so a conservative figure stays finite.
ABOVE_TABLE_PER_ML: Final = 2 * _UPPER_PER_ML[-1]


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
                f"scale number {larger} at ≥{CHANNEL_SIZES_UM[i + 1]} µm(c) is above "
                f"{smaller} at ≥{CHANNEL_SIZES_UM[i]} µm(c): counts are cumulative, so a "
                "larger size cannot have more particles"
            )


def parse_iso4406(text: str) -> Codes:
    """Read a code such as ``18/16/13``, ``-/16/13`` or ``≥22/18/13``; the scale numbers only.

    :func:`parse_iso4406_marked` also returns the marks.
    """
    return parse_iso4406_marked(text)[0]


def parse_iso4406_marked(text: str) -> tuple[Codes, Marks]:
    """Read a code with its marks: ``18/16/13``, ``-/16/13``, ``≥22/18/13``, ``>28/26/20``.

    ``-`` in the first place means a microscope count (no >=4 um(c) figure). A ``≥`` or
    ``>=`` mark (fewer than 20 particles counted, ISO 4406:2021) is kept as ``≥``; ``>``
    is allowed only before 28 (above Table 1). The two-number form of ISO 4406:1987 is
    refused.
    """
    parts = [part.strip() for part in text.strip().split("/")]
    if len(parts) != 3:
        message = f"expected three scale numbers separated by '/', got {len(parts)}"
        if len(parts) == 2:
            message += " (ISO 4406:1999 and later use three numbers, or '-' for the first)"
        raise ValueError(message)
    numbers: list[int | None] = []
    marks: list[str] = []
    for position, part in enumerate(parts):
        if part == "-":
            if position != 0:
                raise ValueError("'-' (no count) is allowed only in the first place")
            numbers.append(None)
            marks.append("")
            continue
        number, mark = _part_read(part)
        numbers.append(number)
        marks.append(mark)
    first, second, third = numbers
    if second is None or third is None:  # unreachable: '-' only in the first place
        raise ValueError("'-' (no count) is allowed only in the first place")
    codes: Codes = (first, second, third)
    _check_codes(codes)
    return codes, (marks[0], marks[1], marks[2])


def _part_read(part: str) -> tuple[int, str]:
    mark = ""
    bare = part
    for prefix, meaning in (("≥", FEW_COUNTED), (">=", FEW_COUNTED), (">", ABOVE_TABLE)):
        if bare.startswith(prefix):
            bare, mark = bare.removeprefix(prefix).strip(), meaning
            break
    if not _DIGITS.fullmatch(bare):
        raise ValueError(f"{part!r} is not a scale number")
    number = int(bare)
    if mark == ABOVE_TABLE and number != MAX_SCALE_NUMBER:
        raise ValueError(
            f"{part!r}: '>' is written only as >{MAX_SCALE_NUMBER}, above ISO 4406 Table 1"
        )
    return number, mark


def format_iso4406(codes: Codes, marks: Marks = NO_MARKS) -> str:
    """Write codes as ``18/16/13`` (``-`` for a missing first number), with any marks."""
    _check_codes(codes)
    for mark in marks:
        if mark not in ("", FEW_COUNTED, ABOVE_TABLE):
            raise ValueError(f"unknown ISO 4406 mark {mark!r}")
    return "/".join(
        "-" if code is None else f"{mark}{code}" for code, mark in zip(codes, marks, strict=True)
    )


def codes_from_counts(*, per_ml: Counts) -> Codes:
    """Scale numbers for cumulative counts per mL at >=4, >=6 and >=14 um(c)."""
    return codes_marked_from_counts(per_ml=per_ml)[0]


def codes_marked_from_counts(*, per_ml: Counts) -> tuple[Codes, Marks]:
    """Scale numbers and marks for cumulative counts per mL: above Table 1 reads ">28"."""
    first, second, third = per_ml
    for count in per_ml:
        if count is not None and not (math.isfinite(count) and count >= 0):
            raise ValueError(f"particle counts must be 0 or more per mL, got {per_ml}")
    if (first is not None and first < second) or second < third:
        raise ValueError(f"counts {per_ml} increase with particle size: cumulative counts cannot")
    read = [None if count is None else scale_number_marked(count) for count in per_ml]
    codes: Codes = (
        None if read[0] is None else read[0][0],
        scale_number_marked(second)[0],
        scale_number_marked(third)[0],
    )
    marks: Marks = tuple("" if r is None else r[1] for r in read)  # type: ignore[assignment]
    return codes, marks


# --- reference fuel -------------------------------------------------------------------

REFERENCE_CODES: Final = (18, 16, 13)  # World-Wide Fuel Charter, 6th ed. (2019), cat. 2-4
EN590_WATER_MAX_MG_KG: Final = 200.0  # EN 590, by EN ISO 12937
EN590_DENSITY_RANGE: Final = (820.0, 845.0)  # EN 590, kg/m3 at 15 °C
ASTM_D975_WATER_SEDIMENT_MAX_PCT_V: Final = 0.05  # ASTM D975 No. 1-D and 2-D, by D2709
FUEL_TEMPERATURE_RANGE_C: Final = (-50.0, 100.0)  # outside it, not a fuel in service
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
    marks: Marks = NO_MARKS  # per channel, as the lab wrote them
    density_kg_l: float | None = None  # at 15 °C: the sample's, else its source's

    def __post_init__(self) -> None:
        if self.codes is not None:
            _check_codes(self.codes)
            format_iso4406(self.codes, self.marks)  # validates the marks
        if self.counts_per_ml is not None:
            codes_from_counts(per_ml=self.counts_per_ml)  # validates range and order
        for name in ("water_mg_kg", "density_kg_l"):
            value = getattr(self, name)
            if value is not None and not (math.isfinite(value) and value >= 0):
                raise ValueError(f"{name} must be a finite number, 0 or more, got {value}")
        if self.density_kg_l is not None and not 0.5 <= self.density_kg_l <= 1.2:
            raise ValueError(f"density_kg_l must be 0.5 to 1.2 kg/L, got {self.density_kg_l}")
        if self.fame_pct_v is not None and not (
            math.isfinite(self.fame_pct_v) and 0 <= self.fame_pct_v <= 100
        ):
            raise ValueError(f"fame_pct_v must be 0 to 100 % V/V, got {self.fame_pct_v}")
        low, high = FUEL_TEMPERATURE_RANGE_C
        if self.temperature_c is not None and not low <= self.temperature_c <= high:
            raise ValueError(
                f"temperature_c must be a number from {low:g} to {high:g} °C, "
                f"got {self.temperature_c}"
            )


def channel_for_rating(rating_um: float | None) -> int:
    """ISO 4406 channel whose count loads a filter of this nominal rating (common practice).

    0 (>=4 um(c)) up to 4 um; 1 (>=6 um(c)) above 4 and below 10 um; 2 (>=14 um(c))
    from 10 um. Unknown rating: channel 0, the conservative choice, because the
    finest channel always has the highest count.
    """
    if rating_um is None:
        return 0
    if not (math.isfinite(rating_um) and rating_um > 0):
        raise ValueError(f"filter rating must be a positive number of µm, got {rating_um}")
    return 0 if rating_um <= 4 else 1 if rating_um < 10 else 2


def channel_for_efficiency_size(size_um_c: float) -> int:
    """ISO 4406 channel for an element whose efficiency is rated at this size (ISO 19438).

    The largest channel size at or below the rated size: the count there includes every
    particle the element is rated to stop, so the loading is not understated. Rated at
    4 um(c): channel 0; at 6 up to below 14: channel 1; from 14: channel 2. Below 4: 0.
    """
    if not (math.isfinite(size_um_c) and size_um_c > 0):
        raise ValueError(f"efficiency size must be a positive number of µm(c), got {size_um_c}")
    return 2 if size_um_c >= 14 else 1 if size_um_c >= 6 else 0


def filter_channel(
    *, efficiency_size_um_c: float | None, nominal_rating_um: float | None
) -> tuple[int, str]:
    """(channel, sentence): by the size the element's efficiency is rated at (ISO 19438);
    without it, by the nominal micrometre rating, and the sentence says it is a fallback."""
    size = CHANNEL_SIZES_UM
    if efficiency_size_um_c is not None:
        channel = channel_for_efficiency_size(efficiency_size_um_c)
        return channel, (
            f"Dirt is counted at ≥{size[channel]} µm(c), the channel at or below the "
            f"{efficiency_size_um_c:g} µm(c) size its efficiency is rated at (ISO 19438)."
        )
    channel = channel_for_rating(nominal_rating_um)
    basis = (
        "no rating is recorded"
        if nominal_rating_um is None
        else f"from its nominal {nominal_rating_um:g} µm rating"
    )
    return channel, (
        f"Dirt is counted at ≥{size[channel]} µm(c), {basis}: record the size its "
        "efficiency is rated at (ISO 19438) to choose the channel by it."
    )


def channel_check(channel: int) -> None:
    if channel not in (0, 1, 2):
        raise ValueError(f"channel must be 0, 1 or 2 (≥4, ≥6, ≥14 µm(c)), got {channel}")


def concentration_per_ml(*, quality: FuelQuality, channel: int) -> float:
    """Particles per mL in one channel: the lab count, else the code's upper limit.

    The upper limit of the code's range is the conservative reading of a code; ">28"
    reads as :data:`ABOVE_TABLE_PER_ML`.
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
            if quality.marks[channel] == ABOVE_TABLE:
                return ABOVE_TABLE_PER_ML
            return count_range(code)[1]
    raise LookupError(f"{quality.label} has no count at ≥{CHANNEL_SIZES_UM[channel]} µm(c)")


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
