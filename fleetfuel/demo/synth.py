"""A synthetic fleet for scale runs: thousands of invented units in their own depots, with
the inputs the projection reads (18 months of hour-meter readings and fuelings, deliveries and
fuel samples, engine events, filter dP readings) and a hash-chained service history.

Deterministic: the same ``units``, ``seed`` and ``now`` give the same rows. Every record is
laid back from ``now``. Written in chunks of units, so memory stays flat at any size.
"""

from __future__ import annotations

import random
from collections.abc import Iterator
from dataclasses import dataclass, field
from datetime import datetime, timedelta
from typing import Any

from django.contrib.auth.models import Group, User

from fleetfuel.accounts.models import Profile, Role
from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
    Delivery,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    FuelSource,
    MeterReading,
    ServicePlan,
    Site,
    Unit,
    UnitClass,
)
from fleetfuel.ledger.actions import BLANK_TEXT_FIELDS, CONTENT_FIELDS, event_content
from fleetfuel.ledger.models import ServiceEvent
from services.flags import event_kind_classify
from services.ledger import GENESIS, entry_hash

from .synth_store import Sink, synthetic_purge

SITE_CODE = "synth-"  # every synthetic depot's code starts so; --drop removes only these
MANAGER, MECHANIC = "synth-manager", "synth-mechanic"
UNITS_PER_SITE = 1000
CHUNK = 500  # units written per round
DAYS = 548  # 18 months
CYLINDERS = 4  # 10 fitted parts a unit: 6 + an injector per cylinder
PRIMARY_HOURS, FINE_HOURS = 500.0, 1000.0
# SAE J1939 SPN/FMI pairs (services/flags.py names them): relief valve, water in fuel, filter dP.
ENGINE_CODES = [(5571, 7), (5571, 7), (97, 0), (95, 0), (94, 1)]
CLASS_NAME = "Synthetic class"
PLANS = [
    (ComponentKind.PRIMARY_FILTER, {"interval_hours": PRIMARY_HOURS, "interval_days": 180,
     "dp_limit_bar": 0.35, "bowl_capacity_ml": 250, "drain_interval_days": 7,
     "drain_interval_hours": 60}),
    (ComponentKind.FINE_FILTER, {"interval_hours": FINE_HOURS, "interval_days": 365,
     "dp_limit_bar": 1.0}),
    (ComponentKind.RELIEF_VALVE, {"relief_window_hours": 50, "relief_window_days": 7,
     "relief_openings_to_flag": 3, "relief_lifetime_openings": 25}),
]  # fmt: skip
_BLANK_EVENT = dict.fromkeys(CONTENT_FIELDS) | dict.fromkeys(BLANK_TEXT_FIELDS, "")


@dataclass
class Made:
    """What a build wrote: rows per model and the depots."""

    counts: dict[str, int] = field(default_factory=dict)
    site_ids: list[int] = field(default_factory=list)


def synthetic_sites() -> list[Site]:
    return list(Site.objects.filter(code__startswith=SITE_CODE).order_by("code"))


def synthetic_drop() -> int:
    """Remove every synthetic depot, its units and their records, and the synthetic people."""
    sites = [s.pk for s in synthetic_sites()]
    users = list(User.objects.filter(username__in=[MANAGER, MECHANIC]).values_list("pk", flat=True))
    synthetic_purge(site_ids=sites, user_ids=users)
    UnitClass.objects.filter(name__startswith=CLASS_NAME, units__isnull=True).delete()
    return len(sites)


def synthetic_fleet_build(*, units: int, seed: int, now: datetime, days: int = DAYS) -> Made:
    """``units`` units in ceil(units / 1000) depots named 'Synthetic depot NN', with ``days``
    of history (a short one for tests of page sizes)."""
    builder = _Builder(seed=seed, now=now, days=days)
    builder.reference(units)
    for first in range(0, units, CHUNK):
        builder.chunk(first, min(units, first + CHUNK))
    builder.sink.analyze()
    return Made(counts=builder.sink.counts, site_ids=[s.pk for s in builder.sites])


