"""Build the demo fleet itself: people, plans, depots, units, fuel and fuel quality, usage."""

from __future__ import annotations

import random
from bisect import bisect_right
from datetime import date, datetime, timedelta
from zoneinfo import ZoneInfo

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
    REST_DAYS,
    SEED,
    SITES,
    demo_time,
)


class FleetBuilder:
    """The fleet as it stands at ``now``: every record laid back from ``now`` (demo_time)."""

    def __init__(self, *, now: datetime) -> None:
        self.now = now
        self.start = self.at(HISTORY_DAYS, 0)
        self.rng = random.Random(SEED)
        self.units: dict[str, Unit] = {}
        self.unit_hours: dict[str, list[tuple[datetime, float, float]]] = {}  # at, engine, meter
        self.filter_changed_at: dict[int, datetime] = {}  # component pk -> last change

    def at(self, days_ago: int, hour: int, minute: int = 0) -> datetime:
        return demo_time(now=self.now, days_ago=days_ago, hour=hour, minute=minute)

    def local_day(self, unit: Unit, when: datetime) -> date:
        """The date at ``when`` at the unit's depot."""
        return when.astimezone(ZoneInfo(unit.site.time_zone)).date()

    # ---- reference data -------------------------------------------------------------
    def build(self) -> None:
        self.users()
        self.classes_and_plans()
        self.sites_and_sources()
        self.fleet()
        self.samples()
        readings: list[MeterReading] = []
        fuelings: list[Fueling] = []
        for key, unit in self.units.items():
            self.usage_and_fuel(key, unit, readings, fuelings)
        MeterReading.objects.bulk_create(readings)
        Fueling.objects.bulk_create(fuelings)
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
            site = Site.objects.create(
                name=name,
                code=code,
                time_zone=tz,
                unit_system=system,
                display_style="en-US" if system == "us" else "en-GB",
            )
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
        """The units, in one insert (no save signal queues a recompute of them at the wall
        clock's time: demo_seed projects them at ``now``), then their fuel systems."""
        for _name, code, _tz, _system, _src, counts in SITES:
            site = self.sites[code]
            for class_key, count in counts.items():
                spec = CLASSES[class_key]
                for i in range(1, count + 1):
                    fleet_number = f"{PREFIX[code]}-{CLASS_LETTER[class_key]}{i:02d}"
                    year = self.now.year - 12 + self.rng.randrange(0, 11)
                    self.units[fleet_number] = Unit(
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
        Unit.objects.bulk_create(self.units.values())
        for unit in self.units.values():
            self._components(unit)

    def _components(self, unit: Unit) -> None:
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
            filters_installed_on=self.start.date(),
            part_numbers=PART_NUMBERS,
            serial=serial,
        )

    # ---- fuel quality ---------------------------------------------------------------
    def samples(self) -> None:
        n = 0
        rows: list[FuelSample] = []
        self.dirty_at = self.at(12, 10)
        self.wet_at = self.at(20, 10)
        for code, source in self.sources.items():
            days_ago = HISTORY_DAYS - 10
            while days_ago > 25:
                n += 1
                c14 = self.rng.choice([11, 12, 12, 13])
                rows.append(
                    FuelSample(
                        reference=f"FS-{n:04d}",
                        source=source,
                        sampled_at=self.at(days_ago, 9),
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
                days_ago -= 30 if code != "cedar-flats" else 60
        # The two bad deliveries.
        rows.append(
            FuelSample(
                reference="FS-W001",
                source=self.sources["mill-lane"],
                sampled_at=self.wet_at,
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
                sampled_at=self.dirty_at,
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
    def usage_and_fuel(
        self, key: str, unit: Unit, readings: list[MeterReading], fuelings: list[Fueling]
    ) -> None:
        """Hour-meter readings every 1 to 3 days, each with the fuel put in since the last."""
        class_key = next(k for k, v in self.classes.items() if v.pk == unit.unit_class_id)
        spec = CLASSES[class_key]
        rate = spec.hours_per_day * self.rng.uniform(0.7, 1.25)
        meter = float(self.rng.randrange(1500, 14000))
        engine = meter
        hours_log: list[tuple[datetime, float, float]] = []
        idle_from = HISTORY_DAYS - self.rng.randrange(60, 300)  # days ago, as all below
        idle_to = idle_from - self.rng.randrange(7, 20)
        meter_replaced_on = 200 if key == "ML-H03" else None
        source = self.sources[unit.site.code]
        days_ago = HISTORY_DAYS
        while True:
            step = self.rng.choice([1, 2, 2, 3])
            days_ago -= step
            if days_ago < 1:
                break
            run = 0.0
            for ago in range(days_ago, days_ago + step):
                share = self.rng.uniform(0.6, 1.3)  # drawn every day: no draw hangs on the day
                idle = idle_to < ago <= idle_from
                if not idle and (spec.works_weekends or ago % 7 not in REST_DAYS):
                    run += rate * share
            run = round(run, 1)
            if meter_replaced_on is not None and days_ago <= meter_replaced_on:
                replacement = MeterReplacement(
                    unit=unit,
                    replaced_at=self.at(meter_replaced_on, 7),
                    old_meter_final=round(meter, 1),
                    new_meter_start=0.0,
                    note="Meter failed; new meter fitted at zero.",
                )
                MeterReplacement.objects.bulk_create([replacement])
                meter, meter_replaced_on = 0.0, None
            meter += run
            engine += run
            at = self.at(days_ago, 17, self.rng.randrange(0, 59))
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
                fuelings.append(self._fueling(unit, source, at, run * spec.burn_l_per_h))
        self.unit_hours[key] = hours_log

    def _fueling(self, unit: Unit, source: FuelSource, at: datetime, litres: float) -> Fueling:
        """Fuel put in half an hour before the reading; now and then bought on a fuel card."""
        litres = round(litres * self.rng.uniform(0.85, 1.15), 1)
        if source.kind == FuelSource.Kind.BULK_TANK and self.rng.random() < 0.05:
            source = self.sources["cedar-flats"]
        return Fueling(
            unit=unit, source=source, fueled_at=at - timedelta(minutes=30), litres=litres
        )

    def hours_at(self, key: str, when: datetime, *, meter: bool = True) -> float:
        """The hour meter as read (or engine hours) at the last reading before ``when``."""
        log = self.unit_hours[key]
        row = log[max(0, bisect_right(log, when, key=lambda r: r[0]) - 1)]
        return row[2] if meter else row[1]
