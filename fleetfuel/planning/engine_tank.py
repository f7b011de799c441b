"""A unit's tank for its filters: rows -> services.tank, and the fuel burned back as loadings.

No queries and no decisions of the trade here (the mixing is ``services.tank``): this maps a
unit's fuelings, its own tank samples and its engine hours to the tank's inputs, and the
tank's parcels to the filter's loadings, with words naming each fueling and how much of it
has been burned.
"""

from __future__ import annotations

import bisect
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field
from datetime import datetime
from functools import partial

from fleetfuel.fleet.models import Unit
from services import filter_inputs, tank
from services import fuel_intake as fi
from services import fuel_quality as fq
from services import fuel_water as fw


@dataclass(frozen=True)
class SourceFuel:
    """What a fuel source's records say: its deliveries and its own samples, oldest first."""

    deliveries: list[tuple[datetime, float, str]]  # (delivered at, litres, words naming it)
    samples: list[fi.Sample]
    # The deliveries' and samples' moments, sorted (source_fuel_at makes them when asked)
    delivered_at: list[datetime] = field(default_factory=list, compare=False)
    sampled_at: list[datetime] = field(default_factory=list, compare=False)
    # source_fuel's answers by what they depend on (see source_fuel_at), kept for the batch
    known: dict[tuple[int, int, int], tuple[float, bool, str]] = field(
        default_factory=dict, compare=False
    )


@dataclass(frozen=True)
class BatchSources:
    """A batch's source samples as services read them (and the refused ones, with reasons),
    and each source's tank inputs: the same for every unit of the batch."""

    samples: list[fi.Sample]
    refused: list[str]
    sources: dict[int, SourceFuel]


@dataclass(frozen=True)
class TankLoadings:
    """What the unit's filters saw since their change, and the tank's fuel now."""

    loadings: list[filter_inputs.Loading]
    current_concentration_per_ml: float
    current_reference_assumed: bool
    sentence: str  # the tank model in words, for the explanation
    loading: float  # litres x particles per mL burned since ``since``
    loading_at_checkpoint: float | None = None  # the same, burned by the checkpoint


def hour_path(
    points: Sequence[tuple[datetime, float]], burn_l_per_h: float
) -> list[tuple[datetime, float]]:
    """(moment, cumulative litres burned): engine hours (never going back) times the burn."""
    path: list[tuple[datetime, float]] = []
    top = None
    for at, hours in sorted(points, key=lambda p: p[0]):
        top = hours if top is None else max(top, hours)
        path.append((at, top))
    start = path[0][1] if path else 0.0
    return [(at, (h - start) * burn_l_per_h) for at, h in path]


def tank_loadings(
    *,
    unit: Unit,
    paired: Sequence[fi.Paired],
    source_names: dict[int, str],
    tank_samples: Sequence[fi.Sample],
    sources: dict[int, SourceFuel],
    channel: int,
    hours: Sequence[tuple[datetime, float]],
    burn_l_per_h: float,
    since: datetime,
    now: datetime,
    checkpoint: datetime | None = None,
) -> TankLoadings:
    """The fuel the filters burned since ``since``, one loading per fueling it came from (and
    the loading burned by ``checkpoint``, when given: services.tank.tank_run)."""
    capacity, capacity_words = unit_capacity(unit=unit, paired=paired)
    path = hour_path(hours, burn_l_per_h)
    paired = in_reach(paired, capacity, path)
    fills = []
    measured = {id(s.quality) for s in tank_samples}
    words_of: dict[str, Callable[[], str]] = {}  # a fueling's words, made for those burned
    of_quality: dict[int, tuple[float, bool]] = {}  # many fuelings share one sample's quality
    for fueling, quality in paired:
        if id(quality) not in of_quality:
            of_quality[id(quality)] = fq.concentration_or_reference(
                quality=quality, channel=channel
            )
        conc, assumed = of_quality[id(quality)]
        words = quality.label if quality else "no sample: reference fuel assumed"
        source = sources.get(fueling.source_id) if fueling.source_id is not None else None
        if source and source.deliveries and id(quality) not in measured:
            conc, assumed, words = source_fuel_at(source=source, at=fueling.at, channel=channel)
        words_of[fueling.ref] = partial(_fueling_words, fueling, source_names, words)
        fills.append(
            tank.Fill(
                at=fueling.at,
                litres=fueling.litres,
                concentration_per_ml=conc,
                reference_assumed=assumed,
                label="",  # made below for the fuelings burned since ``since``
                ref=fueling.ref,
            )
        )
    measures = []
    for s in tank_samples:
        conc, assumed = fq.concentration_or_reference(quality=s.quality, channel=channel)
        if not assumed:
            measures.append(tank.Measure(at=s.at, concentration_per_ml=conc, label=s.quality.label))
    first_at = min([since, *(f.at for f in fills), *(t for t, _ in path[:1])])
    conc0, _ = fq.concentration_or_reference(quality=None, channel=channel)
    initial = tank.Fill(
        at=first_at, litres=capacity, concentration_per_ml=conc0, reference_assumed=True,
        label="the fuel in the tank before the first fueling on record (reference fuel assumed)",
    )  # fmt: skip
    state = tank.tank_run(
        capacity_l=capacity, initial=initial, fills=fills, measures=measures, burned=path,
        since=since, until=now, checkpoint=checkpoint,
    )  # fmt: skip
    loadings = [
        filter_inputs.Loading(
            at=min(now, max(p.fill.at, since)),
            litres=p.burned_since,
            concentration_per_ml=p.loading_since / p.burned_since,
            reference_assumed=p.fill.reference_assumed and p.measured_by is None,
            label=_parcel_words(p, p.fill.label or words_of[p.fill.ref]()),
        )
        for p in state.parcels
        if p.burned_since > 0
    ]
    sentence = (
        f"Fuel is counted as it is burned, not as it is put in: {capacity_words}, well mixed; "
        f"{state.burned_since:,.0f} L burned since the change at "
        f"{burn_l_per_h:.1f} L/h."
    )
    return TankLoadings(
        loadings, state.concentration_per_ml, state.reference_assumed, sentence,
        state.loading_since, state.loading_at_checkpoint,
    )  # fmt: skip


