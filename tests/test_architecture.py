"""The layers, read from the imports themselves: a crossing fails the build.

    web (views, templates, forms)  ->  services  ->  survey.thermal (physics, pure numpy)
    reports (app above)            ->  survey    (never the reverse)

Every `import` and `from … import` of the project's own modules is read with ast, those
inside functions included, so a late import cannot hide a crossing.
"""

import ast
import os
import subprocess
import sys
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parents[1]
PACKAGES = ("survey", "reports")
# What the physics may import besides the standard library and itself.
THERMAL_ALLOWED = {"numpy", "PIL", "tifffile"}


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(ROOT).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def _modules() -> dict[str, Path]:
    found = {}
    for package in PACKAGES:
        for path in (ROOT / package).rglob("*.py"):
            if "migrations" not in path.parts:
                found[_module_name(path)] = path
    return found


MODULES = _modules()


def _imports(name: str) -> set[str]:
    """Every module `name` imports (absolute names; `from a import b` counts as a.b when
    a.b is a module of ours, else as a)."""
    path = MODULES[name]
    package = name if path.name == "__init__.py" else name.rpartition(".")[0]
    found = set()
    for node in ast.walk(ast.parse(path.read_text(), str(path))):
        if isinstance(node, ast.Import):
            found.update(alias.name for alias in node.names)
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join(anchor + ([base] if base else []))
            for alias in node.names:
                full = f"{base}.{alias.name}"
                found.add(full if full in MODULES else base)
    return found


def _own(imports: set[str]) -> set[str]:
    return {name for name in imports if name.split(".")[0] in PACKAGES}


def _in(name: str, prefix: str) -> bool:
    return name == prefix or name.startswith(prefix + ".")


def test_it_finds_the_modules_it_checks():
    """The checks below read real files (a wrong root would make them pass vacuously)."""
    assert "survey.thermal.radiometry" in MODULES and "reports.services" in MODULES
    assert "django.db" in _imports("survey.models")


def test_it_keeps_the_physics_free_of_django_and_of_the_app():
    """survey.thermal imports only the standard library, numpy, Pillow, tifffile and itself."""
    crossings = []
    for name in MODULES:
        if not _in(name, "survey.thermal"):
            continue
        for imported in _imports(name):
            top = imported.split(".")[0]
            if _in(imported, "survey.thermal") or top in THERMAL_ALLOWED:
                continue
            if top in sys.stdlib_module_names or top == "__future__":
                continue
            crossings.append(f"{name} imports {imported}")
    assert crossings == []


def test_it_imports_the_physics_without_django_or_celery():
    """A clean interpreter imports survey.thermal without loading Django or Celery and
    without setting any environment variable (a notebook can use it)."""
    script = (
        "import json, os, sys\n"
        "before = dict(os.environ)\n"
        "import survey.thermal\n"
        "loaded = sorted(m for m in sys.modules if m.split('.')[0] in ('django', 'celery'))\n"
        "changed = sorted(k for k in set(os.environ) | set(before)"
        " if os.environ.get(k) != before.get(k))\n"
        "print(json.dumps([loaded, changed]))\n"
    )
    env = {key: value for key, value in os.environ.items() if key != "DJANGO_SETTINGS_MODULE"}
    result = subprocess.run(
        [sys.executable, "-c", script], cwd=ROOT, env=env, capture_output=True, text=True
    )
    assert result.returncode == 0, result.stderr
    assert result.stdout.strip() == "[[], []]"


def test_it_never_lets_the_survey_app_import_the_reports_app():
    """Reports depend on surveys, never the reverse (survey.dependents is the way back)."""
    crossings = [
        f"{name} imports {imported}"
        for name in MODULES
        if _in(name, "survey")
        for imported in _own(_imports(name))
        if _in(imported, "reports")
    ]
    assert crossings == []


@pytest.mark.parametrize(
    ("lower", "upper"),
    [
        ("survey.services", "survey.views"),
        ("survey.services", "survey.forms"),
        ("reports.services", "reports.views"),
        ("survey.forms", "survey.views"),
        ("survey.forms", "survey.services.audit"),
    ],
)
def test_it_keeps_lower_layers_from_importing_upper_ones(lower, upper):
    """Services never import views or forms; forms never import views or write audit rows."""
    crossings = [
        f"{name} imports {imported}"
        for name in MODULES
        if _in(name, lower)
        for imported in _own(_imports(name))
        if _in(imported, upper)
    ]
    assert crossings == []


def test_it_keeps_views_away_from_the_physics_and_from_each_other():
    """Views reach the physics through services, and never import another view module."""
    views = [name for name in MODULES if ".views" in name or name.endswith("views")]
    crossings = [
        f"{name} imports {imported}"
        for name in views
        for imported in _own(_imports(name))
        if _in(imported, "survey.thermal") or (imported in views and imported != name)
    ]
    assert views and crossings == []


def test_it_has_no_import_cycles():
    """No module of ours reaches itself through its imports (late imports included)."""
    graph = {name: _own(_imports(name)) & set(MODULES) for name in MODULES}
    for name in graph:
        graph[name].discard(name)
    cycles = []
    state: dict[str, int] = {}  # 1 on the current path, 2 done

    def visit(name: str, path: list[str]) -> None:
        state[name] = 1
        for imported in sorted(graph[name]):
            if _in(name, imported):
                continue  # a module always sits inside its own package
            if state.get(imported) == 1:
                cycles.append(" -> ".join(path[path.index(imported) :] + [imported]))
            elif imported not in state:
                visit(imported, path + [imported])
        state[name] = 2

    for name in sorted(graph):
        if name not in state:
            visit(name, [name])
    assert cycles == []


@pytest.mark.parametrize("name", ["survey.judgement", "survey.severity"])
def test_it_keeps_the_judgement_rules_pure(name):
    """The rules and tables read no database: they import only each other, the physics
    (where the one criteria-table lookup lives, survey.thermal.bands) and the standard
    library."""
    crossings = [
        f"{name} imports {imported}"
        for imported in _imports(name)
        if not _in(imported, "survey.thermal")
        and imported not in ("survey.judgement", "survey.severity")
        and imported.split(".")[0] not in sys.stdlib_module_names
        and imported != "__future__"
    ]
    assert name in MODULES and crossings == []
