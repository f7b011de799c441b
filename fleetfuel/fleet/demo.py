"""An invented demo fleet: Harrow Vale Aggregates, a quarrying and haulage company.

Everything here is made up for the demo. The scenario is deterministic for a given anchor
date (a seeded random generator; dates are laid back from the anchor so the demo always has
something due), and it includes:
- four depots, one of them showing US customary units;
- 48 units in five classes, 15 months of hour-meter readings and fuelings;
- a water-contaminated delivery into the Mill Lane bulk tank, and a dirty (particulate)
  delivery into the Kestrel bulk tank, both recent;
- repeated rail relief-valve openings on one hauler, water-in-fuel alarms on units fed from
  the wet tank, a pumping-imbalance event on a generator set;
- a service history (filter changes, separator drains, an injector replacement with its
  connector) and a few open work orders; one demo user per role.
"""

from __future__ import annotations

import random
from dataclasses import dataclass
from datetime import UTC, date, datetime, time, timedelta

from django.contrib.auth.models import Group, User
from django.db import transaction

from fleetfuel.accounts.models import Profile, Role
from fleetfuel.ledger.actions import service_event_append
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask

from .models import (
    Component,
    ComponentKind,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    FuelSource,
    MeasurementLimit,
    MeterReading,
    MeterReplacement,
    ServicePlan,
    Site,
    Unit,
    UnitClass,
)

DEMO_PASSWORD = "fleetfuel-demo"
SEED = 4406
HISTORY_DAYS = 450


@dataclass(frozen=True)
class ClassSpec:
    name: str
    hours_per_day: float
    burn_l_per_h: float
    cylinders: int
    make: str
    model: str
    works_weekends: bool


CLASSES = {
    "hauler": ClassSpec("Articulated hauler", 9.0, 24.0, 6, "Brackwater", "AH-30", False),
    "loader": ClassSpec("Wheel loader", 7.5, 17.0, 6, "Brackwater", "WL-220", False),
    "excavator": ClassSpec("Tracked excavator", 6.5, 15.0, 6, "Orrin", "TX-35", False),
    "genset": ClassSpec("Generator set", 15.0, 38.0, 12, "Selby Power", "G-500", True),
    "workboat": ClassSpec("Workboat", 5.0, 42.0, 8, "Tidewright", "WB-16", True),
}

SITES = [
    # name, code, tz, units system, fuel source, {class: count}
    (
        "Kestrel Quarry",
        "kestrel",
        "Europe/London",
        "metric",
        "Kestrel bulk tank",
        {"hauler": 8, "loader": 4, "excavator": 3, "genset": 2},
    ),
    (
        "Mill Lane Depot",
        "mill-lane",
        "Europe/London",
        "metric",
        "Mill Lane bulk tank",
        {"hauler": 6, "loader": 3, "excavator": 3, "genset": 2},
    ),
    (
        "Saltmarsh Wharf",
        "saltmarsh",
        "Europe/London",
        "metric",
        "Wharf bowser",
        {"workboat": 2, "genset": 2, "loader": 2},
    ),
    (
        "Cedar Flats Yard",
        "cedar-flats",
        "America/Chicago",
        "us",
        "Retail fuel card",
        {"hauler": 5, "loader": 3, "excavator": 2, "genset": 1},
    ),
]

PREFIX = {"kestrel": "KQ", "mill-lane": "ML", "saltmarsh": "SW", "cedar-flats": "CF"}
CLASS_LETTER = {"hauler": "H", "loader": "L", "excavator": "X", "genset": "G", "workboat": "B"}


def _at(day: date, hour: int, minute: int = 0) -> datetime:
    return datetime.combine(day, time(hour, minute), tzinfo=UTC)


