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
import math
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
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
        if not (0 <= self.litres < math.inf and 0 <= self.concentration_per_ml < math.inf):
            number_check(f"{self.label}: litres", self.litres)  # the error, by name
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
    loading_at_checkpoint: float | None = None  # the same, from ``since`` to the checkpoint
    # What ``concentration_per_ml`` is the mix of: the fills in the tank at ``until`` and their
    # litres, or, for an empty tank, those it held when it emptied (none: never filled)
    mix_of: list[tuple[Fill, float]] = field(default_factory=list)


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


# A parcel of fuel below this fraction of the tank is none (a nanolitre in a 1,000 L tank).
NEGLIGIBLE_FRACTION: Final = 1e-12


def fills_displaced(
    *, fills: Sequence[tuple[datetime, float]], capacity_l: float, first_draw_at: datetime | None
) -> int:
    """How many of the oldest ``fills`` ((moment, litres), oldest first) a run may leave out.

    Until the first draw (``first_draw_at``; None: nothing is ever drawn) the tank is full,
    so each fill pushes out its share of what was in it: (capacity - litres) / capacity of the
    older fuel stays. A fill whose fuel the later ones pushed out to below
    :data:`NEGLIGIBLE_FRACTION` of the tank before anything was drawn is never burned."""
    number_check("tank capacity_l", capacity_l, positive=True)
    before = [litres for at, litres in fills if first_draw_at is None or at <= first_draw_at]
    stays = 1.0  # of the fuel in the tank before fill i, what the later fills leave
    for i in range(len(before) - 1, -1, -1):
        stays *= max(0.0, capacity_l - before[i]) / capacity_l
        if stays < NEGLIGIBLE_FRACTION:
            return i  # fills 0 .. i-1 were in the tank before fill i: below it too
    return 0


def path_litres(path: Sequence[tuple[datetime, float]], at: datetime) -> float:
    """Cumulative litres burned by ``at`` on a path of (moment, cumulative litres), oldest
    first: linear between points, flat before the first and after the last; at a moment
    given twice (a step), the later value."""
    return _path_reader(path)(at)


class _Parcel:
    """A fill in the tank. What every parcel in the tank gives to a draw is the same fraction
    of what it holds (the tank is well mixed), so a parcel keeps its share ``share`` and the
    tank one running scale; a draw or an overflowing fill then costs the same whatever the
    number of parcels. What a parcel has burned is its share times the run's running sums
    (``_Tank.burned`` and ``_Tank.counted``) since it went in, settled into its own sums
    whenever its concentration changes or the scale is reset."""

    __slots__ = ("fill", "conc", "share", "mark", "counted_mark", "since", "total", "load",
                 "measured_by")  # fmt: skip

    def __init__(self, fill: Fill, share: float, tank: _Tank) -> None:
        self.fill = fill
        self.conc = fill.concentration_per_ml
        self.share = share
        self.mark = tank.burned
        self.counted_mark = tank.counted
        self.since = 0.0
        self.total = 0.0
        self.load = 0.0
        self.measured_by: str | None = None

    def settle(self, tank: _Tank) -> None:
        """Move what the running sums owe this parcel into its own sums."""
        counted = self.share * (tank.counted - self.counted_mark)
        self.total += self.share * (tank.burned - self.mark)
        self.since += counted
        self.load += counted * self.conc
        self.mark, self.counted_mark = tank.burned, tank.counted


# Below this the running scale is folded into the shares: a parcel's sums are differences
# of running sums, and each decade the scale falls costs them a digit of precision.
_SCALE_FLOOR: Final = 1e-4
# Fuel left of a parcel below this is none (a nanolitre): it leaves the tank at a fold, so
# the parcels still in it stay few however long the record.
_NONE_LEFT_L: Final = 1e-9


def _mix_of(held: Sequence[tuple[_Parcel, float]]) -> float:
    return sum(litres * p.conc for p, litres in held) / sum(litres for _, litres in held)


