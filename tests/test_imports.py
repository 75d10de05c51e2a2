"""The package's imports run one way: no module imports, even lazily inside a function, a
module that imports it back (directly or through others).

The graph is read from the source with :mod:`ast`, so imports inside functions count too.
"""

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parents[1] / "torque"


def import_graph():
    mods = {}
    for p in PACKAGE.rglob("*.py"):
        parts = p.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        mods[name] = p
    graph = {}
    for name, p in mods.items():
        pkg = name if p.name == "__init__.py" else name.rsplit(".", 1)[0]
        out = set()
        for node in ast.walk(ast.parse(p.read_text())):
            if isinstance(node, ast.ImportFrom):
                if node.level:
                    base = pkg.split(".")[:len(pkg.split(".")) - (node.level - 1)]
                    target = ".".join(base + ([node.module] if node.module else []))
                else:
                    target = node.module or ""
                for a in node.names:        # `from . import ridge` imports a module
                    out.add(f"{target}.{a.name}" if f"{target}.{a.name}" in mods else target)
            elif isinstance(node, ast.Import):
                out.update(a.name for a in node.names)
        graph[name] = {t for t in out if t in mods and t != name}
    return graph


def cycles(graph):
    """Strongly connected components of more than one module (Tarjan's algorithm)."""
    index, low, stack, on, found = {}, {}, [], set(), []

    def visit(v):
        index[v] = low[v] = len(index)
        stack.append(v)
        on.add(v)
        for w in graph[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                found.append(sorted(comp))

    for v in graph:
        if v not in index:
            visit(v)
    return found


def test_the_cycle_finder_finds_a_cycle():
    assert cycles({"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}) == [["a", "b", "c"]]
    assert cycles({"a": {"b"}, "b": set()}) == []


def test_no_import_cycle():
    graph = import_graph()
    assert "torque.forces.ridge" in graph and "torque.cli" in graph
    assert cycles(graph) == []


def test_force_modules_do_not_import_the_package():
    # the registry in torque/forces/__init__.py imports the kinds, never the other way
    graph = import_graph()
    upward = {m for m, deps in graph.items()
              if m.startswith("torque.forces.") and "torque.forces" in deps}
    assert upward == set()
