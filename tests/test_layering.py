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
    "robust": 5,
    "trajectory": 3,
    "metrics": 4,
    "project": 5,
    "cases": 5,
    "case_table": 5,
    "poses": 5,
    "regions": 5,
    "design": 5,
    "dutycase": 6,
    "payloadcase": 6,
    "impactcase": 6,
    "speedcase": 6,
    "preparedcase": 6,
    "evaluate": 6,
    "problem": 7,
    "assessment": 7,
    "margin_words": 5,
    "cautions": 7,
    "options": 8,
    "option_rows": 8,
    "stack_dominance": 8,
    "solve": 8,
    "sizing": 8,
    "objective": 8,
    "frontier": 10,
    "frontier_methods": 10,
    "frontier_result": 10,
    "frontier_sweep": 10,
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


def _module_name(path: Path) -> str:
    rel = path.relative_to(PACKAGE).with_suffix("")
    parts = [p for p in rel.parts if p != "__init__"]
    return ".".join(["jointwright", *parts])


def _module_graph() -> dict[str, set[str]]:
    """Module -> the package modules it imports (anywhere in its text, deferred imports too)."""
    names = {_module_name(p): p for p in PACKAGE.rglob("*.py")}
    graph: dict[str, set[str]] = {}
    for name, path in names.items():
        package = name if path.name == "__init__.py" else name.rpartition(".")[0]
        out = set()
        for node in ast.walk(ast.parse(path.read_text(encoding="utf-8"))):
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = package.split(".")
                    base = base[: len(base) - (node.level - 1)]
                    target = ".".join([*base, node.module] if node.module else base)
                else:
                    target = node.module or ""
                for alias in node.names:  # `from . import x` may name a module
                    sub = f"{target}.{alias.name}"
                    out.add(sub if sub in names else target)
            elif isinstance(node, ast.Import):
                out.update(a.name for a in node.names)
        graph[name] = {t for t in out if t in names and t != name}
    return graph


def test_no_import_cycles():
    """No module imports, even late inside a function, a module that imports it back.

    Package ``__init__`` files re-export and are left out (they import their own modules).
    """
    graph = {
        m: {t for t in ts if not (PACKAGE / Path(*t.split(".")[1:]) / "__init__.py").exists()}
        for m, ts in _module_graph().items()
        if not (PACKAGE / Path(*m.split(".")[1:]) / "__init__.py").exists()
    }
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(m: str) -> None:
        state[m] = 1
        stack.append(m)
        for t in sorted(graph.get(m, ())):
            if state.get(t) == 1:
                cycle = stack[stack.index(t) :] + [t]
                pytest.fail("import cycle: " + " -> ".join(cycle))
            if t not in state:
                visit(t)
        stack.pop()
        state[m] = 2

    for m in sorted(graph):
        if m not in state:
            visit(m)
