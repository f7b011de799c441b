"""The fleet app's models, in two modules that import one way only:

- ``assets``: what the fleet is (sites, unit classes, units, fitted components, service plans
  and their measurement limits, the component-kind sets);
- ``observations``: what is observed of it over time (meter readings and replacements, fuel
  sources, fuelings, fuel samples, engine events, filter differential pressures).

Everything is re-exported here, so ``from fleetfuel.fleet.models import Unit`` works as before
and Django finds every model under the ``fleet`` app label.
"""

from .assets import (
    FILTER_KINDS,
    HIGH_PRESSURE_KINDS,
    PER_CYLINDER_KINDS,
    Component,
    ComponentKind,
    MeasurementLimit,
    ServicePlan,
    Site,
    Unit,
    UnitClass,
    validate_time_zone,
)
from .observations import (
    Delivery,
    EngineEvent,
    FilterPressureReading,
    Fueling,
    FuelSample,
    FuelSource,
    MeterReading,
    MeterReplacement,
)

__all__ = [
    "FILTER_KINDS",
    "HIGH_PRESSURE_KINDS",
    "PER_CYLINDER_KINDS",
    "Component",
    "ComponentKind",
    "Delivery",
    "EngineEvent",
    "FilterPressureReading",
    "FuelSample",
    "FuelSource",
    "Fueling",
    "MeasurementLimit",
    "MeterReading",
    "MeterReplacement",
    "ServicePlan",
    "Site",
    "Unit",
    "UnitClass",
    "validate_time_zone",
]
