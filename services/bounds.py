"""What fleetfuel accepts as input: plausible ranges per quantity, a window for dates, caps for
free text, and which characters text may hold.

Declared once here; the forms, the admin (through the model fields) and the tablet's own
parsers all ask these functions. A range is wide enough for any real machine and narrow
enough that a slip (1e308, a date in the year 9999) is refused before it is stored, where it
would make every later reading look impossible. Each range gives its reason or its source;
``common practice`` marks a choice with no published figure behind it.
"""

from __future__ import annotations

import math
import unicodedata
from dataclasses import dataclass
from datetime import date, timedelta
from typing import Final


@dataclass(frozen=True)
class Range:
    """A closed interval of a stored (SI-style) quantity and why it ends where it does."""

    low: float
    high: float
    unit: str
    reason: str


# Keys are the stored quantities of services/units.py, plus the sample and plan quantities.
RANGES: Final[dict[str, Range]] = {
    "hours": Range(
        0.0,
        200_000.0,
        "h",
        "an hour meter counts up from 0; 200,000 h is about 23 years of running day and night "
        "(8,766 h a year), beyond any diesel engine's life between rebuilds (common practice)",
    ),
    "volume_l": Range(
        0.0,
        1_000_000.0,
        "L",
        "a road tanker carries tens of thousands of litres; one million litres bounds any "
        "delivery or tank fleetfuel records (common practice)",
    ),
    "volume_ml": Range(
        0.0,
        100_000.0,
        "mL",
        "water drained at one service: 100 L is far beyond any separator bowl and sump "
        "(common practice)",
    ),
    "flow_l_per_h": Range(
        0.0,
        10_000.0,
        "L/h",
        "fuel burn or return flow of one engine: 10,000 L/h bounds the largest mobile "
        "diesels (common practice)",
    ),
    "pressure_bar_gauge": Range(
        -1.01325,
        3_000.0,
        "bar(g)",
        "gauge pressure cannot be below minus one standard atmosphere, 101.325 kPa "
        "(ISO 2533:1975, the standard atmosphere at mean sea level); common-rail systems "
        "run below 3,000 bar (common practice)",
    ),
    "temperature_c": Range(
        -60.0,
        150.0,
        "°C",
        "fuel or ambient temperature where machines work; diesel is not handled above 150 °C "
        "(common practice)",
    ),
    "mass_fraction_mg_kg": Range(
        0.0,
        1_000_000.0,
        "mg/kg",
        "a mass fraction: 1 kg is 1,000,000 mg, so no part of a kilogram exceeds it "
        "(SI Brochure, 9th edition, 2019, section 3, SI prefixes: milli = 10^-3, kilo = 10^3)",
    ),
    "particles_per_ml": Range(
        0.0,
        10_000_000.0,
        "per mL",
        "ISO 4406:2021, Table 1 ends at scale number 28 (more than 1,300,000 and up to "
        "2,500,000 particles per mL); ten million leaves room for a count above the table",
    ),
    "percent": Range(0.0, 100.0, "%", "a part of a whole (definition of per cent)"),
    "density_kg_l": Range(
        0.5,
        1.5,
        "kg/L",
        "liquid fuels lie well inside this: EN 590:2022, Table 1 asks 0.820 to 0.845 kg/L at "
        "15 °C for diesel, and water is 0.999 kg/L (common practice for the margins)",
    ),
    # Any other number: no stored quantity of fleetfuel reaches a billion in its stored unit.
    "magnitude": Range(
        -1e9, 1e9, "", "the largest stored quantity is below 10^9 (common practice)"
    ),
}

# Model fields of fleetfuel are named after what they hold; a FloatField whose name ends so is
# checked against that quantity in the admin (fleetfuel/accounts/hygiene.py).
QUANTITY_BY_NAME_END: Final[tuple[tuple[str, str], ...]] = (
    ("hour_meter", "hours"),
    ("meter_final", "hours"),
    ("meter_start", "hours"),
    ("hours", "hours"),
    ("_mg_kg", "mass_fraction_mg_kg"),
    ("_per_ml", "particles_per_ml"),
    ("_ml", "volume_ml"),
    ("_l_per_h", "flow_l_per_h"),
    ("_kg_l", "density_kg_l"),
    ("litres", "volume_l"),
    ("_l", "volume_l"),
    ("_bar", "pressure_bar_gauge"),
    ("_c", "temperature_c"),
    ("_pct_v", "percent"),
)


