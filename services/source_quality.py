"""Whether a fuel source's sample is out of range, and whether it still stands for the tank.

A bulk tank or bowser that took a dirty or wet delivery is one problem at the source, not one
per filter downstream: the manager decides once for the tank (polish, quarantine, resample,
or accept it as is) with the units it reached in view. This module holds the rules; the
Django side loads rows and stores the decision.

Sources:

* ISO 4406:1999 Table 1 (kept in ISO 4406:2021): each scale number is a doubling of the
  particle count per mL, so "two scale numbers over" is about four times the particles.
  ISO 4406:2021 marks "≥" a number where fewer than 20 particles were counted.
* World-Wide Fuel Charter, 6th edition (2019), categories 2-4: 18/16/13 at the nozzle, the
  reference used when no plan gives one.
* EN 590: water at most 200 mg/kg (EN ISO 12937).
* The margin over the reference and the age after which a sample no longer stands are the
  shop's settings (`common practice`: tanks are sampled after each delivery and on a fixed
  round), passed in here.
"""

from __future__ import annotations

import math
from collections.abc import Mapping, Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from enum import StrEnum

from .display import count_noun
from .fuel_quality import (
    CHANNEL_SIZES_UM,
    EN590_WATER_MAX_MG_KG,
    FEW_COUNTED,
    NO_MARKS,
    REFERENCE_CODES,
    Codes,
    Marks,
    format_iso4406,
)


@dataclass(frozen=True, slots=True)
class RangeVerdict:
    """What a source sample says against the reference: out of range or not, and why."""

    out_of_range: bool
    particles_over: bool
    water_over: bool
    reasons: tuple[str, ...]


def reference_strictest(*, references: Sequence[Codes]) -> Codes:
    """The cleanest of several plans' reference codes, channel by channel.

    A sample over any plan's reference by the margin on any channel is over this one by the
    margin on that channel, and only then. No plans: the World-Wide Fuel Charter's 18/16/13.
    """
    if not references:
        return REFERENCE_CODES
    firsts = [r[0] for r in references if r[0] is not None]
    return (
        min(firsts) if firsts else None,
        min(r[1] for r in references),
        min(r[2] for r in references),
    )


def sample_range_check(
    *,
    codes: Codes | None,
    water_mg_kg: float | None,
    reference: Codes,
    margin: int,
    marks: Marks = NO_MARKS,
    water_limit_mg_kg: float = EN590_WATER_MAX_MG_KG,
) -> RangeVerdict:
    """Out of range when any size channel is more than ``margin`` scale numbers above the
    reference, or the water is over ``water_limit_mg_kg`` (EN 590: 200 mg/kg).

    A channel missing from either code ("-" in the first place) is not compared. A number
    marked "≥" (fewer than 20 particles counted) still counts, with a word that it is
    statistically uncertain.
    """
    if margin < 0:
        raise ValueError(f"margin: scale numbers over the reference, 0 or more, got {margin}")
    if water_mg_kg is not None and not (math.isfinite(water_mg_kg) and water_mg_kg >= 0):
        raise ValueError(f"water_mg_kg: 0 or more mg/kg, got {water_mg_kg}")
    reasons: list[str] = []
    particles_over = False
    if codes is not None:
        shown = format_iso4406(codes, marks)
        ref_shown = format_iso4406(reference)
        for i, (code, ref) in enumerate(zip(codes, reference, strict=True)):
            if code is None or ref is None or code - ref <= margin:
                continue
            particles_over = True
            few = " (fewer than 20 particles counted: uncertain)" if marks[i] == FEW_COUNTED else ""
            reasons.append(
                f"ISO 4406 {shown} is {count_noun(code - ref, 'scale number')} above the reference "
                f"{ref_shown} at ≥{CHANNEL_SIZES_UM[i]} µm(c), about {2 ** (code - ref)} times "
                f"the particles (margin {margin}){few}"
            )
    water_over = water_mg_kg is not None and water_mg_kg > water_limit_mg_kg
    if water_over:
        reasons.append(
            f"water {water_mg_kg:.0f} mg/kg is over EN 590's {water_limit_mg_kg:.0f} mg/kg"
        )
    return RangeVerdict(
        out_of_range=particles_over or water_over,
        particles_over=particles_over,
        water_over=water_over,
        reasons=tuple(reasons),
    )


class Standing(StrEnum):
    STANDS = "stands"
    AGED = "aged"  # older than the shop's limit
    DELIVERY_SINCE = "delivery_since"  # a delivery went into the tank after it
    NEWER_SAMPLE = "newer_sample"  # a later sample speaks for the tank


@dataclass(frozen=True, slots=True)
class SampleStanding:
    standing: Standing
    reason: str

    @property
    def stands(self) -> bool:
        return self.standing is Standing.STANDS


