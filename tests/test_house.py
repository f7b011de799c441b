"""The house: the apps import one way only, like the floors of a house (accounts < fleet <
ledger < planning < workorders < the apps that compose pages from several others: pages, demo,
intake...), no import of project code hides inside a function to get round a cycle, modules
and functions stay a size a reader can hold, and the high-pressure caution is written once.

Beside tests/services/test_purity.py, which keeps services/ free of Django. Every module is
read with ``ast``; nothing is imported. Each failure names every finding, file and line.
"""

from __future__ import annotations

import ast
import re
from collections.abc import Iterator
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
ORDER = ("accounts", "fleet", "ledger", "planning", "workorders")  # lower first
MODULE_MAX_LINES = 450
FUNCTION_MAX_LINES = 100
# The caution's own words (never feel for a leak with a hand: injection injuries).
CAUTION = re.compile(r"(?i)never (feel|check) for (a )?leaks?|feel for (a )?leak")


def app_rank(app: str) -> int:
    """An app's floor; any app not in ORDER composes the others and stands above them all."""
    return ORDER.index(app) if app in ORDER else len(ORDER)


def python_files(root: Path, base: str) -> Iterator[Path]:
    """The modules under ``root/base``, migrations left out (they are history, not design)."""
    for path in sorted((root / base).rglob("*.py")):
        if "migrations" not in path.relative_to(root).parts:
            yield path


def imported(node: ast.Import | ast.ImportFrom, parts: tuple[str, ...]) -> list[str]:
    """The dotted modules an import statement names, relative imports resolved against the
    package of the module at ``parts`` (its path, from the root)."""
    if isinstance(node, ast.Import):
        return [alias.name for alias in node.names]
    package = list(parts[:-1])  # a module's package; for __init__.py, the package itself
    if node.level:
        package = package[: len(package) - (node.level - 1)]
        base = ".".join(package + ([node.module] if node.module else []))
    else:
        base = node.module or ""
    if base == "fleetfuel":  # from fleetfuel import ledger: the names are the apps
        return [f"fleetfuel.{alias.name}" for alias in node.names]
    return [base]


def app_imports(root: Path) -> list[tuple[str, int, str, str]]:
    """(module, line, app, imported app) for every import of one app's code by another."""
    apps = {p.parent.name for p in (root / "fleetfuel").glob("*/apps.py")}
    found = []
    for path in python_files(root, "fleetfuel"):
        parts = path.relative_to(root).parts
        if len(parts) < 3 or parts[1] not in apps:
            continue  # the project's own settings, urls, wsgi...
        for node in ast.walk(ast.parse(path.read_text())):
            if not isinstance(node, ast.Import | ast.ImportFrom):
                continue
            for name in imported(node, parts):
                names = name.split(".")
                other = names[1] if names[0] == "fleetfuel" and len(names) > 1 else ""
                if other in apps and other != parts[1]:
                    found.append(("/".join(parts), node.lineno, parts[1], other))
    return found


def import_findings(root: Path) -> list[str]:
    return [
        f"{module}:{line}: {app} imports {other}, which stands above it"
        for module, line, app, other in app_imports(root)
        if app_rank(other) > app_rank(app)
    ]


def _is_project(node: ast.Import | ast.ImportFrom, parts: tuple[str, ...]) -> bool:
    if isinstance(node, ast.ImportFrom) and node.level:
        return True
    return any(name.split(".")[0] in ("fleetfuel", "services") for name in imported(node, parts))


def local_import_findings(root: Path) -> list[str]:
    """Imports of project code (fleetfuel, services, relative) inside a function.

    Allowed in migrations and management commands, and in an AppConfig's ``ready()``, which
    is where Django has an app connect its signal handlers once every model is loaded.
    """
    found: dict[int, str] = {}
    for path in python_files(root, "fleetfuel"):
        parts = path.relative_to(root).parts
        if "management" in parts:
            continue
        for fn in ast.walk(ast.parse(path.read_text())):
            if not isinstance(fn, ast.FunctionDef | ast.AsyncFunctionDef):
                continue
            if parts[-1] == "apps.py" and fn.name == "ready":
                continue
            for node in ast.walk(fn):  # outer functions first: the innermost name is kept
                if isinstance(node, ast.Import | ast.ImportFrom) and _is_project(node, parts):
                    where = "/".join(parts)
                    found[id(node)] = f"{where}:{node.lineno}: import inside {fn.name}()"
    return sorted(found.values())