def quantity_for_name(*, name: str) -> str:
    """The quantity a stored field named ``name`` holds: its name says so, else "magnitude"."""
    for end, quantity in QUANTITY_BY_NAME_END:
        if name.endswith(end):
            return quantity
    return "magnitude"


def _show(value: float) -> str:
    if abs(value) >= 1e15:
        return f"{value:g}"
    return f"{value:,.0f}" if value == int(value) else f"{value:,.6g}"


def number_problem(*, value: float, quantity: str, label: str = "") -> str:
    """What is wrong with ``value`` as a stored ``quantity`` ("" when it is plausible)."""
    name = label or "This value"
    if not math.isfinite(value):
        return f"{name}: “{value}” is not a number."
    bounds = RANGES[quantity]
    if bounds.low <= value <= bounds.high:
        return ""
    unit = f" {bounds.unit}" if bounds.unit else ""
    entered = _show(value)
    return (
        f"{name} must be from {_show(bounds.low)} to {_show(bounds.high)}{unit} "
        f"(you entered {entered})."
    )


# --------------------------------------------------------------------------- dates


@dataclass(frozen=True)
class DateWindow:
    """Days before and after today that a date may lie."""

    past_days: int
    future_days: int
    reason: str


DATE_WINDOWS: Final[dict[str, DateWindow]] = {
    # Something that happened: a service, a reading, a sample.
    "done": DateWindow(
        past_days=60 * 366,
        future_days=1,
        reason="work already done is not in the future (a day's grace for time zones); "
        "sixty years covers any machine still in service (common practice)",
    ),
    # Something planned: a work order's due day, a filter on a list.
    "plan": DateWindow(
        past_days=60 * 366,
        future_days=10 * 366,
        reason="plans reach a few years ahead; ten years bounds any service interval "
        "(common practice)",
    ),
}


def date_problem(*, value: date, today: date, window: str = "done", label: str = "") -> str:
    """What is wrong with ``value`` given ``today`` ("" when it lies in the window)."""
    span = DATE_WINDOWS[window]
    earliest = today - timedelta(days=span.past_days)
    latest = today + timedelta(days=span.future_days)
    if earliest <= value <= latest:
        return ""
    return (
        f"{label or 'The date'} must be from {earliest:%Y-%m-%d} to {latest:%Y-%m-%d} "
        f"(you entered {value:%Y-%m-%d})."
    )


# --------------------------------------------------------------------------- text

LINE_MAX: Final = 200  # a name, a search, a part number: one line (common practice)
NOTE_MAX: Final = 2_000  # one note as typed (the tablet's notes field)
NOTES_TOTAL_MAX: Final = 20_000  # a work order's notes with everything appended to them
ALLOWED_IN_TEXT_AREA: Final = frozenset("\t\n\r")


def text_problem(*, value: str, multiline: bool = True, label: str = "") -> str:
    """What is wrong with the characters of ``value`` ("" when none).

    Control characters (Unicode category Cc: C0, DEL and C1) are refused: PostgreSQL cannot
    store NUL in text, and a line break in a name breaks email headers. A text area may hold
    tabs and line breaks. Format characters (Cf) such as the zero-width joiner are kept: some
    scripts need them (Unicode Standard 15.1, section 23.2).
    """
    allowed = ALLOWED_IN_TEXT_AREA if multiline else frozenset()
    bad = [c for c in value if unicodedata.category(c) == "Cc" and c not in allowed]
    if not bad:
        return ""
    shown = ", ".join(dict.fromkeys(f"U+{ord(c):04X}" for c in bad))
    what = "control characters" if not multiline else "control characters other than line breaks"
    return f"{label or 'This text'} cannot hold {what} (found {shown})."


def length_problem(*, value: str, limit: int = NOTES_TOTAL_MAX, label: str = "") -> str:
    """What is wrong with the length of ``value`` ("" when it fits ``limit`` characters)."""
    if len(value) <= limit:
        return ""
    return f"{label or 'This text'} is {len(value):,} characters long; at most {limit:,} fit."


def notes_append(*, notes: str, text: str, limit: int = NOTES_TOTAL_MAX) -> str:
    """``notes`` with ``text`` added as a new paragraph, at most ``limit`` characters.

    Text already there is not added again (a retried post), and once the notes are full
    nothing more is added: the notes keep what came first.
    """
    text = text.strip()
    if not text or text in notes:
        return notes
    joined = f"{notes.rstrip()}\n\n{text}" if notes else text
    return joined[:limit] if len(notes) < limit else notes