def in_reach(
    paired: Sequence[fi.Paired], capacity: float, path: Sequence[tuple[datetime, float]]
) -> Sequence[fi.Paired]:
    """The fuelings (oldest first) whose fuel can still be burned: not those the later ones
    pushed out of the full tank before its first draw (services.tank.fills_displaced)."""
    skip = tank.fills_displaced(
        fills=[(f.at, f.litres) for f, _ in paired], capacity_l=capacity,
        first_draw_at=path[0][0] if path else None,
    )  # fmt: skip
    return paired[skip:]


def unit_capacity(*, unit: Unit, paired: Sequence[fi.Paired]) -> tuple[float, str]:
    """The unit's tank: its own, else its class's, else its largest fueling (services.tank)."""
    return tank.tank_capacity(
        unit_l=unit.tank_capacity_l,
        class_l=unit.unit_class.typical_tank_l,
        largest_fill_l=max((f.litres for f, _ in paired), default=None),
    )


# A figure carried by the fuel, mixed by volume: (its value per litre for each fueling, in
# the order of ``paired``; its value for the tank's first contents).
Figure = tuple[Sequence[float], float]


def tank_now(
    *,
    unit: Unit,
    paired: Sequence[fi.Paired],
    hours: Sequence[tuple[datetime, float]],
    burn_l_per_h: float,
    now: datetime,
    figures: Sequence[Figure] = (),
) -> tuple[dict[int, float], list[float]]:
    """The unit's tank run as :func:`tank_loadings` runs it (well mixed, drawn at the engine
    hours times the burn) to ``now``: (litres of each fueling burned by ``now``, by its id;
    the tank's mix at ``now`` of each of ``figures``). How much of each fueling is burned, and
    is left, depends on volumes only, so one run mixes any number of figures: each is what the
    tank holds of every fueling (or held when it emptied: services.tank) weighted by its
    figure."""
    capacity, _ = unit_capacity(unit=unit, paired=paired)
    path = hour_path(hours, burn_l_per_h)
    skipped = len(paired) - len(in_reach(paired, capacity, path))  # the older: never burned

    def run(values: Sequence[float], initial: float) -> tank.TankState:
        fills = [
            tank.Fill(at=f.at, litres=f.litres, concentration_per_ml=value,
                      reference_assumed=True, label=f"fueling {f.ref}", ref=f.ref)
            for (f, _), value in zip(paired[skipped:], values[skipped:], strict=True)
            if f.at <= now
        ]  # fmt: skip
        first = tank.Fill(
            at=min([now, *(f.at for f in fills), *(t for t, _ in path[:1])]), litres=capacity,
            concentration_per_ml=initial, reference_assumed=True,
            label="the fuel in the tank before the first fueling on record",
        )  # fmt: skip
        return tank.tank_run(
            capacity_l=capacity, initial=first, fills=fills, measures=[], burned=path,
            since=now, until=now,
        )  # fmt: skip

    state = run(*(figures[0] if figures else ([0.0] * len(paired), 0.0)))
    burned = {int(p.fill.ref): p.burned_total for p in state.parcels if p.fill.ref}
    volume = sum(litres for _, litres in state.mix_of)
    mixes = []
    for values, initial in figures:
        if volume <= 0:  # never filled: the run of its own says what it keeps
            mixes.append(run(values, initial).concentration_per_ml)
            continue
        by_ref = {f.ref: value for (f, _), value in zip(paired, values, strict=True)}
        held = sum(litres * (by_ref[f.ref] if f.ref else initial) for f, litres in state.mix_of)
        mixes.append(held / volume)
    return burned, mixes


