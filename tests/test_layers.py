"""The package's layers: every import points down, none goes round in a circle.

The layers, lowest first (ARCHITECTURE.md): inputs -> physics -> finance -> engine ->
analysis -> outputs -> interfaces (the CLI and the app). The test reads every module's
source (AST), takes every import in it, at the top or inside a function, and resolves
it to a module of the package.
"""

from __future__ import annotations

import ast
from pathlib import Path

from conftest import ROOT

LAYERS = {
    "lcoe.inputs": 0, "lcoe.demo_files": 0,
    "lcoe.physics": 1,
    "lcoe.finance": 2,
    "lcoe.engine": 3,
    "lcoe.analysis": 4,
    "lcoe.outputs": 5,
    "lcoe.cli": 6, "lcoe.ui": 6,
    "lcoe.api": 7, "lcoe.__main__": 7, "lcoe": 7,
}


def _modules() -> dict[str, Path]:
    """Module name -> source file, for the package and the app (shipped as lcoe.ui)."""
    out = {}
    for base, prefix in ((ROOT / "lcoe", "lcoe"), (ROOT / "ui", "lcoe.ui")):
        for path in sorted(base.rglob("*.py")):
            parts = list(path.relative_to(base).with_suffix("").parts)
            if parts[-1] == "__init__":
                parts = parts[:-1]
            out[".".join([prefix, *parts])] = path
    return out


MODULES = _modules()


def _layer(module: str) -> int:
    best = None
    for prefix, rank in LAYERS.items():
        if module == prefix or module.startswith(prefix + "."):
            if best is None or len(prefix) > len(best[0]):
                best = (prefix, rank)
    assert best is not None, f"{module} is in no layer: add it to LAYERS"
    return best[1]


def _imports(module: str, path: Path) -> set[str]:
    """The package modules that ``module`` imports (anywhere in its source)."""
    tree = ast.parse(path.read_text(encoding="utf-8"), filename=str(path))
    package = module if path.name == "__init__.py" else module.rpartition(".")[0]
    found = set()
    for node in ast.walk(tree):
        names = []
        if isinstance(node, ast.Import):
            names = [a.name for a in node.names]
        elif isinstance(node, ast.ImportFrom):
            base = node.module or ""
            if node.level:
                up = package.split(".")
                up = up[:len(up) - node.level + 1]
                base = ".".join(up + ([node.module] if node.module else []))
            # `from lcoe import engine` imports the module lcoe.engine; `from lcoe.x import y` names lcoe.x
            names = [f"{base}.{a.name}" if f"{base}.{a.name}" in MODULES else base for a in node.names]
        for name in names:
            if name in MODULES and name != module:
                found.add(name)
    return found


GRAPH = {m: _imports(m, p) for m, p in MODULES.items()}


def test_every_module_is_in_a_layer():
    for module in MODULES:
        _layer(module)


def test_no_import_points_up_a_layer():
    upward = [f"{m} (layer {_layer(m)}) imports {d} (layer {_layer(d)})"
              for m, deps in GRAPH.items() for d in sorted(deps)
              if _layer(d) > _layer(m) and not m.startswith(d + ".")]
    assert upward == []


def test_no_module_below_the_top_imports_the_package_root():
    """`lcoe/__init__.py` is the public API, above every layer: only the top may import it."""
    offenders = [m for m, deps in GRAPH.items() if "lcoe" in deps and _layer(m) < 7]
    assert offenders == []


def test_no_circular_import():
    """Depth-first search for a cycle among the package's own modules (parent packages left out:
    importing ``a.b.c`` runs ``a.b``'s ``__init__`` first, which is not an import of ``a.b.c``)."""
    edges = {m: {d for d in deps if not m.startswith(d + ".")} for m, deps in GRAPH.items()}
    state: dict[str, int] = {}
    stack: list[str] = []
    cycles = []

    def visit(m):
        state[m] = 1
        stack.append(m)
        for d in sorted(edges.get(m, ())):
            if state.get(d) == 1:
                cycles.append(stack[stack.index(d):] + [d])
            elif d not in state:
                visit(d)
        stack.pop()
        state[m] = 2

    for m in sorted(edges):
        if m not in state:
            visit(m)
    assert cycles == []


def test_the_walk_sees_imports_inside_functions(tmp_path):
    """The checker itself: an import inside a function body is found (a mutation check)."""
    src = tmp_path / "probe.py"
    src.write_text("def f():\n    from lcoe.cli import options\n    return options\n")
    assert "lcoe.cli.options" in _imports("lcoe.physics.probe", src)
