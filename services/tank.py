"""A well-mixed fuel tank: what its fills put in, what is burned (or drawn) from it, and when.

The mass balance of a perfectly mixed vessel (any chemical-engineering text on the continuous
stirred tank, e.g. Levenspiel, Chemical Reaction Engineering, 3rd ed., ch. 5): what leaves the
tank carries the tank's concentration at that moment, and a fill mixes by volume,

    c_after = (V c + L c_fill) / (V + L).

Drawing from a tank with nothing coming in leaves its concentration as it is, so between fills
the fuel burned carries the concentration set by the last fill, exactly. A fill bigger than
the room the books leave shows the tank held less than they said: the older fuel is scaled
down to make room (it was burned or drawn without a record). A sample of the tank itself
replaces what the books say with what was measured.

Each fill is followed as a parcel: how much of it is still in the tank and how much of it has
been burned, so an explanation can name the fueling or delivery that made the tank dirty and
how much of it has gone through the filters.

A unit's burn is given as a path of (moment, cumulative litres), linear between points (the
engine hours times the burn rate); a bulk tank's draws are its fuelings, a step each.
"""

from __future__ import annotations

import bisect
from collections.abc import Sequence
from dataclasses import dataclass
from datetime import datetime
from typing import Final

from services.inputs import number_check

# A unit with no tank size recorded, for itself or its class, and no fueling to bound it:
# a mid-size machine's tank (from memory: 200-600 L for loaders and excavators).
FALLBACK_TANK_L: Final = 400.0


@dataclass(frozen=True, slots=True)
class Fill:
    """Fuel put into the tank (a fueling of a unit, a delivery into a bulk tank)."""

    at: datetime
    litres: float
    concentration_per_ml: float
    reference_assumed: bool  # no sample said what it carried: the plan's reference fuel
    label: str  # names the fueling or delivery and the sample that describes it
    ref: str = ""  # the fueling's id, where it is one: to say how much of it was burned

    def __post_init__(self) -> None:
        number_check(f"{self.label}: litres", self.litres)
        number_check(f"{self.label}: concentration_per_ml", self.concentration_per_ml)


@dataclass(frozen=True, slots=True)
class Measure:
    """A sample of the tank itself: the tank's concentration from then on is this."""

    at: datetime
    concentration_per_ml: float
    label: str

    def __post_init__(self) -> None:
        number_check(f"{self.label}: concentration_per_ml", self.concentration_per_ml)


@dataclass(frozen=True, slots=True)
class ParcelBurn:
    """One fill (or the tank's first contents): how much of it was burned, and is left."""

    fill: Fill
    burned_since: float  # litres of it burned since ``since``
    burned_total: float  # litres of it burned since it went in
    left: float  # litres of it still in the tank
    loading_since: float  # litres x particles per mL of it burned since ``since``
    measured_by: str | None  # the tank sample that last set its concentration, if any


@dataclass(frozen=True, slots=True)
class TankState:
    """What the tank's fuel did up to ``until``."""

    parcels: list[ParcelBurn]  # oldest first; only those that put anything in or out
    concentration_per_ml: float  # the tank's concentration at ``until``
    reference_assumed: bool  # all of the tank's fuel at ``until`` had no sample
    burned_since: float  # litres burned from ``since`` to ``until``
    loading_since: float  # litres x particles per mL burned from ``since`` to ``until``


UNLOGGED_LABEL = "fuel burned but not in the fuel log (taken as the tank's last mix)"


def tank_capacity(
    *, unit_l: float | None, class_l: float | None, largest_fill_l: float | None
) -> tuple[float, str]:
    """(capacity in litres, the words that say where it came from).

    The unit's own tank, else its class's typical tank, else the largest fill on record (the
    tank holds at least that), else :data:`FALLBACK_TANK_L`.
    """
    if unit_l:
        return unit_l, f"the unit's {unit_l:,.0f} L tank"
    if class_l:
        return class_l, f"the class's typical {class_l:,.0f} L tank"
    if largest_fill_l:
        return largest_fill_l, (
            f"a {largest_fill_l:,.0f} L tank (no size recorded: its largest fueling)"
        )
    return FALLBACK_TANK_L, f"a {FALLBACK_TANK_L:,.0f} L tank (no size recorded: assumed)"


def path_litres(path: Sequence[tuple[datetime, float]], at: datetime) -> float:
    """Cumulative litres burned by ``at`` on a path of (moment, cumulative litres), oldest
    first: linear between points, flat before the first and after the last; at a moment
    given twice (a step), the later value."""
    if not path or at < path[0][0]:
        return 0.0 if not path else path[0][1]
    times = [t for t, _ in path]
    i = bisect.bisect_right(times, at) - 1
    if i >= len(path) - 1:
        return path[-1][1]
    (t0, c0), (t1, c1) = path[i], path[i + 1]
    span = (t1 - t0).total_seconds()
    return c0 if span <= 0 else c0 + (c1 - c0) * (at - t0).total_seconds() / span


