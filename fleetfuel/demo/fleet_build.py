"""Build the demo fleet itself: people, plans, depots, units, fuel and fuel quality, usage."""

from __future__ import annotations

import random
from datetime import date, datetime, timedelta

from django.contrib.auth.models import Group, User

from fleetfuel.accounts.models import Profile, Role
from fleetfuel.fleet.actions import unit_fuel_system_fit
from fleetfuel.fleet.models import (
    ComponentKind,
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

from .scenario import (
    CLASS_LETTER,
    CLASSES,
    DEMO_PASSWORD,
    HISTORY_DAYS,
    PART_NUMBERS,
    PREFIX,
    SEED,
    SITES,
    at_utc,
)


class FleetBuilder:
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
                # The manager records readings, fuel, samples and plans in the admin, with
                # the manager group's permissions (no deletes; the ledger stays read-only).
                is_staff=role == Role.MANAGER,
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
        def serial(kind: str, cylinder: int | None) -> str:
            if kind in {
                ComponentKind.PRIMARY_FILTER,
                ComponentKind.FINE_FILTER,
                ComponentKind.HP_CONNECTOR,
            }:
                return ""
            prefix = "INJ" if kind == ComponentKind.INJECTOR else "S"
            return f"{prefix}{self.rng.randrange(10**6, 10**7)}"

        unit_fuel_system_fit(
            unit=unit,
            installed_on=unit.in_service_on,
            filters_installed_on=self.start,
            part_numbers=PART_NUMBERS,
            serial=serial,
        )

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
                        sampled_at=at_utc(day, 9),
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
                sampled_at=at_utc(self.wet_on, 10),
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
                sampled_at=at_utc(self.dirty_on, 10),
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
                    replaced_at=at_utc(replace_day, 7),
                    old_meter_final=round(meter, 1),
                    new_meter_start=0.0,
                    note="Meter failed; new meter fitted at zero.",
                )
                meter = 0.0
                self._replaced_done = True
            meter += run
            engine += run
            at = at_utc(day, 17, self.rng.randrange(0, 59))
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
