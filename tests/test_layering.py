"""The layering of the package holds: no import cycle among rcsim modules, counting imports
inside functions, apart from the thin facade methods listed below; no module imports another's
private (underscore) names.

The import graph is built from the source with ``ast`` (module-level and in-function imports,
relative imports resolved; importing ``rcsim.pkg.mod`` from outside ``rcsim.pkg`` also runs
``rcsim.pkg``'s ``__init__``, so it counts as an import of that package too). A cycle is a
strongly connected component of more than one module (Tarjan's algorithm).
"""

from __future__ import annotations

import ast
import functools
import os
from collections import defaultdict

ROOT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "rcsim")

#: Convenience methods of the public facade classes that hand off to the layer above (the only
#: imports allowed to point upwards).
FACADES = {
    "rcsim.network.Network.steady",
    "rcsim.network.Network.equivalent_resistance",
    "rcsim.network.Network.time_constants",
    "rcsim.network.Network.modes",
    "rcsim.network.Network.simulate",
    "rcsim.network.Network.summary",
    "rcsim.results.Result.plot",
    "rcsim.results.Result.report",
    "rcsim.fitting.result.FitResult.report",
    "rcsim.fitting.joint.JointFit.report",
    "rcsim.sizing.result.SizingResult.report_html",
    "rcsim.profiles.base.Profile.repeat",
}

#: The layers, lowest first: a module may import its own layer and those below it (apart from
#: the facade methods). A module is placed by its name or the name of its package.
LAYERS = [
    ("base", ["rcsim.base", "rcsim.errors", "rcsim.units", "rcsim.atomic", "rcsim.runinfo",
              "rcsim.arguments", "rcsim.clock", "rcsim.caution", "rcsim.threads",
              "rcsim.inputfiles", "rcsim.tomlscan", "rcsim.tomltext"]),
    ("physics and inputs", ["rcsim.elements", "rcsim.correlations", "rcsim.laws", "rcsim.phase",
                            "rcsim.materials", "rcsim.profiles", "rcsim.limits",
                            "rcsim.solar", "rcsim.sky", "rcsim.exposure", "rcsim.weather",
                            "rcsim.viewfactors", "rcsim.radiosity", "rcsim.radial",
                            "rcsim.shapefactors", "rcsim.periodic_wall"]),
    ("model", ["rcsim.parts", "rcsim.thermostat", "rcsim.assembly", "rcsim.network",
               "rcsim.statespace", "rcsim.steady_linear", "rcsim.radiation_links", "rcsim.conditioning",
               "rcsim.summaries", "rcsim.varying", "rcsim.surfaces"]),
    ("steady state, modes, records", ["rcsim.nonlinear", "rcsim.steady", "rcsim.modes",
                                      "rcsim.recording", "rcsim.results",
                                      "rcsim.h5files", "rcsim.resultfile",
                                      "rcsim.run_warnings"]),
    ("transient", ["rcsim.transient"]),
    ("scenario", ["rcsim.scenario", "rcsim.outdoors"]),
    ("applications", ["rcsim.fitting", "rcsim.sweep", "rcsim.plotting", "rcsim.sizing",
                      "rcsim.report", "rcsim.drawing", "rcsim.exports", "rcsim.gallery",
                      "rcsim.cli", "rcsim.tomlwrite", "rcsim"]),
]

#: Import edges in modules outside the engine that still close a cycle or import a private
#: name; they are to be removed when those modules are rewired (issue 13), and this list
#: emptied. Each entry: (importing module, imported module).
KNOWN_EDGES: set[tuple[str, str]] = set()

#: Private names imported across modules outside the engine, to be given public names:
#: (importing module, imported module, name).
KNOWN_PRIVATE_IMPORTS: set[tuple[str, str, str]] = set()


def _module_files():
    """{module name: path} of every module of the package."""
    out = {}
    for folder, _, files in os.walk(ROOT):
        for f in files:
            if not f.endswith(".py"):
                continue
            path = os.path.join(folder, f)
            rel = os.path.relpath(path, os.path.dirname(ROOT))[:-3].split(os.sep)
            if rel[-1] == "__init__":
                rel = rel[:-1]
            out[".".join(rel)] = path
    return out


class _Imports(ast.NodeVisitor):
    """Every import of a module with the qualified name of the function it sits in."""

    def __init__(self, module: str, is_package: bool):
        self.module = module
        self.package = module if is_package else module.rpartition(".")[0]
        self.scope: list[str] = []
        self.found: list[tuple[str, str, list[str]]] = []   # (scope, target, names)

    def _visit_scope(self, node):
        self.scope.append(node.name)
        self.generic_visit(node)
        self.scope.pop()

    visit_FunctionDef = visit_AsyncFunctionDef = visit_ClassDef = _visit_scope

    def _where(self) -> str:
        return ".".join([self.module] + self.scope)

    def visit_Import(self, node):
        for alias in node.names:
            self.found.append((self._where(), alias.name, []))

    def visit_ImportFrom(self, node):
        if node.level:
            parts = self.package.split(".")
            base = ".".join(parts[:len(parts) - (node.level - 1)])
            target = f"{base}.{node.module}" if node.module else base
        else:
            target = node.module or ""
        self.found.append((self._where(), target, [a.name for a in node.names]))