def size_findings(root: Path) -> list[str]:
    found = []
    for base in ("fleetfuel", "services"):
        for path in python_files(root, base):
            rel = "/".join(path.relative_to(root).parts)
            text = path.read_text()
            lines = text.count("\n")
            if lines > MODULE_MAX_LINES:
                found.append(f"{rel}: {lines} lines (at most {MODULE_MAX_LINES})")
            for fn in ast.walk(ast.parse(text)):
                if isinstance(fn, ast.FunctionDef | ast.AsyncFunctionDef):
                    length = (fn.end_lineno or fn.lineno) - fn.lineno + 1
                    if length > FUNCTION_MAX_LINES:
                        found.append(
                            f"{rel}:{fn.lineno}: {fn.name}() {length} lines "
                            f"(at most {FUNCTION_MAX_LINES})"
                        )
    return found


def caution_findings(root: Path) -> list[str]:
    paths = [*sorted((root / "templates").rglob("*.html"))]
    paths += [*python_files(root, "fleetfuel"), *python_files(root, "services")]
    hits = [
        "/".join(p.relative_to(root).parts)
        for p in paths
        if CAUTION.search(p.read_text(errors="replace"))
    ]
    if len(hits) > 1:
        return [f"the high-pressure caution is written in {len(hits)} files: {', '.join(hits)}"]
    return []


# --- The house as it stands. -----------------------------------------------------------------


def test_no_app_imports_an_app_above_it() -> None:
    findings = import_findings(ROOT)
    assert not findings, "\n".join(findings)


def test_no_import_of_project_code_inside_a_function() -> None:
    findings = local_import_findings(ROOT)
    assert not findings, "\n".join(findings)


def test_modules_and_functions_stay_a_readable_size() -> None:
    findings = size_findings(ROOT)
    assert not findings, "\n".join(findings)


def test_the_high_pressure_caution_is_written_once() -> None:
    findings = caution_findings(ROOT)
    assert not findings, "\n".join(findings)


def test_the_checks_read_the_real_tree() -> None:
    """The composing app's imports are seen (so an empty finding list means something)."""
    edges = {(app, other) for _, _, app, other in app_imports(ROOT)}
    assert {("pages", "planning"), ("ledger", "fleet")} <= edges


# --- The checks themselves, on a small tree with planted faults. ------------------------------


def _write(root: Path, rel: str, text: str) -> None:
    path = root / rel
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(text)


def test_the_checks_find_planted_faults(tmp_path: Path) -> None:
    for app in ("accounts", "fleet", "planning", "pages"):
        _write(tmp_path, f"fleetfuel/{app}/apps.py", "def ready():\n    from . import signals\n")
    _write(
        tmp_path,
        "fleetfuel/fleet/models/assets.py",
        "from ...planning.models import DueItem\n"  # relative, two floors up: fleetfuel
        "from .. import views\n"  # relative within fleet
        "from fleetfuel import pages\n"
        "import fleetfuel.accounts.models\n"
        "def clean():\n"
        "    import json\n"
        "    from ..records import Sample\n"
        "    def inner():\n"
        "        from services.fuel_quality import parse\n",
    )
    _write(tmp_path, "fleetfuel/pages/views.py", "from fleetfuel.planning import selectors\n")
    _write(tmp_path, "fleetfuel/planning/migrations/0001.py", "from fleetfuel.pages import x\n")
    _write(
        tmp_path,
        "fleetfuel/planning/management/commands/go.py",
        "def handle():\n    from fleetfuel.planning.tasks import run\n",
    )
    _write(tmp_path, "services/long.py", "x = 1\n" * (MODULE_MAX_LINES + 1))
    body = "    pass\n" * FUNCTION_MAX_LINES
    _write(tmp_path, "services/rules.py", f"def long_one():\n{body}\n# Never feel for leaks.\n")
    _write(tmp_path, "templates/includes/_caution.html", "<p>Never check for a leak by hand.</p>")

    assert import_findings(tmp_path) == [
        "fleetfuel/fleet/models/assets.py:1: fleet imports planning, which stands above it",
        "fleetfuel/fleet/models/assets.py:3: fleet imports pages, which stands above it",
    ]
    assert local_import_findings(tmp_path) == [
        "fleetfuel/fleet/models/assets.py:7: import inside clean()",
        "fleetfuel/fleet/models/assets.py:9: import inside inner()",
    ]
    assert size_findings(tmp_path) == [
        f"services/long.py: {MODULE_MAX_LINES + 1} lines (at most {MODULE_MAX_LINES})",
        f"services/rules.py:1: long_one() {FUNCTION_MAX_LINES + 1} lines "
        f"(at most {FUNCTION_MAX_LINES})",
    ]
    assert caution_findings(tmp_path) == [
        "the high-pressure caution is written in 2 files: "
        "templates/includes/_caution.html, services/rules.py"
    ]
