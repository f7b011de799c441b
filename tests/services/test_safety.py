"""The high-pressure caution: the usual shop cautions, its sources named, deferring to the
manufacturer's documentation and local rules."""

from __future__ import annotations

from services.safety import HP_CAUTION


def test_the_caution_names_its_sources_and_the_injury_threshold() -> None:
    text = " ".join(HP_CAUTION.lines)
    # UK HSE Research Report RR976, "Hydraulic injection injury" (2013), and HSE safety alert
    # FOD 4-2014: injection injuries reported from about 7 bar upward; surgical emergencies.
    assert "RR976, 2013" in text and "FOD 4-2014" in text
    assert "about 7 bar upward" in text and "surgical emergency" in text


def test_the_caution_gives_the_usual_shop_cautions() -> None:
    # common practice: no hand near a leak, pressure down before a fitting opens, eyes covered.
    lines = HP_CAUTION.lines
    assert lines[0] == "Never feel for leaks by hand."
    assert "rail pressure fall before opening" in lines[1]
    assert "eye protection" in lines[2]


def test_the_caution_defers_to_the_manufacturer_and_local_rules() -> None:
    assert "manufacturer's service documentation and local rules" in HP_CAUTION.lines[-1]
    assert "does not replace training" in HP_CAUTION.lines[-1]
