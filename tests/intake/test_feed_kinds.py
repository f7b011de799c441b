"""Engine events from the feed get their kind from the SPN and FMI (services/flags.py).

SPN names: SAE J1939-71 (as listed in open-source J1939 libraries' enums; the SAE J1939
Digital Annex is the authority). FMI meanings: SAE J1939-73 (0 above normal most severe,
1 below normal most severe, 3/4 voltage high/low, 5/6 current low/high, 7 mechanical system
not responding, 15/16 above normal least/moderately severe, 17/18 below normal least/
moderately severe, 31 condition exists). SPNs above 520,191 are manufacturer-proprietary
(SAE J1939-71): never interpreted.
"""

from __future__ import annotations

import pytest

from services.flags import EVENT_KINDS, event_kind_classify

CASES = [
    # SPN 5571 high-pressure common rail fuel pressure relief valve; FMI 0 above normal.
    (5571, 0, "relief_valve_opened"),
    # FMI 31 condition exists.
    (5571, 31, "relief_valve_opened"),
    # FMI 5 current low / open circuit: the valve's circuit, not an opening.
    (5571, 5, "other"),
    # SPN 97 water in fuel indicator; FMI 0 above normal, 16 moderately severe.
    (97, 0, "water_in_fuel"),
    (97, 16, "water_in_fuel"),
    # FMI 4 voltage low / shorted low: the sensor's wiring, no water reported.
    (97, 4, "other"),
    # SPN 95 fuel filter differential pressure; FMI 16 above normal, moderately severe.
    (95, 16, "filter_dp_high"),
    # SPN 16 and 1382 fuel filter (suction side) differential pressure; FMI 0.
    (16, 0, "filter_dp_high"),
    (1382, 15, "filter_dp_high"),
    # SPN 5584 fuel filter degradation, above normal.
    (5584, 0, "filter_dp_high"),
    # FMI 1 below normal: a low differential pressure is not a clogged filter.
    (95, 1, "other"),
    # SPN 94 fuel delivery pressure, SPN 1381 fuel supply pump inlet pressure; FMI 1, 18.
    (94, 1, "supply_pressure_low"),
    (1381, 18, "supply_pressure_low"),
    (94, 0, "other"),
    # SPN 1347 fuel pump pressurizing assembly 1; FMI 7 mechanical system not responding.
    (1347, 7, "pumping_imbalance"),
    (1347, 3, "other"),
    # SPN 157 injector metering rail 1 pressure: not one of the kinds flags act on.
    (157, 0, "other"),
    # Manufacturer-proprietary, whatever it would mean to its maker.
    (520_192, 0, "other"),
    (520_450, 31, "other"),
    (524_287, 7, "other"),
]


@pytest.mark.parametrize(("spn", "fmi", "kind"), CASES)
def test_event_kind_from_code(spn: int, fmi: int, kind: str) -> None:
    assert event_kind_classify(spn=spn, fmi=fmi) == kind


def test_every_kind_is_one_the_flags_know() -> None:
    kinds = {event_kind_classify(spn=s, fmi=m) for s in range(0, 6000) for m in range(32)}
    assert kinds <= set(EVENT_KINDS)
    assert kinds == set(EVENT_KINDS)  # and each is reachable from some code
