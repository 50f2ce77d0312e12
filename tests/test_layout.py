"""The package layout: imports run one way, down the list of packages (DESIGN.md, package layout;
DEVELOPERS.md has the layout as built), and no module grows past about 500 lines."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "tracer"

#: The floors, top first. A module may import from its own floor and the floors below it, never above.
FLOORS: tuple[tuple[str, ...], ...] = (
    ("cli",),
    ("review",),
    ("batch",),
    ("assess",),
    ("outputs",),
    ("result",),
    ("inputs",),
    ("measurement",),
    ("torsion",),
    ("uncertainty",),
    ("section",),
    ("errors", "units", "files", "_version"),
)
#: The public face and ``python -m tracer`` gather from every floor.
ENTRANCES = ("tracer", "tracer.__main__")
#: "About 500 lines" (issue 16), with a little room.
MAX_LINES = 520


def floor_of(module: str) -> int:
    """The floor of a dotted module name under tracer (0 = top); KeyError for a room on no floor."""
    room = module.split(".")[1]
    for i, names in enumerate(FLOORS):
        if room in names:
            return i
    raise KeyError(module)


def module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    return ".".join(parts[:-1] if parts[-1] == "__init__" else parts)


def imported(source: str, module: str, is_package: bool) -> list[tuple[int, str]]:
    """(line, absolute module) of every import of a tracer module in `source`, inside functions too."""
    here = module.split(".") if is_package else module.split(".")[:-1]
    found = []
    for node in ast.walk(ast.parse(source)):
        if isinstance(node, ast.ImportFrom):
            if node.level:
                base = here[: len(here) - (node.level - 1)]
                target = ".".join(base + ([node.module] if node.module else []))
            else:
                target = node.module or ""
            if target == "tracer":
                # ``from tracer import name``: a room of the house, or a name of the public face
                rooms = {r for names in FLOORS for r in names}
                found += [(node.lineno, f"tracer.{a.name}" if a.name in rooms else "tracer") for a in node.names]
            elif target.startswith("tracer."):
                found.append((node.lineno, target))
        elif isinstance(node, ast.Import):
            found += [(node.lineno, a.name) for a in node.names if a.name.startswith("tracer.")]
    return found


def upward(source: str, module: str, is_package: bool = False) -> list[str]:
    """The imports in `source` (of `module`) that reach a floor above the module's own."""
    if module in ENTRANCES:
        return []
    own = floor_of(module)
    bad = []
    for line, target in imported(source, module, is_package):
        if target in ENTRANCES:
            bad.append(f"{module}:{line} imports the public face {target}")
        elif floor_of(target) < own:
            bad.append(f"{module}:{line} imports {target}, a floor above its own")
    return bad


MODULES = sorted(PACKAGE.rglob("*.py"))


def test_every_module_stands_on_a_floor():
    # A new package must be given its place in FLOORS (and in DEVELOPERS.md's layout).
    lost = []
    for path in MODULES:
        name = module_name(path)
        if name not in ENTRANCES:
            try:
                floor_of(name)
            except KeyError:
                lost.append(name)
    assert not lost, f"modules on no floor of tests/test_layout.py: {lost}"


def test_no_module_imports_from_a_floor_above_its_own():
    bad = []
    for path in MODULES:
        bad += upward(path.read_text(encoding="utf-8"), module_name(path), path.name == "__init__.py")
    assert not bad, "\n".join(bad)


@pytest.mark.parametrize("module, source, expected", [
    # the check itself, on sources written for it: an upward import is caught, at any depth
    ("tracer.section.shapes", "from ..outputs.plot import draw_section\n", 1),
    ("tracer.inputs.photo.pipeline", "def f():\n    from ...outputs.overlay import overlay_bytes\n", 1),
    ("tracer.uncertainty.models", "import tracer.result\n", 1),
    ("tracer.section.geometry", "from .. import Section\n", 1),
    ("tracer.result", "from .uncertainty import ErrorModel\nfrom .section.geometry import Section\n", 0),
    ("tracer.inputs.photo.scale", "from .ruler import read_ruler\nfrom ...errors import InputError\n", 0),
])
def test_the_check_catches_an_upward_import(module, source, expected):
    assert len(upward(source, module)) == expected


def test_no_module_is_over_about_500_lines():
    long = {module_name(p): n for p in MODULES if (n := len(p.read_text(encoding="utf-8").splitlines())) > MAX_LINES}
    assert not long, f"modules over {MAX_LINES} lines: {long}"
