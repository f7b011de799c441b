"""The lock (requirements/*.txt, made by `make lock`) covers pyproject.toml and is what the
venv, CI and the Docker image install."""

from __future__ import annotations

import re
import tomllib
from pathlib import Path

import pytest
from packaging.requirements import Requirement
from packaging.utils import canonicalize_name
from packaging.version import Version

ROOT = Path(__file__).resolve().parents[1]
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text())["project"]
RUNTIME = [Requirement(r) for r in PYPROJECT["dependencies"]]
TEST = [Requirement(r) for r in PYPROJECT["optional-dependencies"]["test"]]


def pins(name: str) -> dict[str, tuple[Version, int]]:
    """Package -> (pinned version, number of hashes) in requirements/<name>.txt."""
    text = (ROOT / "requirements" / name).read_text()
    found: dict[str, tuple[Version, int]] = {}
    for block in re.split(r"\n(?=[A-Za-z0-9])", text):
        head = re.match(r"([A-Za-z0-9][A-Za-z0-9._-]*)==([^\s;\\]+)", block)
        if head:
            found[canonicalize_name(head[1])] = (Version(head[2]), block.count("--hash=sha256:"))
    return found


@pytest.mark.parametrize(
    "lock,wanted", [("base.txt", RUNTIME), ("test.txt", RUNTIME + TEST)], ids=["base", "test"]
)
def test_lock_pins_every_dependency_within_pyproject_ranges(
    lock: str, wanted: list[Requirement]
) -> None:
    pinned = pins(lock)
    assert len(pinned) >= len(wanted)
    for req in wanted:
        assert canonicalize_name(req.name) in pinned, f"{req.name} not in {lock}: make lock"
        version, _ = pinned[canonicalize_name(req.name)]
        assert version in req.specifier, f"{req.name} {version} outside {req.specifier}: make lock"
    assert all(hashes > 0 for _, hashes in pinned.values()), "every pin needs its hashes"


def test_runtime_lock_has_the_test_lock_versions() -> None:
    # The image (base) runs the same versions CI tested (test).
    test = pins("test.txt")
    assert all(test[name][0] == version for name, (version, _) in pins("base.txt").items())


def test_venv_ci_and_image_install_from_the_lock() -> None:
    makefile = (ROOT / "Makefile").read_text()
    dockerfile = (ROOT / "Dockerfile").read_text()
    assert "pip install --quiet --require-hashes -r requirements/test.txt" in makefile
    assert "pip install --no-cache-dir --require-hashes -r requirements/base.txt" in dockerfile
    assert "make venv" in (ROOT / ".ci" / "run").read_text()
