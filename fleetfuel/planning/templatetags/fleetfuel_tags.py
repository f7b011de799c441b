from __future__ import annotations

from typing import Any

from django import template

from services.common import Basis
from services.units import display_quantity

register = template.Library()

BASIS_LABELS = {
    Basis.CONTAMINANT_BUDGET: "Dirt loading (fuel quality)",
    Basis.PLAN_HOURS: "Plan hour interval",
    Basis.PLAN_DAYS: "Plan calendar interval",
    Basis.FUEL_VOLUME: "Plan fuel-volume interval",
    Basis.DIFFERENTIAL_PRESSURE: "Differential-pressure trend",
    Basis.WATER_LEVEL: "Water in the bowl",
    Basis.WATER_EVENT: "Water-in-fuel alarm",
}


@register.filter
def basis_label(value: str) -> str:
    try:
        return BASIS_LABELS[Basis(value)]
    except ValueError:
        return value


@register.filter
def get_item(mapping: dict[Any, Any], key: Any) -> Any:
    return mapping.get(key, []) if mapping else []


@register.simple_tag
def qty(value: float | None, quantity: str, system: str) -> str:
    """A stored SI value shown in the site's unit system."""
    return display_quantity(value=value, quantity=quantity, system=system)
