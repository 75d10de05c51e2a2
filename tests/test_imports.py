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


# The flow of data, lowest layer first (DEVELOPERS.md draws the same picture). A module may
# import from its own layer or a lower one, never from a higher one. Within a layer, the
# cycle test above keeps imports one way.
LAYERS = [
    ("torque.errors", "torque.progress", "torque.tabular", "torque.sphere", "torque.polygons",
     "torque.grids",
     "torque.forces.base", "torque.parallel", "torque._lazy", "torque._version"),
    ("torque.locate", "torque.arcindex", "torque.euler"),
    ("torque.world", "torque.rings", "torque.continents", "torque.lithosphere",
     "torque.columns"),
    ("torque.margins", "torque.data"),
    ("torque.validate", "torque.forces.ages_synth"),
    ("torque.forces",),                         # the context, the kinds and the registry
    ("torque.hypothesis",),
    ("torque.results",),                        # typed records, no computation
    # the inference layer, bottom up: the balance, its solvers, what is built on them
    ("torque.inference.system", "torque.inference.covariance", "torque.inference._optimise"),
    ("torque.inference.solvers",),
    ("torque.inference.methods", "torque.inference.statistics", "torque.inference.profile"),
    ("torque.inference.analysis", "torque.inference.resampling", "torque.results"),
    ("torque.inference.ranking", "torque.inference.stages"),
    ("torque.inference",),                      # the package: its names, lazily
    ("torque.io",),                             # every file read or written
    ("torque.present",),                        # maps, charts, report, sentences
    ("torque.workflows",),                      # the recipes every caller uses
    ("torque.demo",),
    ("torque.cli",),
    ("torque", "torque.__main__"),
]
#: The numerical core: every layer below torque.io. It reads and writes no file.
CORE_TOP = [i for i, layer in enumerate(LAYERS) if "torque.io" in layer][0]


def layer_of(module: str) -> int:
    """The layer of a module: that of the longest prefix listed in LAYERS."""
    best, found = -1, None
    for i, layer in enumerate(LAYERS):
        for name in layer:
            if (module == name or module.startswith(name + ".")) and len(name) > best:
                best, found = len(name), i
    assert found is not None, f"{module} is in no layer: add it to LAYERS"
    return found


def upward_imports(graph) -> list:
    """Imports from a higher layer than the importing module's."""
    return sorted(f"{m} -> {d}" for m, deps in graph.items() for d in deps
                  if layer_of(d) > layer_of(m))


def test_imports_run_down_the_layers():
    assert upward_imports(import_graph()) == []


def test_the_layer_check_catches_an_upward_import():
    # a force kind reading a file through torque.io, or the core importing the CLI
    fake = {"torque.forces.ridge": {"torque.io.grids", "torque.sphere"},
            "torque.sphere": set(), "torque.io.grids": {"torque.grids"},
            "torque.grids": set(), "torque.world": {"torque.cli.text"},
            "torque.cli.text": set()}
    assert upward_imports(fake) == ["torque.forces.ridge -> torque.io.grids",
                                    "torque.world -> torque.cli.text"]


def test_the_core_touches_no_file():
    """Below torque.io nothing opens, reads or writes a file (the memory guard reads
    /proc/meminfo, which is the machine, not an input)."""
    found = []
    for p in PACKAGE.rglob("*.py"):
        parts = p.relative_to(PACKAGE.parent).with_suffix("").parts
        name = ".".join(parts[:-1] if parts[-1] == "__init__" else parts)
        if layer_of(name) >= CORE_TOP or name == "torque.errors":
            continue
        for node in ast.walk(ast.parse(p.read_text())):
            if isinstance(node, ast.Call):
                f = node.func
                called = f.id if isinstance(f, ast.Name) else getattr(f, "attr", "")
                if called in ("open", "read_text", "write_text", "read_bytes", "write_bytes",
                              "open_dataset", "to_netcdf", "savefig"):
                    found.append(f"{name}: {called}()")
    assert found == []


#: What the command line and the demo's runner may import: the recipes, presentation, file
#: I/O and typed results, and the cross-cutting errors, progress bars and executors.
#: Nothing of the numerical core directly (issue 25).
FRONT_MAY_IMPORT = ("torque.workflows", "torque.present", "torque.io", "torque.results",
                    "torque.errors", "torque.progress", "torque.parallel", "torque._version",
                    "torque.cli", "torque.demo")


def test_the_command_line_and_the_demo_call_only_the_recipes():
    graph = import_graph()
    front = [m for m in graph if m.startswith("torque.cli") or m == "torque.demo.runner"]
    assert "torque.cli.balance" in front and "torque.demo.runner" in front
    below = sorted(f"{m} -> {d}" for m in front for d in graph[m]
                   if not d.startswith(FRONT_MAY_IMPORT))
    assert below == []