@functools.lru_cache(maxsize=1)
def _graph():
    """(edges {(a, b): [where, ...]}, private imports [(a, b, name)]), built once."""
    files = _module_files()
    edges = defaultdict(list)
    private = []
    for module, path in files.items():
        with open(path, encoding="utf-8") as fh:
            tree = ast.parse(fh.read(), path)
        visitor = _Imports(module, path.endswith("__init__.py"))
        visitor.visit(tree)
        for where, target, names in visitor.found:
            if not (target == "rcsim" or target.startswith("rcsim.")):
                continue
            if where in FACADES:
                continue
            targets = []
            for name in names:
                sub = f"{target}.{name}"
                if sub in files:
                    targets.append(sub)
                else:
                    targets.append(target)
                    if name.startswith("_") and not name.startswith("__") and target != module:
                        private.append((module, target, name))
            for t in targets or [target]:
                if t not in files or t == module:
                    continue
                edges[(module, t)].append(where)
                # importing rcsim.pkg.mod from outside rcsim.pkg runs rcsim.pkg/__init__.py
                parent = t.rpartition(".")[0]
                while parent not in ("", "rcsim") and not module.startswith(parent + ".") \
                        and module != parent:
                    edges[(module, parent)].append(where)
                    parent = parent.rpartition(".")[0]
    return edges, private


def _cycles(nodes, adjacency):
    """Strongly connected components with more than one node (Tarjan)."""
    index, low, on_stack, stack, out = {}, {}, set(), [], []
    counter = [0]

    def visit(v):
        index[v] = low[v] = counter[0]
        counter[0] += 1
        stack.append(v)
        on_stack.add(v)
        for w in adjacency.get(v, ()):
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            comp = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                comp.append(w)
                if w == v:
                    break
            if len(comp) > 1:
                out.append(sorted(comp))

    for v in sorted(nodes):
        if v not in index:
            visit(v)
    return out


def _a_cycle(component, adjacency):
    """One cycle through the first module of a strongly connected component, for the message."""
    members = set(component)
    start = component[0]
    path, seen = [start], {start}

    def walk(v):
        for w in sorted(adjacency.get(v, ())):
            if w == start:
                return path + [start]
            if w in members and w not in seen:
                seen.add(w)
                path.append(w)
                found = walk(w)
                if found:
                    return found
                path.pop()
        return None

    return walk(start) or component


def test_the_import_graph_of_rcsim_has_no_cycle():
    edges, _ = _graph()
    stale = KNOWN_EDGES - set(edges)
    assert not stale, f"known edges that no longer exist (remove them from KNOWN_EDGES): {stale}"
    adjacency = defaultdict(set)
    for (a, b) in edges:
        if (a, b) not in KNOWN_EDGES:
            adjacency[a].add(b)
    nodes = {m for edge in edges for m in edge}
    cycles = _cycles(nodes, adjacency)
    messages = []
    for comp in cycles:
        cycle = _a_cycle(comp, adjacency)
        hops = [f"{a} -> {b} (in {edges[(a, b)][0]})" for a, b in zip(cycle, cycle[1:])]
        messages.append("; ".join(hops))
    assert not cycles, "import cycles:\n" + "\n".join(messages)


def test_no_module_imports_another_modules_private_names():
    _, private = _graph()
    unexpected = [p for p in private if p not in KNOWN_PRIVATE_IMPORTS]
    stale = KNOWN_PRIVATE_IMPORTS - set(private)
    assert not unexpected, f"private names imported across modules: {unexpected}"
    assert not stale, f"known private imports that no longer exist: {stale}"


def _layer_of(module: str) -> int:
    best, level = -1, None
    for k, (_, members) in enumerate(LAYERS):
        for m in members:
            if (module == m or module.startswith(m + ".")) and len(m) > best:
                best, level = len(m), k
    return level


def test_every_module_imports_only_its_own_layer_and_those_below():
    edges, _ = _graph()
    modules = set(_module_files())
    unplaced = sorted(m for m in modules if _layer_of(m) is None)
    assert not unplaced, f"modules in no layer (add them to LAYERS): {unplaced}"
    upward = [f"{a} ({LAYERS[_layer_of(a)][0]}) -> {b} ({LAYERS[_layer_of(b)][0]}) in {w[0]}"
              for (a, b), w in sorted(edges.items())
              if (a, b) not in KNOWN_EDGES and _layer_of(b) > _layer_of(a)]
    assert not upward, "imports into a higher layer:\n" + "\n".join(upward)


def test_the_graph_sees_in_function_and_relative_imports():
    # the checker itself: a module-level relative import, an in-function one, and a facade
    edges, _ = _graph()
    assert ("rcsim.steady", "rcsim.nonlinear") in edges          # module level, relative
    assert ("rcsim.transient", "rcsim.transient.driver") in edges  # inside __getattr__
    assert ("rcsim.scenario", "rcsim.transient") in edges          # runs the package's __init__
    assert ("rcsim.network", "rcsim.transient") not in edges      # the facade Network.simulate
