"""services/ is pure: it imports nothing from Django or fleetfuel (architecture rule)."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

SERVICES = Path(__file__).resolve().parents[2] / "services"
FORBIDDEN = ("django", "fleetfuel", "celery", "requests", "random", "time")


@pytest.mark.parametrize("path", sorted(SERVICES.glob("*.py")), ids=lambda p: p.name)
def test_module_imports_no_framework_clock_or_randomness(path: Path) -> None:
    tree = ast.parse(path.read_text())
    for node in ast.walk(tree):
        names = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom) and node.module:
            names = [node.module]
        for name in names:
            assert name.split(".")[0] not in FORBIDDEN, f"{path.name} imports {name}"


def test_the_three_fuel_quality_functions_keep_their_signatures() -> None:
    from typing import get_type_hints

    from services import fuel_quality as fq

    assert get_type_hints(fq.scale_number) == {"particles_per_ml": float, "return": int}
    assert get_type_hints(fq.count_range) == {"scale_number": int, "return": tuple[float, float]}
    assert get_type_hints(fq.parse_iso4406) == {"text": str, "return": tuple[int | None, int, int]}
