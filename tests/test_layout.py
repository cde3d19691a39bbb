"""The package layout keeps its dependency direction: front ends -> the run -> stages -> formulas.

Constructed truth: the allowed imports below are the ones each stage package's
``__init__`` states ("May import ..."); the test reads every module's imports with
Python's own parser (``ast``) and fails on any import outside them, naming the module.
"""

from __future__ import annotations

import ast
from pathlib import Path

import trajectory

PACKAGE = Path(trajectory.__file__).parent
#: the top-level modules every stage may use
SHARED = {"errors", "params", "checks", "__init__"}
ALLOWED: dict[str, set[str]] = {
    "formulas": set(),
    "geometry": set(),
    "terrain": {"formulas"},
    "requirement": {"formulas", "terrain"},
    "judgement": {"formulas", "geometry", "terrain", "requirement"},
    "inner": {"formulas", "terrain", "judgement"},
    "inputs": {"formulas", "requirement", "inner", "judgement"},
    "pipeline": set(),
    "scenario": {"formulas"},
    "outputs": {"formulas", "geometry", "terrain", "requirement", "judgement", "inner",
                "inputs"},
    "frontends": {"inputs", "judgement", "outputs", "assess"},
}


def _imports(path: Path) -> set[str]:
    """First-level names under trajectory that ``path`` imports (package or top module)."""
    rel = path.relative_to(PACKAGE).with_suffix("").parts
    pkg = list(rel[:-1])
    found: set[str] = set()
    for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = pkg[: len(pkg) - (node.level - 1)]
                parts = base + (node.module.split(".") if node.module else [])
            elif node.module and node.module.split(".")[0] == "trajectory":
                parts = node.module.split(".")[1:]
            else:
                continue
            if parts:
                found.add(parts[0])
            else:   # from trajectory import x: x is a module or a name of __init__
                found.update(a.name if (PACKAGE / a.name).is_dir()
                             or (PACKAGE / f"{a.name}.py").exists() else "__init__"
                             for a in node.names)
        elif isinstance(node, ast.Import):
            for a in node.names:
                parts = a.name.split(".")
                if parts[0] == "trajectory" and len(parts) > 1:
                    found.add(parts[1])
    return found


def test_every_stage_package_is_declared():
    packages = {p.name for p in PACKAGE.iterdir() if (p / "__init__.py").exists()}
    assert packages == set(ALLOWED)


def test_no_stage_imports_against_the_direction():
    wrong = []
    for name, allowed in ALLOWED.items():
        for path in sorted((PACKAGE / name).rglob("*.py")):
            bad = _imports(path) - allowed - SHARED - {name}
            if bad:
                wrong.append(f"{path.relative_to(PACKAGE)} imports {sorted(bad)}")
    assert not wrong, "\n".join(wrong)


def test_nothing_imports_the_front_ends_or_the_demo_scenario():
    for path in sorted(PACKAGE.rglob("*.py")):
        top = path.relative_to(PACKAGE).parts[0]
        if top in ("frontends", "scenario"):
            continue
        assert not _imports(path) & {"frontends", "scenario"}, path


def test_each_package_says_what_it_holds_and_may_import():
    for name in ALLOWED:
        doc = ast.get_docstring(ast.parse((PACKAGE / name / "__init__.py").read_text()))
        assert doc and "import" in doc, name