class _Builder:
    def __init__(self, *, seed: int, now: datetime, days: int) -> None:
        self.seed, self.now = seed, now
        self.days = days
        self.start = now - timedelta(days=days)
        self.sink = Sink()

    def reference(self, units: int) -> None:
        """Depots, their bulk tanks and deliveries, the classes and their plans, the people."""
        count = max(1, -(-units // UNITS_PER_SITE))
        # A class per depot: the life evidence a batch reads (every filter change of its
        # class) stays that of 1,000 units, as in a shop with a few kinds of machine.
        self.classes = [
            UnitClass.objects.create(
                name=f"{CLASS_NAME} {n:02d}", typical_hours_per_day=10, typical_burn_l_per_h=22,
                typical_tank_l=600,
            )
            for n in range(1, count + 1)
        ]  # fmt: skip
        for uclass in self.classes:
            ServicePlan.objects.bulk_create(
                ServicePlan(unit_class=uclass, component_kind=kind, **fields)
                for kind, fields in PLANS
            )
        self.sites = [
            Site.objects.create(name=f"Synthetic depot {n:02d}", code=f"{SITE_CODE}{n:02d}")
            for n in range(1, count + 1)
        ]
        self.sources = [
            FuelSource.objects.create(site=s, name=f"{s.name} tank", kind="bulk_tank")
            for s in self.sites
        ]
        self.source_of = {s.site_id: s.pk for s in self.sources}
        self.mechanic = self._person(MECHANIC, Role.MECHANIC)
        self._person(MANAGER, Role.MANAGER)
        self.sink.write(Delivery, self._deliveries())
        self.sink.write(FuelSample, self._source_samples())

    def _person(self, username: str, role: str) -> User:
        user, _ = User.objects.get_or_create(username=username)
        user.groups.add(Group.objects.get_or_create(name=role)[0])
        profile, _ = Profile.objects.get_or_create(user=user)
        profile.sites.add(*self.sites)
        return user

    def _deliveries(self) -> Iterator[dict[str, Any]]:
        rng = random.Random(self.seed)
        for source in self.sources:
            for week in range(self.days // 7):
                at = self.start + timedelta(days=7 * week, hours=8)
                yield {
                    "source_id": source.pk,
                    "delivered_at": at,
                    "litres": float(rng.randrange(20_000, 40_000, 500)),
                    "supplier": "Synthetic supply",
                    "ticket": f"SD-{source.pk}-{week}",
                }

    def _source_samples(self) -> Iterator[dict[str, Any]]:
        rng = random.Random(self.seed + 1)
        for source in self.sources:
            for month in range(self.days // 30):
                yield _sample(
                    rng,
                    f"SYS-{source.pk}-{month}",
                    self.start + timedelta(days=30 * month + 2),
                    source_id=source.pk,
                )

    def chunk(self, first: int, last: int) -> None:
        """Units first..last-1: the units and their parts, then every record of theirs."""
        rows = [
            Unit(
                site=self.sites[i // UNITS_PER_SITE],
                unit_class=self.classes[i // UNITS_PER_SITE],
                fleet_number=f"SY-{i:06d}",
                make="Synthetic",
                model="SH-1",
                serial_number=f"SYN{self.seed:03d}{i:07d}",
                year=2020,
                cylinders=CYLINDERS,
                in_service_on=self.start.date() - timedelta(days=365),
            )
            for i in range(first, last)
        ]
        units = Unit.objects.bulk_create(rows)
        stories = [
            _Story(random.Random(self.seed * 1_000_003 + first + n), self.start, self.days)
            for n, _ in enumerate(units)
        ]
        parts = Component.objects.bulk_create(
            c for unit, story in zip(units, stories, strict=True) for c in story.parts(unit)
        )
        counts = self.sink.counts
        counts["fleet.Unit"] = counts.get("fleet.Unit", 0) + len(units)
        counts["fleet.Component"] = counts.get("fleet.Component", 0) + len(parts)
        fitted: dict[int, dict[str, Component]] = {}
        for part in parts:
            fitted.setdefault(part.unit_id, {})[part.kind] = part
        pairs = [(u, s, fitted[u.pk]) for u, s in zip(units, stories, strict=True)]
        self.sink.write(MeterReading, (r for u, s, _ in pairs for r in s.readings(u)))
        self.sink.write(Fueling, (r for u, s, _ in pairs for r in s.fuelings(u, self.source_of)))
        self.sink.write(EngineEvent, (r for u, s, _ in pairs for r in s.engine_events(u)))
        self.sink.write(FuelSample, (r for u, s, _ in pairs for r in s.samples(u)))
        self.sink.write(FilterPressureReading, (r for _, s, f in pairs for r in s.pressures(f)))
        mechanic = self.mechanic.pk
        self.sink.write(ServiceEvent, (r for u, s, f in pairs for r in s.events(u, f, mechanic)))


def _sample(rng: random.Random, reference: str, at: datetime, **where: int) -> dict[str, Any]:
    c14 = rng.choice([11, 12, 12, 13, 14])
    return {
        "reference": reference,
        "sampled_at": at,
        "iso4406": f"{c14 + 5}/{c14 + 3}/{c14}",
        "code_4": c14 + 5,
        "code_6": c14 + 3,
        "code_14": c14,
        "water_mg_kg": float(rng.randrange(40, 160)),
        "temperature_c": 12.0,
        "lab_method": "ISO 11171 APC; EN ISO 12937",
        **where,
    }


class _Story:
    """One unit's 18 months: a reading every second day at about 17:00 (engine hours at its own
    rate), fuel put in at two readings in three, filters changed on their hour intervals,
    the separator drained every sixth day."""

    def __init__(self, rng: random.Random, start: datetime, days: int) -> None:
        self.rng, self.start = rng, start
        rate = rng.uniform(6.0, 14.0)
        hours = float(rng.randrange(1000, 12000))
        self.log: list[tuple[datetime, float]] = []
        for day in range(0, days, 2):
            hours = round(hours + 2 * rate * rng.uniform(0.7, 1.3), 1)
            at = start + timedelta(days=day, hours=17, minutes=rng.randrange(60))
            self.log.append((at, hours))
        self.changes: dict[str, list[tuple[datetime, float]]] = {}
        for kind, interval in [("primary_filter", PRIMARY_HOURS), ("fine_filter", FINE_HOURS)]:
            done, last = [], self.log[0][1]
            for at, meter in self.log:
                if meter - last >= interval * rng.uniform(0.85, 1.0):
                    done.append((at, meter))
                    last = meter
            self.changes[kind] = done

    def parts(self, unit: Unit) -> Iterator[Component]:
        for kind in [
            "primary_filter",
            "fine_filter",
            "lift_pump",
            "high_pressure_pump",
            "rail",
            "relief_valve",
        ]:
            at, hours = (self.changes.get(kind) or [self.log[0]])[-1]
            yield Component(
                unit=unit,
                kind=kind,
                installed_on=at.date(),
                installed_hours=hours,
                rating_um={"primary_filter": 10.0, "fine_filter": 4.0}.get(kind),
            )
        for cylinder in range(1, CYLINDERS + 1):
            yield Component(
                unit=unit,
                kind="injector",
                position=cylinder,
                installed_on=unit.in_service_on,
                installed_hours=0.0,
            )

    def readings(self, unit: Unit) -> Iterator[dict[str, Any]]:
        for at, hours in self.log:
            yield {"unit_id": unit.pk, "taken_at": at, "hours": hours, "source": "fuel_log"}

    def fuelings(self, unit: Unit, sources: dict[int, int]) -> Iterator[dict[str, Any]]:
        source = sources[unit.site_id]
        last = self.log[0][1]
        for n, (at, hours) in enumerate(self.log[1:]):
            if n % 3 != 2:
                litres = round(max(5.0, (hours - last) * 22 * self.rng.uniform(0.85, 1.15)), 1)
                yield {
                    "unit_id": unit.pk,
                    "source_id": source,
                    "litres": min(litres, 1500.0),
                    "fueled_at": at - timedelta(minutes=30),
                }
                last = hours

    def engine_events(self, unit: Unit) -> Iterator[dict[str, Any]]:
        for n in range(3):
            at, hours = self.log[self.rng.randrange(len(self.log))]
            spn, fmi = self.rng.choice(ENGINE_CODES)
            yield {
                "unit_id": unit.pk,
                "occurred_at": at - timedelta(hours=2 + n),
                "hours": hours,
                "spn": spn,
                "fmi": fmi,
                "kind": event_kind_classify(spn=spn, fmi=fmi),
            }

    def samples(self, unit: Unit) -> Iterator[dict[str, Any]]:
        for n, at in enumerate(range(60, 2 * len(self.log), 180)):
            when = self.start + timedelta(days=at, hours=10)
            yield _sample(self.rng, f"SYU-{unit.pk}-{n}", when, unit_id=unit.pk)

    def pressures(self, fitted: dict[str, Component]) -> Iterator[dict[str, Any]]:
        """dP across each filter every 30 days, rising with the hours since its change."""
        for kind, base in [("primary_filter", 0.08), ("fine_filter", 0.2)]:
            part, changes = fitted[kind], self.changes[kind]
            for at, hours in self.log[::15]:
                since = max([h for a, h in changes if a <= at], default=self.log[0][1])
                yield {
                    "component_id": part.pk,
                    "taken_at": at,
                    "hours": hours,
                    "dp_bar": round(base + 0.0004 * (hours - since), 3),
                }

    def events(
        self, unit: Unit, fitted: dict[str, Component], mechanic: int
    ) -> Iterator[dict[str, Any]]:
        """The unit's service history in time order, sealed into its chain."""
        entries: list[tuple[datetime, int, dict[str, Any]]] = []
        for kind, changes in self.changes.items():
            for at, hours in changes:
                entries.append(
                    (
                        at,
                        0,
                        {
                            "kind": "filter_changed",
                            "hour_meter": hours,
                            "component_id": fitted[kind].pk,
                            "component_kind": kind,
                            "dp_before_bar": 0.3 if kind == "primary_filter" else 0.8,
                        },
                    )
                )
        primary = fitted["primary_filter"].pk
        for at, hours in self.log[2::3]:
            water = float(self.rng.randrange(2, 60))
            entries.append(
                (
                    at,
                    1,
                    {
                        "kind": "separator_drained",
                        "hour_meter": hours,
                        "component_id": primary,
                        "component_kind": "primary_filter",
                        "water_ml": water,
                        "water_appearance": "clear",
                    },
                )
            )
        entries.sort(key=lambda e: (e[0], e[1]))
        prev = GENESIS
        for seq, (at, _, fields) in enumerate(entries, start=1):
            row = (
                _BLANK_EVENT
                | fields
                | {
                    "unit_id": unit.pk,
                    "seq": seq,
                    "performed_at": at,
                    "recorded_at": at,
                    "recorded_by_id": mechanic,
                }
            )
            row["prev_hash"] = prev
            row["hash"] = prev = entry_hash(content=event_content(row), prev_hash=prev)
            yield row