class _Parcel:
    __slots__ = ("fill", "conc", "in_tank", "since", "total", "load", "measured_by")

    def __init__(self, fill: Fill, in_tank: float) -> None:
        self.fill = fill
        self.conc = fill.concentration_per_ml
        self.in_tank = in_tank
        self.since = 0.0
        self.total = 0.0
        self.load = 0.0
        self.measured_by: str | None = None


def tank_run(
    *,
    capacity_l: float,
    initial: Fill,
    fills: Sequence[Fill],
    measures: Sequence[Measure],
    burned: Sequence[tuple[datetime, float]],
    since: datetime,
    until: datetime,
) -> TankState:
    """Run the tank from ``initial`` (its contents, full, before the first fill) to ``until``.

    ``burned`` is the path of cumulative litres drawn (see :func:`path_litres`); what is drawn
    between two fills carries the tank's mix. Fuel drawn at or after ``since`` is counted in
    ``burned_since`` and ``loading_since``; fills after ``until`` are ignored.
    """
    number_check("tank capacity_l", capacity_l, positive=True)
    parcels = [_Parcel(initial, capacity_l)]
    events: list[tuple[datetime, int, Fill | Measure | None]] = [(since, 0, None)]
    events += [(f.at, 1, f) for f in fills]
    events += [(m.at, 2, m) for m in measures]  # a sample at a fill's instant: after it
    events.sort(key=lambda e: (e[0], e[1]))
    t_prev = min([since, *(e[0] for e in events), *(t for t, _ in burned[:1])])
    for at, _, event in [*(e for e in events if e[0] <= until), (until, 3, None)]:
        _draw(parcels, path_litres(burned, at) - path_litres(burned, t_prev), t_prev >= since)
        t_prev = at
        if isinstance(event, Fill):
            _fill(parcels, event, capacity_l)
        elif isinstance(event, Measure):
            _measure(parcels, event)
    volume = sum(p.in_tank for p in parcels)
    live = [p for p in parcels if p.in_tank > 0]
    return TankState(
        parcels=[
            ParcelBurn(p.fill, p.since, p.total, p.in_tank, p.load, p.measured_by)
            for p in parcels
            if p.total > 0 or p.in_tank > 0
        ],
        concentration_per_ml=_mix(parcels, volume),
        reference_assumed=all(p.fill.reference_assumed and not p.measured_by for p in live),
        burned_since=sum(p.since for p in parcels),
        loading_since=sum(p.load for p in parcels),
    )


def _mix(parcels: Sequence[_Parcel], volume: float) -> float:
    """The tank's concentration; an empty tank keeps the last fuel it held."""
    if volume <= 0:
        return parcels[-1].conc
    return sum(p.in_tank * p.conc for p in parcels) / volume


def _draw(parcels: list[_Parcel], litres: float, counted: bool) -> None:
    """Draw litres at the tank's mix. With nothing coming in the mix does not change, so
    each parcel gives its share of the tank, never more than it holds. More drawn than the
    books hold (a fueling not recorded) is drawn at the mix of what was last in the tank, and
    counted as fuel not in the log (a parcel of its own), so no fueling is said to have been
    burned beyond its own litres."""
    if litres <= 0:
        return
    volume = sum(p.in_tank for p in parcels)
    held = min(litres, volume)
    last_conc = _mix(parcels, volume)
    if held > 0:
        for parcel in [p for p in parcels if p.in_tank > 0]:
            _take(parcel, held * parcel.in_tank / volume, counted)
    excess = litres - held
    if excess > 0:
        _take(_unlogged(parcels, last_conc), excess, counted)


def _take(parcel: _Parcel, litres: float, counted: bool) -> None:
    parcel.in_tank = max(0.0, parcel.in_tank - litres)
    parcel.total += litres
    if counted:
        parcel.since += litres
        parcel.load += litres * parcel.conc


def _unlogged(parcels: list[_Parcel], conc: float) -> _Parcel:
    """The parcel of fuel burned but not in the fuel log, at the tank's last mix."""
    last = parcels[-1]
    if last.fill.label == UNLOGGED_LABEL and last.conc == conc:
        return last
    fill = Fill(
        at=last.fill.at,
        litres=0.0,
        concentration_per_ml=conc,
        reference_assumed=last.fill.reference_assumed,
        label=UNLOGGED_LABEL,
    )
    parcel = _Parcel(fill, 0.0)
    parcels.append(parcel)
    return parcel


def _fill(parcels: list[_Parcel], fill: Fill, capacity_l: float) -> None:
    volume = sum(p.in_tank for p in parcels)
    room_for_old = max(0.0, capacity_l - fill.litres)
    if volume > room_for_old:  # the tank held less than the books say: make room
        scale = room_for_old / volume
        for p in parcels:
            p.in_tank *= scale
    parcels.append(_Parcel(fill, min(fill.litres, capacity_l)))


def _measure(parcels: list[_Parcel], measure: Measure) -> None:
    """A sample of the tank: every parcel in it now carries the measured concentration."""
    for p in parcels:
        if p.in_tank > 0:
            p.conc = measure.concentration_per_ml
            p.measured_by = measure.label
