"""What happened to the demo fleet: engine events, service history, work orders."""

from __future__ import annotations

from datetime import datetime, timedelta
from typing import Any

from django.contrib.auth.models import User

from fleetfuel.fleet.models import (
    Component,
    ComponentKind,
    EngineEvent,
    FilterPressureReading,
    Unit,
)
from fleetfuel.ledger.actions import service_events_append
from fleetfuel.ledger.models import ServiceEvent
from fleetfuel.workorders.models import WorkOrder, WorkOrderTask

from .fleet_build import FleetBuilder
from .scenario import CLASSES


class DemoBuilder(FleetBuilder):
    """The whole demo: the fleet (FleetBuilder) and what has happened to it since."""

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
            ev("KQ-H04", self.at(days_ago, hour), 5571, 0, relief)
        for days_ago in (300, 210, 140):
            ev("KQ-H04", self.at(days_ago, 12), 5571, 0, relief, 2)
        # Water-in-fuel alarms on Mill Lane units after the wet delivery.
        for key, d in [("ML-H01", 1), ("ML-H02", 15), ("ML-L01", 14), ("ML-G01", 16)]:
            ev(
                key,
                self.at(d, 8),
                97,
                0,
                EngineEvent.Kind.WATER_IN_FUEL,
            )
        # A filter differential-pressure warning at Kestrel after the dirty delivery.
        ev(
            "KQ-H01",
            self.at(4, 15),
            95,
            16,
            EngineEvent.Kind.FILTER_DP_HIGH,
        )
        # A pumping imbalance on a generator set.
        ev(
            "KQ-G01",
            self.at(9, 3),
            1347,
            7,
            EngineEvent.Kind.PUMPING_IMBALANCE,
        )
        # An unrelated proprietary code, stored but never interpreted.
        ev(
            "CF-H02",
            self.at(30, 6),
            520_450,
            31,
            EngineEvent.Kind.OTHER,
        )
        EngineEvent.objects.bulk_create(rows)

    # ---- service history (through the ledger) ------------------------------------------
    def history(self) -> None:
        """Filter changes on the hour interval, separator drains on a round, per unit."""
        mechanic = self.people["mechanic"]
        components: list[Component] = []
        dp_rows: list[FilterPressureReading] = []
        for key, unit in self.units.items():
            filters = {
                c.kind: c
                for c in unit.components.filter(
                    kind__in=[ComponentKind.PRIMARY_FILTER, ComponentKind.FINE_FILTER]
                )
            }
            entries = self._unit_history(key, unit, filters, mechanic)
            service_events_append(unit=unit, entries=entries)
            components.extend(filters.values())
            dp_rows.extend(self._dp_readings(key, filters[ComponentKind.FINE_FILTER]))
        Component.objects.bulk_update(components, ["installed_on", "installed_hours"])
        FilterPressureReading.objects.bulk_create(dp_rows)
        self._injector_job()

    def _unit_history(
        self, key: str, unit: Unit, filters: dict[str, Component], mechanic: User
    ) -> list[dict[str, Any]]:
        log = self.unit_hours[key]
        last_filter_hours = log[0][1]  # engine hours
        last_drain = self.start
        drains_from = self.at(119, 0)
        interval = 500 * self.rng.uniform(0.85, 1.0)
        class_key = next(k for k, v in self.classes.items() if v.pk == unit.unit_class_id)
        gaps = [3] if CLASSES[class_key].works_weekends else [5, 6]
        wet = key.startswith("ML-")
        # Every Kestrel filter met the dirty delivery: none was changed after it, and a change
        # that would fall due by now was made at the last reading before it.
        kestrel = key.startswith("KQ-")
        last_before_dirty = max(i for i, row in enumerate(log) if row[0] < self.dirty_at)
        entries: list[dict[str, Any]] = []
        by = {"recorded_by": mechanic}
        for index, (at, engine, hours) in enumerate(log):
            change = engine - last_filter_hours >= interval
            if kestrel and at >= self.dirty_at:
                change = False
            elif kestrel and index == last_before_dirty:
                change = change or log[-1][1] - last_filter_hours >= interval
            if change:
                last_filter_hours = engine
                for kind, comp in filters.items():
                    entries.append({
                        "kind": ServiceEvent.Kind.FILTER_CHANGED, "performed_at": at,
                        "recorded_at": at, "hour_meter": hours, "component": comp,
                        "component_kind": kind, "part_number": comp.part_number, **by,
                    })  # fmt: skip
                    comp.installed_on, comp.installed_hours = self.local_day(unit, at), hours
                    self.filter_changed_at[comp.pk] = at
            gap = round((at - last_drain) / timedelta(days=1))
            # Drained on a regular round; the dry depots also had a round yesterday,
            # while the wet depot's bowls are filling again after its last round.
            final_round = index == len(log) - 1 and not wet
            if at >= drains_from and (gap >= self.rng.choice(gaps) or (final_round and gap >= 1)):
                last_drain = at
                water = round(self.rng.uniform(5, 40))
                if wet and at > self.wet_at:
                    water = round(self.rng.uniform(120, 190))
                entries.append({
                    "kind": ServiceEvent.Kind.SEPARATOR_DRAINED, "performed_at": at,
                    "recorded_at": at, "hour_meter": hours,
                    "component": filters[ComponentKind.PRIMARY_FILTER],
                    "component_kind": ComponentKind.PRIMARY_FILTER, "water_ml": water,
                    "water_appearance": "cloudy" if water > 100 else "clear", **by,
                })  # fmt: skip
        return entries

    def _dp_readings(self, key: str, fine: Component) -> list[FilterPressureReading]:
        """Fine-filter dP on Kestrel's haulers, every fifth day since the last change."""
        if not key.startswith("KQ-H0"):
            return []
        rows = []
        start_hours = fine.installed_hours
        changed_at = self.filter_changed_at.get(fine.pk, self.start)
        dirty = key in {"KQ-H01", "KQ-H02"}
        for at, _engine, hours in self.unit_hours[key]:
            if at < changed_at or round((self.now - at) / timedelta(days=1)) % 5:
                continue
            run = hours - start_hours
            dp = 0.18 + 0.0006 * run + (0.00000125 * run * run if dirty else 0)
            if dirty and at > self.dirty_at:
                dp *= 1.6
            rows.append(
                FilterPressureReading(component=fine, taken_at=at, hours=hours, dp_bar=round(dp, 3))
            )
        return rows

    def _injector_job(self) -> None:
        key = "KQ-H02"
        unit = self.units[key]
        when = self.at(60, 10)
        hours = self.hours_at(key, when)
        mechanic = self.people["mechanic"]
        wo = WorkOrder.objects.create(
            number="WO-00001",
            unit=unit,
            status=WorkOrder.Status.CLOSED,
            due_on=self.local_day(unit, when),
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
        injector.installed_on, injector.installed_hours = self.local_day(unit, when), hours
        injector.save()
        connector.installed_on, connector.installed_hours = self.local_day(unit, when), hours
        connector.save()
        # The closed work order shows what was done on it, as a close leaves it.
        WorkOrderTask.objects.bulk_create(
            [
                WorkOrderTask(
                    work_order=wo,
                    kind=WorkOrderTask.Kind.INJECTOR_REPLACE,
                    component=injector,
                    cylinder=3,
                    description="Replace injector, cylinder 3",
                    entry={"old_serial": old_serial, "new_serial": injector.serial,
                           "part_number": "HV-INJ7"},
                    done=True,
                ),
                WorkOrderTask(
                    work_order=wo,
                    kind=WorkOrderTask.Kind.CONNECTOR_REPLACE,
                    component=connector,
                    cylinder=3,
                    description="Replace high-pressure connector, cylinder 3",
                    entry={"part_number": "HV-HPC2"},
                    done=True,
                ),
            ]
        )  # fmt: skip
        job = {"performed_at": when, "recorded_at": when, "recorded_by": mechanic,
               "hour_meter": hours, "cylinder": 3, "work_order": wo}  # fmt: skip
        service_events_append(
            unit=unit,
            entries=[
                {
                    **job,
                    "kind": ServiceEvent.Kind.INJECTOR_REPLACED,
                    "component": injector,
                    "component_kind": injector.kind,
                    "old_serial": old_serial,
                    "new_serial": injector.serial,
                    "part_number": "HV-INJ7",
                },
                {
                    **job,
                    "kind": ServiceEvent.Kind.CONNECTOR_REPLACED,
                    "component": connector,
                    "component_kind": connector.kind,
                    "part_number": "HV-HPC2",
                },
            ],  # fmt: skip
        )

    def work_orders(self) -> None:
        manager, mechanic = self.people["manager"], self.people["mechanic"]
        created_at = self.at(0, 5)  # an hour ago
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
                due_on=self.local_day(unit, self.now + timedelta(days=1)),  # tomorrow there
                assigned_to=mechanic,
                created_by=manager,
                created_at=created_at,
            )
            for kind, comp_kind, text in tasks:
                comp = unit.components.filter(kind=comp_kind).first() if comp_kind else None
                cylinder = 5 if kind == WorkOrderTask.Kind.INJECTOR_REPLACE else None
                WorkOrderTask.objects.create(
                    work_order=wo, kind=kind, component=comp, cylinder=cylinder, description=text
                )