class _Tank:
    """The parcels and the running sums: a parcel holds ``share * scale`` litres; each litre
    of share has burned ``burned`` litres in all and ``counted`` since ``since``."""

    def __init__(self) -> None:
        self.parcels: list[_Parcel] = []  # every parcel, oldest first
        self.live: list[_Parcel] = []  # those still holding fuel
        self.scale = 1.0
        self.burned = 0.0
        self.counted = 0.0
        self.shares = 0.0  # sum of the live parcels' shares
        self.shares_conc = 0.0  # sum of share x concentration
        # The parcels and litres the tank held when a draw last emptied it (its mix then)
        self.emptied_with: list[tuple[_Parcel, float]] = []

    def holds(self) -> list[tuple[_Parcel, float]]:
        """What the tank's mix is of: each parcel and its litres now, or, if the tank is
        empty, those it held when a draw emptied it."""
        now = [(p, litres) for p in self.live if (litres := self.held(p)) > 0]
        return now or self.emptied_with

    def volume(self) -> float:
        return self.shares * self.scale

    def mix(self) -> float:
        """The tank's concentration; an empty tank keeps the last fuel it held."""
        if self.volume() <= 0:
            if self.emptied_with:
                return _mix_of(self.emptied_with)
            return self.parcels[-1].conc
        return self.shares_conc / self.shares

    def add(self, parcel: _Parcel) -> None:
        self.parcels.append(parcel)
        if parcel.share > 0:
            self.emptied_with = []
            self.live.append(parcel)
            self.shares += parcel.share
            self.shares_conc += parcel.share * parcel.conc

    def rescale(self, factor: float) -> None:
        """Every parcel in the tank keeps ``factor`` of what it holds."""
        self.scale *= factor
        if self.scale < _SCALE_FLOOR:
            self.fold()

    def fold(self) -> None:
        """Fold the scale into the shares (settling every parcel); drop the emptied ones."""
        for p in self.live:
            p.settle(self)
            p.share *= self.scale
            if p.share < _NONE_LEFT_L:
                p.share = 0.0
        self.live = [p for p in self.live if p.share > 0]
        self.scale = 1.0
        self.shares = sum(p.share for p in self.live)
        self.shares_conc = sum(p.share * p.conc for p in self.live)

    def held(self, parcel: _Parcel) -> float:
        return parcel.share * self.scale if parcel.share > 0 else 0.0

    def loading(self) -> float:
        """Litres x particles per mL burned since ``since`` so far, every parcel's."""
        counted = self.counted
        return sum(p.load + p.share * p.conc * (counted - p.counted_mark) for p in self.parcels)


def tank_run(
    *,
    capacity_l: float,
    initial: Fill,
    fills: Sequence[Fill],
    measures: Sequence[Measure],
    burned: Sequence[tuple[datetime, float]],
    since: datetime,
    until: datetime,
    checkpoint: datetime | None = None,
) -> TankState:
    """Run the tank from ``initial`` (its contents, full, before the first fill) to ``until``.

    ``burned`` is the path of cumulative litres drawn (see :func:`path_litres`); what is drawn
    between two fills carries the tank's mix. Fuel drawn at or after ``since`` is counted in
    ``burned_since`` and ``loading_since``; fills after ``until`` are ignored. With a
    ``checkpoint`` (``since`` to ``until``), the loading burned by then is kept too: what a
    run to the checkpoint would give as ``loading_since``.
    """
    number_check("tank capacity_l", capacity_l, positive=True)
    tank = _Tank()
    tank.add(_Parcel(initial, capacity_l, tank))
    events: list[tuple[datetime, int, Fill | Measure | None]] = [(since, 0, None)]
    events += [(f.at, 1, f) for f in fills]
    events += [(m.at, 2, m) for m in measures]  # a sample at a fill's instant: after it
    if checkpoint is not None:
        events.append((checkpoint, 3, None))
    events.sort(key=lambda e: (e[0], e[1]))
    at_checkpoint = None
    t_prev = min([since, *(e[0] for e in events), *(t for t, _ in burned[:1])])
    litres_at = _path_reader(burned)
    litres_prev = litres_at(t_prev)
    for at, order, event in [*(e for e in events if e[0] <= until), (until, 4, None)]:
        litres = litres_at(at)
        _draw(tank, litres - litres_prev, t_prev >= since)
        t_prev, litres_prev = at, litres
        if order == 3:
            at_checkpoint = tank.loading()
        elif isinstance(event, Fill):
            _fill(tank, event, capacity_l)
        elif isinstance(event, Measure):
            _measure(tank, event)
    for p in tank.parcels:
        p.settle(tank)
    live = [p for p in tank.live if tank.held(p) > 0]
    return TankState(
        parcels=[
            ParcelBurn(p.fill, p.since, p.total, tank.held(p), p.load, p.measured_by)
            for p in tank.parcels
            if p.total > 0 or tank.held(p) > 0
        ],
        concentration_per_ml=tank.mix(),
        reference_assumed=all(p.fill.reference_assumed and not p.measured_by for p in live),
        burned_since=sum(p.since for p in tank.parcels),
        loading_since=sum(p.load for p in tank.parcels),
        loading_at_checkpoint=at_checkpoint,
        mix_of=[(p.fill, litres) for p, litres in tank.holds()],
    )