class DemoBuilder:
    def __init__(self, *, anchor: date) -> None:
        self.anchor = anchor
        self.start = anchor - timedelta(days=HISTORY_DAYS)
        self.rng = random.Random(SEED)
        self.units: dict[str, Unit] = {}
        self.unit_hours: dict[str, list[tuple[datetime, float, float]]] = {}  # at, engine, meter

    # ---- reference data -------------------------------------------------------------
    def build(self) -> None:
        self.users()
        self.classes_and_plans()
        self.sites_and_sources()
        self.fleet()
        self.samples()
        for key, unit in self.units.items():
            self.usage_and_fuel(key, unit)
        self.events()
        self.history()
        self.work_orders()

    def users(self) -> None:
        self.people: dict[str, User] = {}
        for username, first, last, role in [
            ("manager", "Maya", "Okafor", Role.MANAGER),
            ("mechanic", "Tom", "Reyes", Role.MECHANIC),
            ("mechanic2", "Ines", "Varga", Role.MECHANIC),
            ("auditor", "Priya", "Lindqvist", Role.AUDITOR),
        ]:
            user = User.objects.create_user(
                username,
                f"{username}@harrowvale.example",
                DEMO_PASSWORD,
                first_name=first,
                last_name=last,
            )
            user.groups.add(Group.objects.get(name=role.value))
            Profile.objects.create(user=user, work_list_subscribed=role == Role.MANAGER)
            self.people[username] = user

    def classes_and_plans(self) -> None:
        self.classes: dict[str, UnitClass] = {}
        for key, spec in CLASSES.items():
            uc = UnitClass.objects.create(
                name=spec.name,
                typical_hours_per_day=spec.hours_per_day,
                typical_burn_l_per_h=spec.burn_l_per_h,
            )
            self.classes[key] = uc
            ServicePlan.objects.create(
                unit_class=uc,
                component_kind=ComponentKind.PRIMARY_FILTER,
                interval_hours=500,
                interval_days=180,
                reference_iso4406="18/16/13",
                reference_burn_l_per_h=spec.burn_l_per_h,
                dp_limit_bar=0.35,
            )
            fine = ServicePlan.objects.create(
                unit_class=uc,
                component_kind=ComponentKind.FINE_FILTER,
                interval_hours=500,
                interval_days=365,
                reference_iso4406="18/16/13",
                reference_burn_l_per_h=spec.burn_l_per_h,
                dp_limit_bar=1.0,
                interval_litres=spec.burn_l_per_h * 600,
            )
            for name, low, high in [
                ("Supply pressure at cranking", 1.5, None),
                ("Supply pressure under load", 4.0, 7.0),
                ("Drain-line back pressure", None, 0.3),
            ]:
                MeasurementLimit.objects.create(plan=fine, name=name, low=low, high=high)
            ServicePlan.objects.create(
                unit_class=uc,
                component_kind=ComponentKind.RELIEF_VALVE,
                relief_window_hours=50,
                relief_window_days=7,
                relief_openings_to_flag=3,
                relief_lifetime_openings=25,
            )
            # The separator is the primary filter housing's bowl: its drain fields live on
            # the primary-filter plan.
            ServicePlan.objects.filter(
                unit_class=uc, component_kind=ComponentKind.PRIMARY_FILTER
            ).update(
                bowl_capacity_ml=400 if key in {"genset", "workboat"} else 250,
                drain_level_fraction=0.8,
                drain_interval_days=7,
                drain_interval_hours=60,
                separator_efficiency=0.95,
            )

    def sites_and_sources(self) -> None:
        self.sites: dict[str, Site] = {}
        self.sources: dict[str, FuelSource] = {}
        for name, code, tz, system, source_name, _ in SITES:
            site = Site.objects.create(name=name, code=code, time_zone=tz, unit_system=system)
            self.sites[code] = site
            kind = {
                "Kestrel bulk tank": FuelSource.Kind.BULK_TANK,
                "Mill Lane bulk tank": FuelSource.Kind.BULK_TANK,
                "Wharf bowser": FuelSource.Kind.BOWSER,
                "Retail fuel card": FuelSource.Kind.RETAIL,
            }[source_name]
            self.sources[code] = FuelSource.objects.create(
                site=site if kind != FuelSource.Kind.RETAIL else None,
                name=source_name,
                kind=kind,
                density_kg_l=0.835,
                fame_pct_v=7.0 if system == "metric" else 5.0,
            )
        m = self.people["mechanic"].profile
        m.sites.set([self.sites["kestrel"], self.sites["mill-lane"]])
        self.people["mechanic2"].profile.sites.set(
            [self.sites["saltmarsh"], self.sites["cedar-flats"]]
        )

    def fleet(self) -> None:
        for _name, code, _tz, _system, _src, counts in SITES:
            site = self.sites[code]
            for class_key, count in counts.items():
                spec = CLASSES[class_key]
                for i in range(1, count + 1):
                    fleet_number = f"{PREFIX[code]}-{CLASS_LETTER[class_key]}{i:02d}"
                    year = 2014 + self.rng.randrange(0, 11)
                    unit = Unit.objects.create(
                        site=site,
                        fleet_number=fleet_number,
                        unit_class=self.classes[class_key],
                        make=spec.make,
                        model=spec.model,
                        serial_number=spec.model.replace("-", "")
                        + str(self.rng.randrange(10**6, 10**7)),
                        year=year,
                        engine_serial=f"E{self.rng.randrange(10**7, 10**8)}",
                        cylinders=spec.cylinders,
                        tire_size="29.5R25" if class_key in {"hauler", "loader"} else "",
                        owner="Brightline Plant Leasing Ltd"
                        if i == count and class_key == "loader"
                        else "",
                        in_service_on=date(year, 3, 1),
                    )
                    self.units[fleet_number] = unit
                    self._components(unit, class_key)

    def _components(self, unit: Unit, class_key: str) -> None:
        start = self.start
        rows = [
            Component(
                unit=unit,
                kind=ComponentKind.PRIMARY_FILTER,
                part_number="HV-PF10",
                rating_um=10,
                installed_on=start,
                installed_hours=0,
            ),
            Component(
                unit=unit,
                kind=ComponentKind.FINE_FILTER,
                part_number="HV-FF04",
                rating_um=4,
                installed_on=start,
                installed_hours=0,
            ),
        ]
        for kind in (
            ComponentKind.LIFT_PUMP,
            ComponentKind.LOW_PRESSURE_PUMP,
            ComponentKind.METERING_ACTUATOR,
            ComponentKind.HIGH_PRESSURE_PUMP,
            ComponentKind.RAIL,
            ComponentKind.RELIEF_VALVE,
            ComponentKind.DRAIN_CHECK_VALVE,
        ):
            rows.append(
                Component(
                    unit=unit,
                    kind=kind,
                    part_number=f"HV-{kind[:3].upper()}1",
                    serial=f"S{self.rng.randrange(10**6, 10**7)}",
                    installed_on=unit.in_service_on,
                    installed_hours=0,
                )
            )
        for cyl in range(1, unit.cylinders + 1):
            rows.append(
                Component(
                    unit=unit,
                    kind=ComponentKind.INJECTOR,
                    position=cyl,
                    part_number="HV-INJ7",
                    serial=f"INJ{self.rng.randrange(10**6, 10**7)}",
                    installed_on=unit.in_service_on,
                    installed_hours=0,
                )
            )
            rows.append(
                Component(
                    unit=unit,
                    kind=ComponentKind.HP_CONNECTOR,
                    position=cyl,
                    part_number="HV-HPC2",
                    installed_on=unit.in_service_on,
                    installed_hours=0,
                )
            )
        Component.objects.bulk_create(rows)

    # ---- fuel quality ---------------------------------------------------------------
    def samples(self) -> None:
        n = 0
        rows: list[FuelSample] = []
        self.dirty_on = self.anchor - timedelta(days=12)
        self.wet_on = self.anchor - timedelta(days=20)
        for code, source in self.sources.items():
            day = self.start + timedelta(days=10)
            while day < self.anchor - timedelta(days=25):
                n += 1
                c14 = self.rng.choice([11, 12, 12, 13])
                rows.append(
                    FuelSample(
                        reference=f"FS-{n:04d}",
                        source=source,
                        sampled_at=_at(day, 9),
                        iso4406=f"{c14 + 5}/{c14 + 3}/{c14}",
                        code_4=c14 + 5,
                        code_6=c14 + 3,
                        code_14=c14,
                        water_mg_kg=round(self.rng.uniform(50, 120)),
                        fame_pct_v=source.fame_pct_v,
                        temperature_c=round(self.rng.uniform(6, 18), 1),
                        lab_method="ISO 11171 APC; EN ISO 12937",
                    )
                )
                day += timedelta(days=30 if code != "cedar-flats" else 60)
        # The two bad deliveries.
        rows.append(
            FuelSample(
                reference="FS-W001",
                source=self.sources["mill-lane"],
                sampled_at=_at(self.wet_on, 10),
                iso4406="19/17/14",
                code_4=19,
                code_6=17,
                code_14=14,
                water_mg_kg=780,
                fame_pct_v=7.0,
                temperature_c=9.0,
                lab_method="ISO 11171 APC; EN ISO 12937 (after delivery DN-5531)",
            )
        )
        rows.append(
            FuelSample(
                reference="FS-D001",
                source=self.sources["kestrel"],
                sampled_at=_at(self.dirty_on, 10),
                iso4406="22/20/17",
                code_4=22,
                code_6=20,
                code_14=17,
                count_4_per_ml=31_200,
                count_6_per_ml=8_450,
                count_14_per_ml=1_020,
                water_mg_kg=140,
                fame_pct_v=7.0,
                temperature_c=11.0,
                lab_method="ISO 11171 APC (after delivery DN-5540)",
            )
        )
        FuelSample.objects.bulk_create(rows)

    # ---- usage ----------------------------------------------------------------------
    def usage_and_fuel(self, key: str, unit: Unit) -> None:
        class_key = next(k for k, v in self.classes.items() if v.pk == unit.unit_class_id)
        spec = CLASSES[class_key]
        rate = spec.hours_per_day * self.rng.uniform(0.7, 1.25)
        meter = float(self.rng.randrange(1500, 14000))
        engine = meter
        day = self.start
        readings: list[MeterReading] = []
        fuelings: list[Fueling] = []
        hours_log: list[tuple[datetime, float, float]] = []
        idle_from = self.start + timedelta(days=self.rng.randrange(60, 300))
        idle_to = idle_from + timedelta(days=self.rng.randrange(7, 20))
        replaced = key == "ML-H03"
        replace_day = self.anchor - timedelta(days=200)
        source = self.sources[unit.site.code]
        retail = self.sources["cedar-flats"]
        while day <= self.anchor - timedelta(days=1):
            step = self.rng.choice([1, 2, 2, 3])
            day += timedelta(days=step)
            if day > self.anchor - timedelta(days=1):
                break
            run = 0.0
            for d in range(step):
                dd = day - timedelta(days=d)
                if idle_from <= dd < idle_to:
                    continue
                if not spec.works_weekends and dd.weekday() >= 5:
                    continue
                run += rate * self.rng.uniform(0.6, 1.3)
            run = round(run, 1)
            if replaced and day >= replace_day and not getattr(self, "_replaced_done", False):
                MeterReplacement.objects.create(
                    unit=unit,
                    replaced_at=_at(replace_day, 7),
                    old_meter_final=round(meter, 1),
                    new_meter_start=0.0,
                    note="Meter failed; new meter fitted at zero.",
                )
                meter = 0.0
                self._replaced_done = True
            meter += run
            engine += run
            at = _at(day, 17, self.rng.randrange(0, 59))
            readings.append(
                MeterReading(
                    unit=unit,
                    taken_at=at,
                    hours=round(meter, 1),
                    source=MeterReading.Source.FUEL_LOG,
                )
            )
            hours_log.append((at, round(engine, 1), round(meter, 1)))
            if run > 0:
                litres = round(run * spec.burn_l_per_h * self.rng.uniform(0.85, 1.15), 1)
                src = (
                    retail
                    if (source.kind == FuelSource.Kind.BULK_TANK and self.rng.random() < 0.05)
                    else source
                )
                fuelings.append(
                    Fueling(
                        unit=unit, source=src, fueled_at=at - timedelta(minutes=30), litres=litres
                    )
                )
        MeterReading.objects.bulk_create(readings)
        Fueling.objects.bulk_create(fuelings)
        self.unit_hours[key] = hours_log

    def hours_at(self, key: str, when: datetime, *, meter: bool = True) -> float:
        """The hour meter as read (or engine hours) at the last reading before ``when``."""
        log = self.unit_hours[key]
        best = log[0]
        for row in log:
            if row[0] > when:
                break
            best = row
        return best[2] if meter else best[1]

    # ---- engine events --------------------------------------------------------------
    def events(self) -> None:
        rows: list[EngineEvent] = []

        def ev(key: str, when: datetime, spn: int, fmi: int, kind: str, count: int = 1) -> None:
            rows.append(
                EngineEvent(
                    unit=self.units[key],
                    occurred_at=when,
                    hours=self.hours_at(key, when),
                    spn=spn,
                    fmi=fmi,
                    occurrences=count,
                    kind=kind,
                )
            )

        relief = EngineEvent.Kind.RELIEF_VALVE_OPENED
        # KQ-H04: rail relief valve opening again and again over the last week.
        for days_ago, hour in [(6, 10), (4, 14), (3, 9), (1, 11)]:
            ev("KQ-H04", _at(self.anchor - timedelta(days=days_ago), hour), 5571, 0, relief)
        for days_ago in (300, 210, 140):
            ev("KQ-H04", _at(self.anchor - timedelta(days=days_ago), 12), 5571, 0, relief, 2)
        # Water-in-fuel alarms on Mill Lane units after the wet delivery.
        for key, d in [("ML-H01", 1), ("ML-H02", 15), ("ML-L01", 14), ("ML-G01", 16)]:
            ev(key, _at(self.anchor - timedelta(days=d), 8), 97, 0, EngineEvent.Kind.WATER_IN_FUEL)
        # A filter differential-pressure warning at Kestrel after the dirty delivery.
        ev(
            "KQ-H01",
            _at(self.anchor - timedelta(days=4), 15),
            95,
            16,
            EngineEvent.Kind.FILTER_DP_HIGH,
        )
        # A pumping imbalance on a generator set.
        ev(
            "KQ-G01",
            _at(self.anchor - timedelta(days=9), 3),
            1347,
            7,
            EngineEvent.Kind.PUMPING_IMBALANCE,
        )
        # An unrelated proprietary code, stored but never interpreted.
        ev("CF-H02", _at(self.anchor - timedelta(days=30), 6), 520_450, 31, EngineEvent.Kind.OTHER)
        EngineEvent.objects.bulk_create(rows)

    # ---- service history (through the ledger) ------------------------------------------
    def history(self) -> None:
        mechanic = self.people["mechanic"]
        for key, unit in self.units.items():
            log = self.unit_hours[key]
            last_filter_hours = log[0][1]  # engine hours
            last_drain_day = self.start
            filters = {
                c.kind: c
                for c in unit.components.filter(
                    kind__in=[ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER]
                )
            }
            interval = 500 * self.rng.uniform(0.85, 1.0)
            class_key = next(k for k, v in self.classes.items() if v.pk == unit.unit_class_id)
            gaps = [3] if CLASSES[class_key].works_weekends else [5, 6]
            wet = key.startswith("ML-")
            for index, (at, engine, hours) in enumerate(log):
                if engine - last_filter_hours >= interval:
                    last_filter_hours = engine
                    for kind, comp in filters.items():
                        service_event_append(
                            unit=unit,
                            kind=ServiceEvent.Kind.FILTER_CHANGED,
                            performed_at=at,
                            recorded_by=mechanic,
                            recorded_at=at,
                            hour_meter=hours,
                            component=comp,
                            component_kind=kind,
                            part_number=comp.part_number,
                        )
                        comp.installed_on = at.date()
                        comp.installed_hours = hours
                drain_gap = (at.date() - last_drain_day).days
                # Drained on a regular round; the dry depots also had a round yesterday,
                # while the wet depot's bowls are filling again after its last round.
                final_round = index == len(log) - 1 and not wet
                if at.date() > self.anchor - timedelta(days=120) and (
                    drain_gap >= self.rng.choice(gaps) or (final_round and drain_gap >= 1)
                ):
                    last_drain_day = at.date()
                    water = round(self.rng.uniform(5, 40))
                    if wet and at.date() > self.wet_on:
                        water = round(self.rng.uniform(120, 190))
                    service_event_append(
                        unit=unit,
                        kind=ServiceEvent.Kind.SEPARATOR_DRAINED,
                        performed_at=at,
                        recorded_by=mechanic,
                        recorded_at=at,
                        hour_meter=hours,
                        component=filters[ComponentKind.PRIMARY_FILTER],
                        component_kind=ComponentKind.PRIMARY_FILTER,
                        water_ml=water,
                        water_appearance="cloudy" if water > 100 else "clear",
                    )
            for comp in filters.values():
                comp.save(update_fields=["installed_on", "installed_hours"])
            self._dp_readings(key, filters[ComponentKind.FINE_FILTER])
        self._injector_job()

    def _dp_readings(self, key: str, fine: Component) -> None:
        if not key.startswith("KQ-H0"):
            return
        rows = []
        start_hours = fine.installed_hours
        dirty = key in {"KQ-H01", "KQ-H02"}
        for at, _engine, hours in self.unit_hours[key]:
            if at.date() < fine.installed_on or (at.date().toordinal() % 5):
                continue
            run = hours - start_hours
            dp = 0.18 + 0.0006 * run + (0.00000125 * run * run if dirty else 0)
            if dirty and at.date() > self.dirty_on:
                dp *= 1.6
            rows.append(
                FilterPressureReading(component=fine, taken_at=at, hours=hours, dp_bar=round(dp, 3))
            )
        FilterPressureReading.objects.bulk_create(rows)

    def _injector_job(self) -> None:
        key = "KQ-H02"
        unit = self.units[key]
        when = _at(self.anchor - timedelta(days=60), 10)
        hours = self.hours_at(key, when)
        mechanic = self.people["mechanic"]
        wo = WorkOrder.objects.create(
            number="WO-00001",
            unit=unit,
            status=WorkOrder.Status.CLOSED,
            due_on=when.date(),
            assigned_to=mechanic,
            created_by=self.people["manager"],
            created_at=when - timedelta(days=2),
            hour_meter=hours,
            closed_at=when,
            closed_by=mechanic,
            notes="Rough running at idle; cylinder 3 injector return flow high.",
        )
        injector = unit.components.get(kind=ComponentKind.INJECTOR, position=3)
        connector = unit.components.get(kind=ComponentKind.HP_CONNECTOR, position=3)
        old_serial = injector.serial
        injector.serial = f"INJ{self.rng.randrange(10**6, 10**7)}"
        injector.installed_on, injector.installed_hours = when.date(), hours
        injector.save()
        connector.installed_on, connector.installed_hours = when.date(), hours
        connector.save()
        for kind, comp, extra in [
            (
                ServiceEvent.Kind.INJECTOR_REPLACED,
                injector,
                {"old_serial": old_serial, "new_serial": injector.serial, "part_number": "HV-INJ7"},
            ),
            (ServiceEvent.Kind.CONNECTOR_REPLACED, connector, {"part_number": "HV-HPC2"}),
        ]:
            service_event_append(
                unit=unit,
                kind=kind,
                performed_at=when,
                recorded_by=mechanic,
                recorded_at=when,
                hour_meter=hours,
                component=comp,
                component_kind=comp.kind,
                cylinder=3,
                work_order=wo,
                **extra,
            )

    def work_orders(self) -> None:
        manager, mechanic = self.people["manager"], self.people["mechanic"]
        now = _at(self.anchor, 7)
        specs = [
            (
                "WO-00002",
                "KQ-H04",
                WorkOrder.Priority.URGENT,
                [
                    (
                        WorkOrderTask.Kind.INSPECTION,
                        None,
                        "Diagnose repeated rail relief-valve openings",
                    ),
                ],
            ),
            (
                "WO-00003",
                "ML-H01",
                WorkOrder.Priority.HIGH,
                [
                    (
                        WorkOrderTask.Kind.SEPARATOR_DRAIN,
                        ComponentKind.PRIMARY_FILTER,
                        "Drain water separator",
                    ),
                    (
                        WorkOrderTask.Kind.FILTER_CHANGE,
                        ComponentKind.PRIMARY_FILTER,
                        "Change primary filter",
                    ),
                ],
            ),
            (
                "WO-00004",
                "KQ-H06",
                WorkOrder.Priority.NORMAL,
                [
                    (
                        WorkOrderTask.Kind.INJECTOR_REPLACE,
                        None,
                        "Replace injector, cylinder 5 (leak-off high)",
                    ),
                    (WorkOrderTask.Kind.MEASUREMENT, None, "Supply pressure under load"),
                ],
            ),
        ]
        for number, key, priority, tasks in specs:
            unit = self.units[key]
            wo = WorkOrder.objects.create(
                number=number,
                unit=unit,
                priority=priority,
                due_on=self.anchor + timedelta(days=1),
                assigned_to=mechanic,
                created_by=manager,
                created_at=now,
            )
            for kind, comp_kind, text in tasks:
                comp = unit.components.filter(kind=comp_kind).first() if comp_kind else None
                cylinder = 5 if kind == WorkOrderTask.Kind.INJECTOR_REPLACE else None
                WorkOrderTask.objects.create(
                    work_order=wo, kind=kind, component=comp, cylinder=cylinder, description=text
                )


def demo_seed(*, anchor: date) -> bool:
    """Build the demo fleet unless it is already there. Returns True when it built it."""
    if Site.objects.filter(code="kestrel").exists():
        return False
    from fleetfuel.planning.actions import due_items_recompute

    with transaction.atomic():
        builder = DemoBuilder(anchor=anchor)
        builder.build()
        # Project now, in the same transaction, so the demo opens with its due list.
        due_items_recompute(
            unit_ids=[u.pk for u in builder.units.values()],
            now=datetime.combine(anchor, time(6, 0), tzinfo=UTC),
        )
    return True
