"""The package layout is the data flow: each layer imports only the layers below it.

DEVELOPERS.md states the rule; this test reads every module's imports (at module level
and inside functions alike, since a lazy import is still a dependency) from its syntax
tree and fails on any import that goes up, and on an import cycle between modules.
"""
from __future__ import annotations

import ast
from pathlib import Path

import pytest

ROOT = Path(__file__).resolve().parent.parent / "solver"

#: lowest first; a module may import its own layer and the ones before it
LAYERS = ("foundation", "language", "circuit", "engine", "analysis", "output", "api", "cli")


def layer_of(module: str) -> str:
    parts = module.split(".")
    if parts[:2] in (["solver", "diagnostics"], ["solver", "bulk"]) or parts == ["solver"]:
        return "foundation"
    if parts[:2] == ["solver", "api"]:
        return "api"
    if parts[:2] == ["solver", "__main__"]:
        return "cli"
    if len(parts) >= 2 and parts[1] in LAYERS:
        return parts[1]
    raise AssertionError(f"{module} belongs to no layer: add it to a layer package")


def module_name(path: Path) -> str:
    rel = path.relative_to(ROOT.parent).with_suffix("")
    parts = list(rel.parts)
    if parts[-1] == "__init__":
        parts.pop()
    return ".".join(parts)


def imports(path: Path) -> list[tuple[str, int]]:
    """(absolute module, line) of every import of a solver module in the file."""
    tree = ast.parse(path.read_text(encoding="utf-8"))
    here = module_name(path).split(".")
    package = here if path.name == "__init__.py" else here[:-1]
    out = []
    for node in ast.walk(tree):
        if isinstance(node, ast.Import):
            out += [(a.name, node.lineno) for a in node.names if a.name.split(".")[0] == "solver"]
        elif isinstance(node, ast.ImportFrom):
            if node.level:
                base = package[: len(package) - node.level + 1]
                mod = ".".join(base + ([node.module] if node.module else []))
            else:
                mod = node.module or ""
            if mod.split(".")[0] != "solver":
                continue
            for a in node.names:  # `from solver.analysis import ports` imports solver.analysis.ports
                full = f"{mod}.{a.name}"
                is_module = (ROOT.parent / Path(*full.split("."))).with_suffix(".py").is_file() or \
                    (ROOT.parent / Path(*full.split("."))).is_dir()
                out.append((full if is_module else mod, node.lineno))
    return out


MODULES = sorted(p for p in ROOT.rglob("*.py"))


def test_every_module_is_in_a_layer():
    for p in MODULES:
        layer_of(module_name(p))


@pytest.mark.parametrize("path", MODULES, ids=lambda p: str(p.relative_to(ROOT.parent)))
def test_imports_only_go_down(path):
    me = module_name(path)
    if me == "solver":  # the package facade re-exports the API lazily (PEP 562 __getattr__)
        return
    mine = LAYERS.index(layer_of(me))
    bad = [f"line {line}: {mod} ({layer_of(mod)})" for mod, line in imports(path)
           if LAYERS.index(layer_of(mod)) > mine]
    assert not bad, f"{me} ({LAYERS[mine]}) imports upward: " + "; ".join(bad)


def test_no_import_cycles():
    graph = {module_name(p): {m for m, _ in imports(p) if m != module_name(p)} for p in MODULES}
    graph.pop("solver", None)
    for deps in graph.values():  # an import of a package means its __init__
        deps.discard("solver")
    state: dict[str, int] = {}
    stack: list[str] = []

    def visit(m):
        state[m] = 1
        stack.append(m)
        for d in graph.get(m, ()):
            if d not in graph:
                continue
            if state.get(d) == 1:
                cycle = stack[stack.index(d):] + [d]
                raise AssertionError("import cycle: " + " -> ".join(cycle))
            if d not in state:
                visit(d)
        stack.pop()
        state[m] = 2

    for m in sorted(graph):
        if m not in state:
            visit(m)


def test_the_checker_sees_an_upward_import(tmp_path):
    """The checker itself: an analysis-layer file importing the CLI is caught."""
    fake = ROOT / "analysis" / "_layer_probe.py"
    assert not fake.exists()
    tree = "from solver.cli import main\n"
    fake.write_text(tree, encoding="utf-8")
    try:
        mods = imports(fake)
        assert [m for m, _ in mods] == ["solver.cli"]
        assert LAYERS.index(layer_of(mods[0][0])) > LAYERS.index(layer_of(module_name(fake)))
    finally:
        fake.unlink()
