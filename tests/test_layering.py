"""Imports run one way (DEVELOPERS.md): a module may import only modules of its own layer or
below. Checked on the source text, so it costs nothing at run time."""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "src" / "jointwright"

#: layer of each top-level module or subpackage; higher numbers may import lower ones.
#: solve/ and sizing.py are one layer: the optimizer (sizing is its front door).
LAYERS = {
    "errors": 0,
    "progress": 0,
    "units": 0,
    "tomlfile": 1,
    "catalog": 2,
    "drivetrain": 3,
    "robot": 3,
    "trajectory": 3,
    "metrics": 4,
    "project": 5,
    "regions": 5,
    "design": 5,
    "dutycase": 6,
    "evaluate": 6,
    "problem": 7,
    "assessment": 7,
    "options": 8,
    "solve": 8,
    "sizing": 8,
    "frontier": 10,
    "study": 11,
    "report": 11,
    "commands": 12,
    "cli": 13,
    "examples": 0,
}


def _top(module_path: Path) -> str:
    rel = module_path.relative_to(PACKAGE)
    return rel.parts[0].removesuffix(".py")


def _imports(path: Path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    rel = path.relative_to(PACKAGE)
    depth = len(rel.parts) - 1
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom):
            if node.level == 0:
                if node.module and node.module.startswith("jointwright."):
                    yield node.module.split(".")[1], node.lineno
            else:
                up = node.level - 1
                if up < depth:  # inside the same subpackage
                    continue
                if node.module:
                    yield node.module.split(".")[0], node.lineno
                else:
                    for alias in node.names:
                        yield alias.name, node.lineno
        elif isinstance(node, ast.Import):
            for alias in node.names:
                if alias.name.startswith("jointwright."):
                    yield alias.name.split(".")[1], node.lineno


FILES = sorted(p for p in PACKAGE.rglob("*.py") if p.name != "__init__.py" or p.parent != PACKAGE)


@pytest.mark.parametrize("path", FILES, ids=lambda p: str(p.relative_to(PACKAGE)))
def test_imports_point_down(path):
    own = _top(path)
    if own not in LAYERS:
        pytest.fail(f"{own} has no layer in tests/test_layering.py: add it")
    for target, line in _imports(path):
        if target == own or target not in LAYERS:
            continue
        assert LAYERS[target] <= LAYERS[own], (
            f"{path.relative_to(PACKAGE)}:{line} imports {target} (layer {LAYERS[target]}) "
            f"from layer {LAYERS[own]}"
        )


def test_matplotlib_only_in_the_report_layer():
    for path in FILES:
        if _top(path) == "report":
            continue
        text = path.read_text(encoding="utf-8")
        assert "import matplotlib" not in text and "from matplotlib" not in text, path
