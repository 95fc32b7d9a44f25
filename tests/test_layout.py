"""The layout holds the architecture: the core never imports a shell, readers never
import the computing core they feed, commands are used only by the command line.

Reads every module's imports (top level and inside functions) with :mod:`ast`.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parent.parent / "planner"

# What each part of the package may import of gcplan (besides itself).  Modules
# directly under planner/ (errors, cautions, config) are listed as their own part.
ALLOWED: dict[str, set[str]] = {
    "errors": set(),
    "cautions": set(),
    "config": set(),
    "model": {"errors", "sky.airmass"},
    "sky": {"model", "errors", "cautions"},
    "light": {"model", "errors"},
    "variables": {"model", "errors"},
    "scheduling": {"model", "errors", "cautions", "sky", "light", "variables"},
    "inputs": {"model", "errors", "sky.nights"},
    "logbook": {"model", "errors", "sky", "light", "inputs"},
    "reports": {"model", "errors", "cautions", "sky", "light", "variables", "scheduling", "inputs", "logbook"},
    "cache": {"__init__"},
    "tui": {"model", "errors", "cautions", "sky", "light", "variables", "scheduling", "inputs", "logbook",
            "reports", "config", "cache"},
    "commands": {"model", "errors", "cautions", "sky", "light", "variables", "scheduling", "inputs", "logbook",
                 "reports", "tui", "config", "commands.common", "__init__", "cache"},
    "cli": {"errors", "config", "commands", "__init__"},
    "__main__": {"cli"},
    "__init__": set(),
}
SHELLS = {"commands", "reports", "tui", "cli", "__main__", "cache"}
CORE = {"model", "sky", "light", "variables", "scheduling"}


def _part(module: str) -> str:
    """``planner.sky.almanac`` -> ``sky``; ``planner.errors`` -> ``errors``; ``planner`` -> ``__init__``."""
    rest = module.split(".")[1:]
    return rest[0] if rest else "__init__"


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts = parts[:-1]
    return ".".join(parts)


def _imports(path: Path) -> list[tuple[int, str]]:
    """(line, module) of every gcplan import in the file, relative imports resolved."""
    tree = ast.parse(path.read_text(), str(path))
    here = _module_name(path)
    package = here if path.name == "__init__.py" else here.rsplit(".", 1)[0]
    found = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names if a.name.split(".")[0] == "planner"]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                anchor = package.split(".")[: len(package.split(".")) - node.level + 1]
                base = ".".join(anchor + ([base] if base else []))
            if base.split(".")[0] != "planner":
                continue
            if base == "planner":  # from planner import x: x is a module or a name of planner/__init__
                found += [(node.lineno, f"planner.{a.name}") if (PACKAGE / a.name).exists()
                          or (PACKAGE / f"{a.name}.py").exists() else (node.lineno, "planner")
                          for a in node.names]
            else:
                found.append((node.lineno, base))
    return found


def _allowed(importer: str, imported: str) -> bool:
    part, target = _part(importer), _part(imported)
    if part == target and part != "commands":
        return True
    rules = ALLOWED[part]
    if part == "commands" and target == "commands":
        return imported == "planner.commands.common" or imported == "planner.commands"
    dotted = ".".join(imported.split(".")[1:3])
    return target in rules or dotted in rules


def _violations() -> list[str]:
    bad = []
    for path in sorted(PACKAGE.rglob("*.py")):
        importer = _module_name(path)
        for line, imported in _imports(path):
            if not _allowed(importer, imported):
                bad.append(f"{path.relative_to(PACKAGE.parent)}:{line}: {importer} imports {imported}")
    return bad


def test_every_part_is_known():
    parts = {_part(_module_name(p)) for p in PACKAGE.rglob("*.py")}
    assert parts <= set(ALLOWED), f"parts without import rules: {sorted(parts - set(ALLOWED))}"


def test_imports_follow_the_layers():
    assert _violations() == []


def test_the_rules_themselves_keep_the_core_below_the_shells():
    for part in CORE:
        assert not ALLOWED[part] & (SHELLS | {"inputs", "logbook"}), part
    assert not ALLOWED["inputs"] & (CORE - {"model"}), "readers must not import the core they feed"


@pytest.mark.parametrize("importer, imported, ok", [
    ("planner.sky.almanac", "planner.inputs.sites", False),
    ("planner.sky.almanac", "planner.model.site", True),
    ("planner.inputs.targets", "planner.sky.visibility", False),
    ("planner.inputs.campaign_file", "planner.sky.nights", True),
    ("planner.scheduling.campaign", "planner.commands.schedule", False),
    ("planner.commands.campaign", "planner.commands.schedule", False),
    ("planner.commands.campaign", "planner.commands.common", True),
    ("planner.tui.app", "planner.commands.schedule", False),
    ("planner.reports.charts", "planner.tui.app", False),
    ("planner.sky.ephemeris", "planner.cache.sun_moon", False),
    ("planner.commands.observability", "planner.cache.sun_moon", True),
])
def test_rule_examples(importer, imported, ok):
    """The checker itself can fail: known good and bad pairs."""
    assert _allowed(importer, imported) is ok


def test_matplotlib_and_textual_stay_in_their_shells():
    bad = []
    for path in PACKAGE.rglob("*.py"):
        part = _part(_module_name(path))
        tree = ast.parse(path.read_text())
        for node in ast.walk(tree):
            names = ([a.name for a in node.names] if isinstance(node, ast.Import)
                     else [node.module or ""] if isinstance(node, ast.ImportFrom) else [])
            for name in names:
                top = name.split(".")[0]
                if (top == "matplotlib" and part != "reports") or (top == "textual" and part != "tui"):
                    bad.append(f"{path.relative_to(PACKAGE.parent)}:{node.lineno}: {name}")
    assert bad == []
