"""Unit flags from engine events: J1939 labels, relief-valve and pump flags, raised priorities.

Engine events arrive as SAE J1939 diagnostic codes (SPN + FMI) with a kind the caller has
already classified. SPN names follow SAE J1939-71 and FMI names SAE J1939-73, as listed in
open-source J1939 libraries' enums (the SAE J1939 Digital Annex is the authority). SPNs above
520,191 are manufacturer-proprietary: they are kept, never interpreted.

A flag whose checks send a mechanic to the high-pressure side says so (``high_pressure``);
the pages that show it add the one high-pressure caution and defer to the manufacturer's
service documentation and local rules.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta
from typing import Final

from services.common import TaskKind, amount_check, moment_check
from services.display import count_noun

# --------------------------------------------------------------------------- J1939 tables

J1939_FMI: dict[int, str] = {
    0: "above normal, most severe",
    1: "below normal, most severe",
    2: "erratic",
    3: "voltage high / shorted high",
    4: "voltage low / shorted low",
    5: "current low / open circuit",
    6: "current high / grounded",
    7: "mechanical not responding",
    8: "abnormal frequency or pulse width",
    9: "abnormal update rate",
    10: "abnormal rate of change",
    11: "root cause unknown",
    12: "bad device",
    13: "out of calibration",
    14: "special instructions",
    15: "above normal, least severe",
    16: "above normal, moderately severe",
    17: "below normal, least severe",
    18: "below normal, moderately severe",
    19: "network data error",
    20: "drifted high",
    21: "drifted low",
    31: "condition exists",
}

SPN_FUEL_FILTER_SUCTION_DP = (16, 1382)
SPN_FUEL_FILTER_DP = 95
SPN_WATER_IN_FUEL = 97
SPN_RELIEF_VALVE = 5571
LAST_STANDARD_SPN = 520_191  # above: manufacturer-proprietary

_SPN_LABELS: dict[int, str] = {
    16: "fuel filter (suction side) differential pressure",
    1382: "fuel filter (suction side) differential pressure",
    94: "fuel delivery pressure",
    95: "fuel filter differential pressure",
    97: "water in fuel indicator",
    157: "injector metering rail 1 pressure",
    633: "fuel actuator 1 control command",
    1347: "fuel pump pressurizing assembly 1",
    1381: "fuel supply pump inlet pressure",
    5571: "high-pressure common rail fuel pressure relief valve",
    5584: "fuel filter degradation",
}
# Injector cylinder n is SPN 650 + n; only cylinders 1-8 (SPN 651-658) are listed,
# as far as the public enums were checked.
_SPN_LABELS.update({650 + n: f"injector cylinder {n}" for n in range(1, 9)})


def spn_label(spn: int) -> str:
    """A short description of an SPN, or a plain marker where we do not interpret it."""
    if spn < 0:
        raise ValueError(f"SPN cannot be negative: {spn}")
    if spn > LAST_STANDARD_SPN:
        return f"proprietary SPN {spn} (not interpreted)"
    label = _SPN_LABELS.get(spn)
    return f"SPN {spn}: {label}" if label else f"SPN {spn}"


# FMIs that report the measured condition itself or a mechanical fault (SAE J1939-73:
# 0/1 and 15-18 above or below normal, 7 mechanical not responding, 14 special instructions,
# 31 condition exists), as against faults of the sensor's circuit, its data or its
# calibration (2-6, 8-13, 19-21), which say nothing about the fuel system.
_FMI_HIGH: Final = frozenset({0, 15, 16, 31})
_FMI_LOW: Final = frozenset({1, 17, 18, 31})
_FMI_CONDITION: Final = frozenset({0, 1, 7, 14, 15, 16, 17, 18, 31})
SPN_SUPPLY_PRESSURE = (94, 1381)
SPN_PUMPING = 1347
SPN_FILTER_DEGRADATION = 5584


def event_kind_classify(*, spn: int, fmi: int) -> str:
    """The kind (one of :data:`EVENT_KINDS`) of an engine event reported as SPN + FMI.

    Relief valve (SPN 5571) and pump pressurizing assembly (SPN 1347) with a condition or
    mechanical FMI; water in fuel (SPN 97) and fuel filter differential pressure (SPN 95,
    16/1382) or filter degradation (SPN 5584) above normal; fuel delivery or supply-pump inlet
    pressure (SPN 94, 1381) below normal. Anything else, a circuit fault of any of these and
    every manufacturer-proprietary SPN (above 520,191) is "other": kept, never interpreted.
    """
    if spn < 0 or spn > LAST_STANDARD_SPN:
        return "other"
    if spn == SPN_RELIEF_VALVE and fmi in _FMI_CONDITION:
        return "relief_valve_opened"
    if spn == SPN_PUMPING and fmi in _FMI_CONDITION:
        return "pumping_imbalance"
    if spn == SPN_WATER_IN_FUEL and fmi in _FMI_HIGH:
        return "water_in_fuel"
    filter_spns = (SPN_FUEL_FILTER_DP, *SPN_FUEL_FILTER_SUCTION_DP, SPN_FILTER_DEGRADATION)
    if spn in filter_spns and fmi in _FMI_HIGH:
        return "filter_dp_high"
    if spn in SPN_SUPPLY_PRESSURE and fmi in _FMI_LOW:
        return "supply_pressure_low"
    return "other"


# --------------------------------------------------------------------------- events and plans

EVENT_KINDS = (
    "relief_valve_opened",
    "water_in_fuel",
    "filter_dp_high",
    "supply_pressure_low",
    "pumping_imbalance",
    "other",
)


@dataclass(frozen=True, slots=True)
class EngineEvent:
    at: datetime
    hours: float | None
    spn: int
    fmi: int
    count: int
    kind: str  # one of EVENT_KINDS

    def __post_init__(self) -> None:
        amount_check(name="engine event hours", value=self.hours)
        amount_check(name="engine event count", value=self.count)
        amount_check(name="engine event spn", value=self.spn)
        if not 0 <= self.fmi <= 31:  # SAE J1939-73: the FMI is a 5-bit field
            raise ValueError(f"engine event fmi must be 0 to 31, got {self.fmi!r}")
        if self.kind not in EVENT_KINDS:
            raise ValueError(f"engine event kind must be one of {EVENT_KINDS}, got {self.kind!r}")


@dataclass(frozen=True, slots=True)
class ReliefValvePlan:
    window_hours: float | None
    window_days: int | None
    openings_to_flag: int
    lifetime_openings_to_replace: int | None


# Where a unit's plan sets no relief-valve thresholds: three openings within a week flag it
# (common practice: no standard sets these; a plan may set its own).
RELIEF_OPENINGS_TO_FLAG: Final = 3
RELIEF_WINDOW_DAYS: Final = 7


def relief_valve_plan(
    *,
    window_hours: float | None,
    window_days: int | None,
    openings_to_flag: int | None,
    lifetime_openings_to_replace: int | None,
) -> ReliefValvePlan:
    """A unit's relief-valve plan from what its service plan sets, defaults filled in.

    No count to flag (or 0): :data:`RELIEF_OPENINGS_TO_FLAG`. Neither an hour nor a day
    window: the last :data:`RELIEF_WINDOW_DAYS` days. A window the plan sets is kept as it
    is, and no lifetime limit means the valve is never flagged for its age.
    """
    if window_hours is None and window_days is None:
        window_days = RELIEF_WINDOW_DAYS
    return ReliefValvePlan(
        window_hours=window_hours,
        window_days=window_days,
        openings_to_flag=openings_to_flag or RELIEF_OPENINGS_TO_FLAG,
        lifetime_openings_to_replace=lifetime_openings_to_replace,
    )


@dataclass(frozen=True, slots=True)
class UnitFlag:
    code: str  # "relief_valve_repeat", "relief_valve_life", "pumping_imbalance"
    title: str
    reason: str
    checks: list[str]  # in the order a mechanic makes them
    since: datetime
    high_pressure: bool  # the checks touch the high-pressure side: pages show the caution


# --------------------------------------------------------------------------- flags


def _count(events: Sequence[EngineEvent]) -> int:
    return sum(max(0, e.count) for e in events)


def _span(events: Sequence[EngineEvent]) -> str:
    first = min(e.at for e in events).date().isoformat()
    last = max(e.at for e in events).date().isoformat()
    return first if first == last else f"{first} to {last}"


def unit_flags(
    *,
    events: Sequence[EngineEvent],
    relief_plan: ReliefValvePlan,
    lifetime_relief_openings: int,
    now: datetime,
    current_hours: float | None = None,
    valve_replaced_at: datetime | None = None,
) -> list[UnitFlag]:
    """Flags a unit earns from its engine events.

    Relief-valve openings (sum of counts) at or above ``openings_to_flag`` within the
    trailing window flag the unit. Both windows end now: the day window is
    [now - window_days, now], the hour window [current_hours - window_hours,
    current_hours] (the unit's engine hours now; unknown hours: no hour window), edges
    included. When the plan sets both windows, either one triggers, and the flag gives one
    reason. Only openings after ``valve_replaced_at`` (the valve's last replacement or
    fitting) count, and ``lifetime_relief_openings`` is the count since then. Events after
    ``now`` are refused.
    """
    amount_check(name="lifetime_relief_openings", value=lifetime_relief_openings)
    amount_check(name="current_hours", value=current_hours)
    moment_check(name="valve_replaced_at", at=valve_replaced_at, now=now)
    for e in events:
        moment_check(name="engine event occurred_at", at=e.at, now=now)
    openings = [
        e
        for e in events
        if e.kind == "relief_valve_opened"
        and (valve_replaced_at is None or e.at > valve_replaced_at)
    ]
    flags = [
        _relief_repeat_flag(
            openings=openings, plan=relief_plan, now=now, current_hours=current_hours
        ),
        _relief_life_flag(
            openings=openings,
            plan=relief_plan,
            lifetime=lifetime_relief_openings,
            since=valve_replaced_at,
            now=now,
        ),
        _imbalance_flag(imbalance=[e for e in events if e.kind == "pumping_imbalance"]),
    ]
    return [f for f in flags if f is not None]


def _relief_repeat_flag(
    *,
    openings: Sequence[EngineEvent],
    plan: ReliefValvePlan,
    now: datetime,
    current_hours: float | None,
) -> UnitFlag | None:
    """One reason, from the window with the most openings (the other one is named too)."""
    hits: list[tuple[int, str, list[EngineEvent]]] = []
    n_flag = plan.openings_to_flag
    if plan.window_days is not None:
        start = now - timedelta(days=plan.window_days)
        in_window = [e for e in openings if e.at >= start]
        hits.append((_count(in_window), f"{plan.window_days} days", in_window))
    if plan.window_hours is not None and current_hours is not None:
        start_hours = current_hours - plan.window_hours
        in_window = [e for e in openings if e.hours is not None and e.hours >= start_hours]
        hits.append((_count(in_window), f"{plan.window_hours:,.0f} engine hours", in_window))
    hits = [h for h in hits if h[2] and h[0] >= n_flag]
    if not hits:
        return None
    hits.sort(key=lambda h: -h[0])
    count, window, triggered = hits[0]
    reason = (
        f"{count_noun(count, 'relief-valve opening')} in the last {window} ({_span(triggered)}), "
        f"at or above the {n_flag} that flag a unit"
    )
    if len(hits) > 1:
        reason += f" (also {hits[1][0]} in the last {hits[1][1]})"
    reason += "."
    return UnitFlag(
        code="relief_valve_repeat",
        title="Rail pressure relief valve opening repeatedly",
        reason=reason,
        checks=[
            "Check the fuel metering actuator's circuit and connector first: a normally "
            "open actuator that loses its signal passes maximum flow, which drives rail "
            "pressure up to the relief valve.",
            "Check the rail pressure sensor, its connector and its circuit.",
            "Then check the relief valve itself, per the manufacturer's service documentation.",
        ],
        since=min(e.at for e in triggered),
        high_pressure=True,
    )


def _relief_life_flag(
    *,
    openings: Sequence[EngineEvent],
    plan: ReliefValvePlan,
    lifetime: int,
    since: datetime | None,
    now: datetime,
) -> UnitFlag | None:
    limit = plan.lifetime_openings_to_replace
    if limit is None or lifetime < limit:
        return None
    fitted = f" since it was fitted on {since:%Y-%m-%d}" if since is not None else ""
    return UnitFlag(
        code="relief_valve_life",
        title="Rail pressure relief valve at its opening limit",
        reason=(
            f"The relief valve has opened {count_noun(lifetime, 'time')}{fitted}, "
            f"at or above the {limit} after which the plan replaces it."
        ),
        checks=[
            "Replace the rail pressure relief valve per the manufacturer's service documentation.",
            "Before closing, find why it opened: metering actuator circuit, rail pressure sensor.",
        ],
        since=max((e.at for e in openings), default=now),
        high_pressure=True,
    )


def _imbalance_flag(*, imbalance: Sequence[EngineEvent]) -> UnitFlag | None:
    if not imbalance:
        return None
    return UnitFlag(
        code="pumping_imbalance",
        title="High-pressure pump: pumping imbalance",
        reason=(
            f"{count_noun(_count(imbalance), 'pumping-imbalance event')} ({_span(imbalance)}), "
            f"last {spn_label(imbalance[-1].spn)}, FMI {imbalance[-1].fmi}."
        ),
        checks=[
            "Check the supply side first: primary and fine filter condition and their "
            "differential pressure.",
            "Check the supply pressure at the high-pressure pump inlet.",
            "Then check the high-pressure pump per the manufacturer's procedure.",
        ],
        since=min(e.at for e in imbalance),
        high_pressure=True,
    )


def meter_change_flag(*, change: tuple[datetime, float, float]) -> UnitFlag:
    """A large drop in the hour-meter readings with no replacement recorded: (moment of the
    first low reading, engine hours before it, the meter value read) from the usage forecast."""
    at, before, meter = change
    return UnitFlag(
        code="meter_change_unconfirmed",
        title="Hour meter probably replaced: confirm it",
        reason=(
            f"The hour meter read {meter:,.0f} h on {at:%Y-%m-%d}, down from {before:,.0f} h, "
            "with no meter replacement recorded. Until it is, engine hours are counted on "
            f"from {before:,.0f} h as if no hours ran between the two readings."
        ),
        checks=[
            "Ask the site whether the hour meter or the instrument cluster was replaced.",
            "If it was, record the replacement with the old meter's last value and the new "
            "meter's first; if not, correct the mistyped reading.",
        ],
        since=at,
        high_pressure=False,
    )


def refused_flag(*, reasons: Sequence[str], now: datetime) -> UnitFlag:
    """Records the engine refused (NaN, infinite, negative, after now): what they would have
    fed is not projected until they are corrected."""
    return UnitFlag(
        code="records_refused",
        title="Records the projections could not use",
        reason=" ".join(r if r.endswith(".") else r + "." for r in reasons),
        checks=["Correct or remove the record named, then the projections are made again."],
        since=now,
        high_pressure=False,
    )


# --------------------------------------------------------------------------- priorities, water


def raised_priorities(*, events: Sequence[EngineEvent], since: datetime) -> set[TaskKind]:
    """Filters whose change an event since ``since`` makes more urgent.

    High filter dP on SPN 95 raises the fine filter, on SPN 16/1382 (suction side)
    the primary filter; a high-dP event on any other SPN cannot be placed and raises
    both. Low supply pressure raises the primary filter.
    """
    raised: set[TaskKind] = set()
    for e in events:
        if e.at < since:
            continue
        if e.kind == "filter_dp_high":
            if e.spn == SPN_FUEL_FILTER_DP:
                raised.add(TaskKind.FINE_FILTER)
            elif e.spn in SPN_FUEL_FILTER_SUCTION_DP:
                raised.add(TaskKind.PRIMARY_FILTER)
            else:
                raised.update({TaskKind.FINE_FILTER, TaskKind.PRIMARY_FILTER})
        elif e.kind == "supply_pressure_low":
            raised.add(TaskKind.PRIMARY_FILTER)
    return raised


def water_event_since(*, events: Sequence[EngineEvent], since: datetime) -> bool:
    """Whether a water-in-fuel event was raised at or after ``since``."""
    return any(e.kind == "water_in_fuel" and e.at >= since for e in events)
