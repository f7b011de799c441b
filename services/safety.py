"""The caution shown wherever work touches the high-pressure fuel side, declared once.

A common-rail system holds fuel at rail pressure after the engine stops. A jet of fuel or
hydraulic oil penetrates skin: injection injuries have been reported from about 7 bar upward
and are surgical emergencies (UK HSE Research Report RR976, "Hydraulic injection injury",
2013; HSE safety alert FOD 4-2014). The lines below are the usual shop cautions; they defer to
the manufacturer's service documentation and local rules, and do not replace training.

Pages show it through the one template include ``templates/includes/_hp_caution.html``.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Final


@dataclass(frozen=True, slots=True)
class Caution:
    title: str
    lines: tuple[str, ...]


HP_CAUTION: Final = Caution(
    title="High-pressure fuel can injure",
    lines=(
        "Never feel for leaks by hand.",
        "Let rail pressure fall before opening any fitting.",
        "Wear eye protection.",
        "A fuel injection injury is a surgical emergency: get medical help at once, even if the "
        "wound looks small (UK HSE RR976, 2013; HSE safety alert FOD 4-2014: injection injuries "
        "reported from about 7 bar upward).",
        "Follow the manufacturer's service documentation and local rules. This tool shows "
        "cautions; it does not replace training.",
    ),
)
