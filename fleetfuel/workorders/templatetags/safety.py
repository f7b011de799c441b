"""``{% hp_caution as caution %}``: the high-pressure caution (services/safety.py) for the one
include that shows it, templates/includes/_hp_caution.html."""

from __future__ import annotations

from django import template

from services.safety import HP_CAUTION, Caution

register = template.Library()


@register.simple_tag
def hp_caution() -> Caution:
    return HP_CAUTION
