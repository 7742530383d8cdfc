"""The package's import graph: each layer imports only from itself and the layers below it, and
no module imports itself round a cycle (DEVELOPERS.md, Layout; the data flow is the folder listing).

Every import is read from the source with ``ast``, including the imports inside functions, so a
dependency cannot hide in a function body.
"""

from __future__ import annotations

import ast
from pathlib import Path

import pytest

PACKAGE = Path(__file__).resolve().parents[1] / "gnssrel"

BASE = ("constants", "errors", "timescales", "signals", "geodesy", "accounting", "progress", "text", "systems")
"""Shared modules every stage may use (gnssrel/<name>.py); they import only each other."""
LAYERS = {"io": 1, "simulate": 1.5, "orbits": 2, "relativity": 3, "clocks": 4, "audit": 5, "survey": 5.5, "pipeline": 6,
          "report": 7, "campaign": 7.5, "jobs": 8, "cli": 9, "__main__": 9}
"""io -> orbits -> relativity -> clocks -> audit -> pipeline -> report -> jobs/cli.  The simulator
sits just above io: it shares only the base modules and the writers, never the stages it checks."""
HEAVY = ("matplotlib", "scipy", "pyarrow", "hatanaka", "unlzw3", "dask", "xarray", "pandas", "georinex")
"""Libraries whose import is slow enough that a function-local import of them (or of a gnssrel module
pulling them) may be kept for start-up time, with a comment saying so."""
COMMENTED_LOCAL_IMPORTS = ("jobs", "report", "pipeline", "cli", "__main__", "text", "progress")
"""Layers whose function-local imports must each carry a comment giving the reason (more to follow)."""


def _module_name(path: Path) -> str:
    parts = list(path.relative_to(PACKAGE.parent).with_suffix("").parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


MODULES = {_module_name(p): p for p in sorted(PACKAGE.rglob("*.py"))}


def layer(module: str) -> float | None:
    """The layer of a gnssrel module (0 for the base), None for the package root (the lazy facade)."""
    parts = module.split(".")
    if len(parts) == 1:
        return None
    if parts[1] in LAYERS:
        return LAYERS[parts[1]]
    if len(parts) == 2 and parts[1] in BASE:
        return 0
    raise AssertionError(f"{module} has no layer: add it to BASE or LAYERS in {Path(__file__).name}")


def _resolve(importer: str, node) -> list[tuple[str, int, bool]]:
    """(gnssrel module imported, line, is the root facade export) for one import statement."""
    out = []
    if isinstance(node, ast.Import):
        return [(a.name, node.lineno, False) for a in node.names if a.name.split(".")[0] == "gnssrel"]
    assert node.level == 0, f"{importer} line {node.lineno}: gnssrel uses absolute imports only"
    base = node.module or ""
    if base.split(".")[0] != "gnssrel":
        return []
    for alias in node.names:
        sub = f"{base}.{alias.name}"
        if sub in MODULES:
            out.append((sub, node.lineno, False))
        elif base == "gnssrel" and alias.name != "__version__":
            out.append((base, node.lineno, True))
        else:
            out.append((base, node.lineno, False))
    return out


def _imports(module: str):
    """Every gnssrel import of ``module``: (imported, line, inside a function, facade export)."""
    tree = ast.parse(MODULES[module].read_text(encoding="utf-8"))
    local = set()
    for node in ast.walk(tree):
        if isinstance(node, (ast.FunctionDef, ast.AsyncFunctionDef)):
            local.update(id(sub) for sub in ast.walk(node) if isinstance(sub, (ast.Import, ast.ImportFrom)))
    for node in ast.walk(tree):
        if isinstance(node, (ast.Import, ast.ImportFrom)):
            for target, line, facade in _resolve(module, node):
                yield target, line, id(node) in local, facade


GRAPH = {m: sorted({t for t, *_ in _imports(m) if t != m}) for m in MODULES}


def test_every_module_has_a_layer():
    for module in MODULES:
        layer(module)


@pytest.mark.parametrize("module", sorted(MODULES))
def test_no_import_from_a_layer_above(module):
    own = layer(module)
    if own is None:                                  # the root's lazy exports are the public API
        return
    wrong = []
    for target, line, _, facade in _imports(module):
        if facade:
            wrong.append(f"line {line}: a stage through the gnssrel facade (import it from its module)")
        elif layer(target) is not None and layer(target) > own:
            wrong.append(f"line {line}: {target} (layer {layer(target)}) from layer {own}")
    assert not wrong, f"{module} imports from above its layer: " + "; ".join(wrong)


def test_no_import_cycle():
    """Tarjan's strongly connected components over the module graph: each must be one module."""
    index, low, stack, on_stack, cycles = {}, {}, [], set(), []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on_stack.add(v)
        for w in GRAPH.get(v, ()):
            if w not in MODULES:
                continue
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            component = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                component.append(w)
                if w == v:
                    break
            if len(component) > 1:
                cycles.append(sorted(component))

    for module in MODULES:
        if module not in index:
            visit(module)
    assert not cycles, f"import cycles: {cycles}"


def _local_imports_without_reason(module: str) -> list[int]:
    lines = MODULES[module].read_text(encoding="utf-8").splitlines()
    tree = ast.parse("\n".join(lines))
    missing = []
    for fn in (n for n in ast.walk(tree) if isinstance(n, (ast.FunctionDef, ast.AsyncFunctionDef))):
        block = [n for n in ast.walk(fn) if isinstance(n, (ast.Import, ast.ImportFrom))]
        if not block:
            continue
        first = min(n.lineno for n in block)
        # the reason: a comment on the import line, or in the lines just above the function's first import
        nearby = lines[max(first - 4, fn.lineno - 1):first]
        if not any("#" in text for text in nearby):
            missing.append(first)
    return missing


@pytest.mark.parametrize("module", sorted(m for m in MODULES if m.split(".")[1:2] and
                                          m.split(".")[1] in COMMENTED_LOCAL_IMPORTS))
def test_function_local_imports_say_why(module):
    assert not _local_imports_without_reason(module), \
        f"{module}: function-local imports without a comment giving the reason at lines " \
        f"{_local_imports_without_reason(module)}"


def test_the_layer_test_catches_an_upward_import():
    # a report module importing from jobs is what this test exists to refuse (the report -> jobs -> report cycle of the first release)
    node = ast.parse("def f():\n    from gnssrel.jobs.common import emit\n").body[0].body[0]
    target, _, _ = _resolve("gnssrel.report.html", node)[0]
    assert layer(target) > layer("gnssrel.report.html")