def _path_reader(path: Sequence[tuple[datetime, float]]) -> Callable[[datetime], float]:
    """:func:`path_litres` on one path, its moments listed once."""
    if not path:
        return lambda at: 0.0
    times = [t for t, _ in path]

    def litres_at(at: datetime) -> float:
        if at < times[0]:
            return path[0][1]
        i = bisect.bisect_right(times, at) - 1
        if i >= len(path) - 1:
            return path[-1][1]
        (t0, c0), (t1, c1) = path[i], path[i + 1]
        span = (t1 - t0).total_seconds()
        return c0 if span <= 0 else c0 + (c1 - c0) * (at - t0).total_seconds() / span

    return litres_at


def _draw(tank: _Tank, litres: float, counted: bool) -> None:
    """Draw litres at the tank's mix. With nothing coming in the mix does not change, so
    each parcel gives its share of the tank, never more than it holds. More drawn than the
    books hold (a fueling not recorded) is drawn at the mix of what was last in the tank, and
    counted as fuel not in the log (a parcel of its own), so no fueling is said to have been
    burned beyond its own litres."""
    if litres <= 0:
        return
    volume = tank.volume()
    held = min(litres, volume)
    if held > 0:
        fraction = held / volume
        tank.burned += tank.scale * fraction
        if counted:
            tank.counted += tank.scale * fraction
        before = [(p, tank.held(p)) for p in tank.live] if held >= volume else []
        tank.rescale(1.0 - fraction)
        if tank.volume() <= 0:
            tank.emptied_with = before
    excess = litres - held
    if excess > 0:  # the tank is empty now: its mix is the one it emptied at
        parcel = _unlogged(tank, tank.mix())
        parcel.total += excess
        if counted:
            parcel.since += excess
            parcel.load += excess * parcel.conc


def _unlogged(tank: _Tank, conc: float) -> _Parcel:
    """The parcel of fuel burned but not in the fuel log, at the tank's last mix."""
    last = tank.parcels[-1]
    if last.fill.label == UNLOGGED_LABEL and last.conc == conc:
        return last
    fill = Fill(
        at=last.fill.at,
        litres=0.0,
        concentration_per_ml=conc,
        reference_assumed=last.fill.reference_assumed,
        label=UNLOGGED_LABEL,
    )
    parcel = _Parcel(fill, 0.0, tank)
    tank.add(parcel)
    return parcel


def _fill(tank: _Tank, fill: Fill, capacity_l: float) -> None:
    volume = tank.volume()
    room_for_old = max(0.0, capacity_l - fill.litres)
    if volume > room_for_old:  # the tank held less than the books say: make room
        tank.rescale(room_for_old / volume)
    tank.add(_Parcel(fill, min(fill.litres, capacity_l) / tank.scale, tank))


def _measure(tank: _Tank, measure: Measure) -> None:
    """A sample of the tank: every parcel in it now carries the measured concentration."""
    for p in tank.live:
        if tank.held(p) > 0:
            p.settle(tank)
            p.conc = measure.concentration_per_ml
            p.measured_by = measure.label
    tank.shares_conc = sum(p.share * p.conc for p in tank.live)
