"""One way to show dates, times, engine hours, counts and spellings.

A depot picks a display style (``Site.locale``); every page, email and print of that depot
shows a date one way, a time one way and a number one way. Exports use ISO 8601 whatever the
depot (``iso_day``, ``iso_when``). This module is pure: callers pass a date, or a datetime
already in the depot's zone (the template filters in ``fleetfuel.accounts.templatetags.fmt``
convert it).
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import dataclass
from decimal import ROUND_HALF_UP, Decimal
from typing import Final

NBSP: Final = "\u00a0"
MONTHS: Final = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


@dataclass(frozen=True)
class Style:
    code: str
    label: str
    date_order: str  # "dmy-text", "mdy-text", "dmy-dots", "iso"
    clock_12h: bool
    thousands: str
    decimal: str
    date_time_sep: str


STYLES: Final = {
    s.code: s
    for s in (
        Style("en-GB", "English (UK): 2 Dec 2026, 14:05", "dmy-text", False, ",", ".", ", "),
        Style("en-US", "English (US): Dec 2, 2026, 2:05 PM", "mdy-text", True, ",", ".", ", "),
        Style("de-DE", "Deutsch: 02.12.2026, 14:05", "dmy-dots", False, ".", ",", ", "),
        Style("iso", "ISO 8601: 2026-12-02 14:05", "iso", False, ",", ".", " "),
    )
}
DEFAULT_STYLE: Final = "en-GB"
STYLE_CHOICES: Final = [(s.code, s.label) for s in STYLES.values()]


def style_for(code: str | None) -> Style:
    return STYLES.get(code or DEFAULT_STYLE, STYLES[DEFAULT_STYLE])


def day_text(value: dt.date, code: str | None = None) -> str:
    """A calendar date in the style: '2 Dec 2026', 'Dec 2, 2026', '02.12.2026', '2026-12-02'."""
    order = style_for(code).date_order
    if order == "dmy-text":
        return f"{value.day}{NBSP}{MONTHS[value.month - 1]}{NBSP}{value.year}"
    if order == "mdy-text":
        return f"{MONTHS[value.month - 1]}{NBSP}{value.day}, {value.year}"
    if order == "dmy-dots":
        return f"{value.day:02d}.{value.month:02d}.{value.year}"
    return value.isoformat()


def clock_text(value: dt.time | dt.datetime, code: str | None = None) -> str:
    """A time of day in the style: '14:05' or '2:05 PM' (no-break space before PM)."""
    if style_for(code).clock_12h:
        hour = value.hour % 12 or 12
        return f"{hour}:{value.minute:02d}{NBSP}{'AM' if value.hour < 12 else 'PM'}"
    return f"{value.hour:02d}:{value.minute:02d}"


def when_text(value: dt.datetime, code: str | None = None) -> str:
    """A date and time in the style, the datetime already in the depot's zone."""
    style = style_for(code)
    return f"{day_text(value.date(), code)}{style.date_time_sep}{clock_text(value, code)}"


def iso_day(value: dt.date) -> str:
    """ISO 8601 calendar date (exports), e.g. '2026-12-02'."""
    return value.isoformat()


def number_text(value: float, code: str | None = None, *, places: int = 0) -> str:
    """A number grouped by thousands, rounded half away from zero to ``places`` decimals."""
    style = style_for(code)
    rounded = Decimal(str(value)).quantize(Decimal(1).scaleb(-places), rounding=ROUND_HALF_UP)
    text = f"{abs(rounded):,.{places}f}"
    negative = rounded < 0  # a value that rounds to zero shows no sign
    whole, _, frac = text.partition(".")
    whole = whole.replace(",", style.thousands)
    body = f"{whole}{style.decimal}{frac}" if frac else whole
    return f"-{body}" if negative else body


def hours_text(value: float, code: str | None = None) -> str:
    """Engine hours, whole: '12,269 h' with a no-break space so the unit never wraps alone."""
    return f"{number_text(value, code)}{NBSP}h"


def meter_text(value: float, code: str | None = None) -> str:
    """An hour-meter reading: a tenth shown only when the reading has one ('12,269.4 h')."""
    places = 0 if round(value, 1) == round(value) else 1
    return f"{number_text(value, code, places=places)}{NBSP}h"


def count_noun(count: int, forms: str, code: str | None = None) -> str:
    """'1 event', '2 events'. ``forms`` is 'event' (an s is added) or 'entry,entries'."""
    singular, _, plural = forms.partition(",")
    plural = plural or f"{singular}s"
    return f"{number_text(count, code)} {singular if count == 1 else plural}"


# British spellings and the US ones, for a depot on US customary units.
US_SPELLINGS: Final = {
    "tyre": "tire",
    "tyres": "tires",
    "litre": "liter",
    "litres": "liters",
    "millilitre": "milliliter",
    "millilitres": "milliliters",
    "colour": "color",
    "fuelling": "fueling",
    "fuelled": "fueled",
    "fuellings": "fuelings",
    "centre": "center",
    "grey": "gray",
}
US_TO_UK: Final = {us: uk for uk, us in US_SPELLINGS.items()}
_WORD = re.compile(r"[A-Za-z]+")


def spelled(text: str, unit_system: str | None) -> str:
    """The text in the depot's spelling: US spelling for 'us', British otherwise."""
    table = US_SPELLINGS if unit_system == "us" else US_TO_UK

    def swap(match: re.Match[str]) -> str:
        word = match.group(0)
        other = table.get(word.lower())
        if other is None:
            return word
        if word.isupper():
            return other.upper()
        return other.capitalize() if word[0].isupper() else other

    return _WORD.sub(swap, text)