def tank_water(
    *,
    unit: Unit,
    paired: Sequence[fi.Paired],
    hours: Sequence[tuple[datetime, float]],
    burn_l_per_h: float,
    now: datetime,
    reference_mg_kg: float,
    coldest_c: float | None,
) -> tuple[float, float, dict[int, float]]:
    """(free water mg/kg, density kg/L) of the fuel in the unit's tank now: the fuel the
    filters' current concentration comes from, mixed the same way; and the litres of each
    fueling burned by now (:func:`tank_now`). Each fueling's free water is
    ``services.fuel_water.free_water_or_reference``'s; mg/kg is per kilogram, so the tank
    mixes the water per litre (mg/kg x kg/L) and the density, and divides."""
    densities = [(q.density_kg_l if q else None) or fq.DEFAULT_DENSITY_KG_L for _, q in paired]
    free = partial(fw.free_water_or_reference, reference_mg_kg=reference_mg_kg, coldest_c=coldest_c)
    samples = {id(q): q for _, q in paired}  # many fuelings share one sample's quality
    of_quality = {key: free(quality=q) for key, q in samples.items()}
    per_litre = [
        of_quality[id(q)] * density for (_, q), density in zip(paired, densities, strict=True)
    ]
    reference = free(quality=None)
    figures: list[Figure] = [(per_litre, reference * fq.DEFAULT_DENSITY_KG_L)]
    if any(d != fq.DEFAULT_DENSITY_KG_L for d in densities):  # else nothing to mix
        figures.append((densities, fq.DEFAULT_DENSITY_KG_L))
    burned, mixes = tank_now(
        unit=unit, paired=paired, hours=hours, burn_l_per_h=burn_l_per_h, now=now,
        figures=figures,
    )  # fmt: skip
    water, density = mixes[0], mixes[1] if len(mixes) > 1 else fq.DEFAULT_DENSITY_KG_L
    return water / density, density, burned


def source_fuel_at(*, source: SourceFuel, at: datetime, channel: int) -> tuple[float, bool, str]:
    """``source_fuel``, worked out once per state of the bulk tank: with nothing drawn, its
    fuel at ``at`` depends only on which deliveries and samples came by then (the ones at or
    before ``at``: a threshold, so their number names them) and the channel. Every unit of a
    batch fuelling from the same delivery then shares one tank run."""
    if len(source.delivered_at) != len(source.deliveries):
        source.delivered_at[:] = sorted(d_at for d_at, _, _ in source.deliveries)
    if len(source.sampled_at) != len(source.samples):
        source.sampled_at[:] = sorted(s.at for s in source.samples)
    key = (
        channel,
        bisect.bisect_right(source.delivered_at, at),
        bisect.bisect_right(source.sampled_at, at),
    )
    if key not in source.known:
        source.known[key] = source_fuel(source=source, at=at, channel=channel)
    return source.known[key]


def source_fuel(*, source: SourceFuel, at: datetime, channel: int) -> tuple[float, bool, str]:
    """(particles per mL, reference assumed, words) of a bulk tank's fuel at ``at``: its
    deliveries mix in (no sample of their own: the reference fuel), its samples measure it.
    With no draws on record, each delivery makes its own room (the tank held no more than
    its capacity less the delivery); the capacity is its largest delivery."""
    largest = max(litres for _, litres, _ in source.deliveries)
    capacity, _ = tank.tank_capacity(unit_l=None, class_l=None, largest_fill_l=largest)
    conc0, _ = fq.concentration_or_reference(quality=None, channel=channel)
    fills = [
        tank.Fill(at=d_at, litres=litres, concentration_per_ml=conc0, reference_assumed=True,
                  label=words)
        for d_at, litres, words in source.deliveries
        if d_at <= at
    ]  # fmt: skip
    measures = []
    for s in source.samples:
        conc, assumed = fq.concentration_or_reference(quality=s.quality, channel=channel)
        if s.at <= at and not assumed:
            measures.append(tank.Measure(at=s.at, concentration_per_ml=conc, label=s.quality.label))
    first = min([at, *(f.at for f in fills), *(m.at for m in measures)])
    initial = tank.Fill(
        at=first, litres=capacity, concentration_per_ml=conc0, reference_assumed=True,
        label="fuel of no record, before its first delivery",
    )  # fmt: skip
    state = tank.tank_run(
        capacity_l=capacity, initial=initial, fills=fills, measures=measures, burned=[],
        since=at, until=at,
    )  # fmt: skip
    held = sorted((p for p in state.parcels if p.left > 0), key=lambda p: -p.left)[:2]
    words = "; ".join(
        f"{p.left / capacity:.0%} {p.fill.label}"
        + (f", as measured by {p.measured_by}" if p.measured_by else ", no sample since")
        for p in held
    )
    return state.concentration_per_ml, state.reference_assumed, f"the tank then held {words}"


def _fueling_words(fueling: fi.Fueling, source_names: dict[int, str], words: str) -> str:
    return (
        f"the {fueling.litres:,.0f} L fuelled on {fueling.at:%Y-%m-%d} from "
        f"{source_names[int(fueling.ref)]}, {words}"
    )


def _parcel_words(p: tank.ParcelBurn, label: str) -> str:
    put_in = p.fill.litres
    words = f"{label} ({p.burned_total:,.0f} L of it burned so far"
    if p.left > 0 and put_in > 0:
        words += f", {p.left:,.0f} L still in the tank"
    if p.measured_by:
        words += f"; the tank then measured by {p.measured_by}"
    return words + ")"