def sample_standing_check(
    *,
    sampled_at: datetime,
    deliveries_at: Sequence[datetime],
    later_sample_at: datetime | None,
    max_age_days: float,
    now: datetime,
) -> SampleStanding:
    """Whether a source sample still stands for the tank at ``now``.

    It does not when a later sample was taken, when a delivery went in after it (the tank
    holds other fuel now), or when it is older than ``max_age_days``; checked in that order,
    the first that applies is the reason.
    """
    if not (math.isfinite(max_age_days) and max_age_days > 0):
        raise ValueError(f"max_age_days: more than 0 days, got {max_age_days}")
    if sampled_at > now:
        raise ValueError(f"sampled_at: {sampled_at.isoformat()} is after now")
    if later_sample_at is not None and sampled_at < later_sample_at <= now:
        return SampleStanding(
            Standing.NEWER_SAMPLE, f"a later sample was taken on {later_sample_at:%Y-%m-%d}"
        )
    after = sorted(d for d in deliveries_at if sampled_at < d <= now)
    if after:
        return SampleStanding(
            Standing.DELIVERY_SINCE,
            f"a delivery went into the tank on {after[0]:%Y-%m-%d}, after the sample",
        )
    age = now - sampled_at
    if age > timedelta(days=max_age_days):
        return SampleStanding(
            Standing.AGED,
            f"it is {age.days} days old, over the limit of {max_age_days:g} days",
        )
    return SampleStanding(Standing.STANDS, "it is the latest word on the tank")


def reach_start_find(
    *, sampled_at: datetime, delivery_at: datetime | None, deliveries_at: Sequence[datetime]
) -> datetime:
    """From when fuel drawn from the source carried what the sample found.

    The sample's own delivery if it names one; else the last delivery into the source at or
    before the sample; else the sample itself (nothing says when the fuel went in).
    """
    if delivery_at is not None and delivery_at <= sampled_at:
        return delivery_at
    before = [d for d in deliveries_at if d <= sampled_at]
    return max(before) if before else sampled_at


@dataclass(frozen=True, slots=True)
class Fuelled:
    """One fueling from the source: which unit, when, how much."""

    unit_id: int
    at: datetime
    litres: float
    ref: int = 0  # the fueling's id, to find how much of it was burned


@dataclass(frozen=True, slots=True)
class UnitReach:
    unit_id: int
    litres: float
    fuelings: int
    first_at: datetime
    last_at: datetime
    burned: float | None = None  # litres of it burned by ``end``; None: not worked out


def reach_sum(
    *,
    fuelings: Sequence[Fuelled],
    start: datetime,
    end: datetime,
    burned: Mapping[int, Mapping[int, float]] | None = None,
) -> list[UnitReach]:
    """Litres each unit took from the source from ``start`` up to and including ``end``,
    most litres first (ties by unit id).

    ``burned`` gives, by unit, the litres of each of its fuelings (by ref) burned by ``end``
    (its tank model); a unit missing from it has its burned litres not worked out (None), a
    fueling missing from a unit's map is not yet burned.
    """
    by_unit: dict[int, list[Fuelled]] = {}
    for f in fuelings:
        if not (math.isfinite(f.litres) and f.litres > 0):
            raise ValueError(f"litres: more than 0 L, got {f.litres}")
        if start <= f.at <= end:
            by_unit.setdefault(f.unit_id, []).append(f)
    reach = [
        UnitReach(
            unit_id=unit_id,
            litres=sum(f.litres for f in rows),
            fuelings=len(rows),
            first_at=min(f.at for f in rows),
            last_at=max(f.at for f in rows),
            burned=sum(burned[unit_id].get(f.ref, 0.0) for f in rows)
            if burned is not None and unit_id in burned
            else None,
        )
        for unit_id, rows in by_unit.items()
    ]
    return sorted(reach, key=lambda r: (-r.litres, r.unit_id))


def _units(n: int) -> str:
    return f"{n} unit{'s' if n != 1 else ''}"


# The explanation's line with each unit's litres starts with these words (a card that lists
# the units itself leaves it out).
UNIT_LINE_PREFIX = "Per unit:"


def decision_explain(
    *,
    sample_label: str,
    verdict: RangeVerdict,
    standing: SampleStanding,
    reach_start: datetime,
    reach: Sequence[UnitReach],
    names: Mapping[int, str] | None = None,
) -> list[str]:
    """The decision's explanation: the sample, why it is out of range, the litres it reached
    (fuel put into the units from the source) and how much of that the engines have burned
    (each unit's tank model), then the same per unit (named by ``names``)."""
    lines = [f"{sample_label}: out of range."]
    lines += [f"{reason[0].upper()}{reason[1:]}." for reason in verdict.reasons]
    total = sum(r.litres for r in reach)
    known = [r for r in reach if r.burned is not None]
    burned = sum(r.burned or 0.0 for r in known)
    units = _units(len(reach))
    line = (
        f"Since {reach_start:%Y-%m-%d %H:%M} UTC, {total:,.0f} L were fuelled from this "
        f"source into {units}"
    )
    if not reach:
        lines.append(line + ".")
    elif len(known) == len(reach):
        lines.append(
            f"{line}; {burned:,.0f} L of it has been burned by now, the rest is still in their "
            "tanks (each tank taken as well mixed, drawn at the unit's engine hours)."
        )
    elif known:
        lines.append(
            f"{line}; of the {sum(r.litres for r in known):,.0f} L that went into the "
            f"{_units(len(known))} worked out so far, {burned:,.0f} L has been burned by now."
        )
    else:
        lines.append(f"{line} (litres put in; litres burned not yet worked out).")
    if reach:
        name = names or {}
        lines.append(
            f"{UNIT_LINE_PREFIX} "
            + "; ".join(
                f"{name.get(r.unit_id, f'unit {r.unit_id}')} fuelled {r.litres:,.0f} L"
                + (f", burned {r.burned:,.0f} L" if r.burned is not None else "")
                for r in reach
            )
            + "."
        )
    if not standing.stands:
        lines.append(f"The sample no longer stands for the tank: {standing.reason}. Resample.")
    return lines
