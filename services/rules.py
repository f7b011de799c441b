"""Unit flags from engine events, and the rules a work order must pass to close.

Engine events arrive as SAE J1939 diagnostic codes (SPN + FMI) with a kind the
caller has already classified. SPN and FMI descriptions follow SAE J1939-71 /
J1939-73 as listed in the project's DOMAIN.md (read in open-source J1939
libraries' enums; the SAE digital annex is the authority). SPNs above 520,191
are manufacturer-proprietary: they are kept, never interpreted.

Anything here that sends a mechanic to the high-pressure side defers to the
manufacturer's service documentation and local rules: rail pressure must fall
before any high-pressure fitting is opened.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime, timedelta

from services.common import TaskKind
from services.hour_meter import meter_backwards

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


# --------------------------------------------------------------------------- events and flags

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


@dataclass(frozen=True, slots=True)
class ReliefValvePlan:
    window_hours: float | None
    window_days: int | None
    openings_to_flag: int
    lifetime_openings_to_replace: int | None


@dataclass(frozen=True, slots=True)
class UnitFlag:
    code: str  # "relief_valve_repeat", "relief_valve_life", "pumping_imbalance"
    title: str
    reason: str
    checks: list[str]  # in the order a mechanic makes them
    since: datetime
    high_pressure: bool  # the checks touch the high-pressure side


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
) -> list[UnitFlag]:
    """Flags a unit earns from its engine events.

    Relief-valve openings (sum of counts) at or above ``openings_to_flag`` within the
    trailing window flag the unit. The day window is [now - window_days, now], both
    edges included; the hour window ends at ``current_hours`` or, when not given, at the
    highest engine hours among the events, edge included. When the plan sets both
    windows, either one triggers. Events after ``now`` are ignored.
    """
    past = [e for e in events if e.at <= now]
    flags: list[UnitFlag] = []

    openings = [e for e in past if e.kind == "relief_valve_opened"]
    reasons: list[str] = []
    triggered: list[EngineEvent] = []
    n_flag = relief_plan.openings_to_flag
    if relief_plan.window_days is not None:
        start = now - timedelta(days=relief_plan.window_days)
        in_window = [e for e in openings if e.at >= start]
        if in_window and _count(in_window) >= n_flag:
            reasons.append(
                f"{_count(in_window)} relief-valve openings in the last "
                f"{relief_plan.window_days} days ({_span(in_window)}), at or above the "
                f"{n_flag} that flag a unit."
            )
            triggered.extend(in_window)
    if relief_plan.window_hours is not None:
        timed = [e for e in openings if e.hours is not None]
        end = current_hours
        if end is None and any(e.hours is not None for e in past):
            end = max(e.hours for e in past if e.hours is not None)
        if end is not None:
            in_window = [
                e
                for e in timed
                if e.hours is not None and e.hours >= end - relief_plan.window_hours
            ]
            if in_window and _count(in_window) >= n_flag:
                reasons.append(
                    f"{_count(in_window)} relief-valve openings in the last "
                    f"{relief_plan.window_hours:,.0f} engine hours ({_span(in_window)}), at or "
                    f"above the {n_flag} that flag a unit."
                )
                triggered.extend(in_window)
    if reasons:
        flags.append(
            UnitFlag(
                code="relief_valve_repeat",
                title="Rail pressure relief valve opening repeatedly",
                reason=" ".join(reasons),
                checks=[
                    "Check the fuel metering actuator's circuit and connector first: a normally "
                    "open actuator that loses its signal passes maximum flow, which drives rail "
                    "pressure up to the relief valve.",
                    "Check the rail pressure sensor, its connector and its circuit.",
                    "Then check the relief valve itself, per the manufacturer's service "
                    "documentation.",
                ],
                since=min(e.at for e in triggered),
                high_pressure=True,
            )
        )

    limit = relief_plan.lifetime_openings_to_replace
    if limit is not None and lifetime_relief_openings >= limit:
        flags.append(
            UnitFlag(
                code="relief_valve_life",
                title="Rail pressure relief valve at its opening limit",
                reason=(
                    f"The relief valve has opened {lifetime_relief_openings} times, at or above "
                    f"the {limit} after which the plan replaces it."
                ),
                checks=[
                    "Replace the rail pressure relief valve per the manufacturer's service "
                    "documentation.",
                    "Before closing, find why it opened: metering actuator circuit, rail pressure "
                    "sensor.",
                ],
                since=max((e.at for e in openings), default=now),
                high_pressure=True,
            )
        )

    imbalance = [e for e in past if e.kind == "pumping_imbalance"]
    if imbalance:
        flags.append(
            UnitFlag(
                code="pumping_imbalance",
                title="High-pressure pump: pumping imbalance",
                reason=(
                    f"{_count(imbalance)} pumping-imbalance events ({_span(imbalance)}), "
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
        )
    return flags


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


# --------------------------------------------------------------------------- closing rules

TASK_KINDS = (
    "injector_replaced",
    "connector_replaced",
    "relief_valve_replaced",
    "filter_changed",
    "separator_drained",
    "measurement",
    "other",
)
OVERRIDING_ROLE = "manager"  # accounts' Role.MANAGER (a test keeps the two equal)
MIN_OVERRIDE_REASON = 10


@dataclass(frozen=True, slots=True)
class ClosedTask:
    kind: str  # one of TASK_KINDS
    cylinder: int | None
    value: float | None
    low_limit: float | None
    high_limit: float | None
    label: str
    per_cylinder: bool = False  # the task is done on one cylinder, which it must name


@dataclass(frozen=True, slots=True)
class RuleViolation:
    code: str
    message: str
    cylinder: int | None
    overridable: bool


def cylinder_exists(*, cylinder: float, cylinders: int) -> bool:
    """Whether an engine of ``cylinders`` cylinders has cylinder ``cylinder``: they are
    numbered 1 to n (common practice); a fraction is no cylinder."""
    return cylinder == int(cylinder) and 1 <= cylinder <= cylinders


def measurement_breach(*, value: float, low: float | None, high: float | None) -> str | None:
    """Which limit a value breaks: "below", "above", or None (a value on a limit passes)."""
    if low is not None and value < low:
        return "below"
    if high is not None and value > high:
        return "above"
    return None


def measurement_passed(
    *, value: float | None, low: float | None, high: float | None
) -> bool | None:
    """Pass (True), fail (False), or None when nothing was measured."""
    return None if value is None else measurement_breach(value=value, low=low, high=high) is None


def override_permitted(*, role: str | None) -> bool:
    """Whether a person of ``role`` may override a closing rule: a manager only."""
    return role == OVERRIDING_ROLE


def close_violations(
    *,
    tasks: Sequence[ClosedTask],
    hour_meter: float | None,
    last_hour_meter: float | None,
    meter_replaced: bool,
    cylinders: int,
) -> list[RuleViolation]:
    """What stops a work order from closing.

    * A replaced injector needs a new high-pressure connector on the same cylinder
      in the same work order (common practice: the connectors seal by deformation
      and are not reused). Overridable by a manager with a written reason.
    * A cylinder outside 1..cylinders is an error (not overridable).
    * The hour meter may not go backwards unless a meter replacement is recorded
      (not overridable).
    """
    violations: list[RuleViolation] = []
    valid: list[ClosedTask] = []
    for t in tasks:
        if t.cylinder is not None and not cylinder_exists(cylinder=t.cylinder, cylinders=cylinders):
            violations.append(
                RuleViolation(
                    code="cylinder_out_of_range",
                    message=(
                        f"{t.label or t.kind}: cylinder {t.cylinder} does not exist on this "
                        f"engine (cylinders 1 to {cylinders})."
                    ),
                    cylinder=t.cylinder,
                    overridable=False,
                )
            )
        elif t.cylinder is None and t.per_cylinder:
            violations.append(
                RuleViolation(
                    code="cylinder_missing",
                    message=f"{t.label or t.kind}: say which cylinder.",
                    cylinder=None,
                    overridable=False,
                )
            )
        else:
            valid.append(t)

    connectors = {t.cylinder for t in valid if t.kind == "connector_replaced"}
    injectors = sorted(
        {t.cylinder for t in valid if t.kind == "injector_replaced" and t.cylinder is not None}
    )
    for cyl in injectors:
        if cyl not in connectors:
            violations.append(
                RuleViolation(
                    code="injector_without_connector",
                    message=(
                        f"Injector replaced on cylinder {cyl} without a new high-pressure "
                        f"connector on cylinder {cyl}."
                    ),
                    cylinder=cyl,
                    overridable=True,
                )
            )

    if meter_backwards(hours=hour_meter, earlier_hours=last_hour_meter, replaced=meter_replaced):
        violations.append(
            RuleViolation(
                code="hour_meter_backwards",
                message=(
                    f"The hour meter reads {hour_meter:,.1f} h, below the last reading of "
                    f"{last_hour_meter:,.1f} h, and no meter replacement is recorded."
                ),
                cylinder=None,
                overridable=False,
            )
        )
    return violations


def follow_ups(*, tasks: Sequence[ClosedTask]) -> list[str]:
    """Follow-up task descriptions for measurements outside their limits."""
    out: list[str] = []
    for t in tasks:
        if t.kind != "measurement" or t.value is None:
            continue
        where = f" on cylinder {t.cylinder}" if t.cylinder is not None else ""
        side = measurement_breach(value=t.value, low=t.low_limit, high=t.high_limit)
        if side is not None:
            word, limit = ("low", t.low_limit) if side == "below" else ("high", t.high_limit)
            text = f"Follow up {t.label}{where}: measured {t.value:g}, {side} the {word} limit"
            out.append(f"{text} {limit:g}.")
    return out


def override_allowed(
    *, violations: Sequence[RuleViolation], role: str | None, reason: str
) -> tuple[bool, str]:
    """Whether ``role`` may override ``violations`` with ``reason``; returns (ok, message)."""
    if not violations:
        return True, "Nothing to override."
    if not override_permitted(role=role):
        return False, "Only a manager may override a closing rule."
    fixed = [v for v in violations if not v.overridable]
    if fixed:
        return False, "These cannot be overridden and must be corrected: " + " ".join(
            v.message for v in fixed
        )
    if len(reason.strip()) < MIN_OVERRIDE_REASON:
        return False, (
            f"Give a written reason of at least {MIN_OVERRIDE_REASON} characters for the override."
        )
    return True, f"Override accepted for {len(violations)} rule(s): {reason.strip()}"
