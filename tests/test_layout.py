"""The package's layout: no import circles, nothing imports upward, no module over 500 lines.

The rule (DEVELOPERS.md, "Import rule"): the stages are ranked, bottom to top,
errors and constants (and the data packages linedata/, profiles/) -> molecular/ ->
absorption/ -> radiation/ -> forcing/ -> api (api.py, api_lines.py) -> batch
(batch_jobs.py, batch_runner.py, batch.py) -> cli/. A module imports only from its
own rank or below, never from above. io/ sits beside the stages: an io module may
import errors, constants, other io modules and the stage objects it reads or writes
(molecular/ to forcing/), never api, batch or cli; a stage may import the io module
that owns its file format. On top of the ranks, the module import graph has no
cycle at all, within a stage too. Every import counts: at module level and inside
functions (lazy imports), relative and absolute. The package root
(``specforce/__init__.py``, the public face, whose names are imported on first use)
is above everything, and no module inside imports it.
"""

from __future__ import annotations

import ast
import pathlib

import pytest

PACKAGE = pathlib.Path(__file__).resolve().parent.parent / "specforce"
MAX_LINES = 500

# rank of each stage, bottom to top; io (None) is beside the stages
RANKS = {"errors": 0, "constants": 0, "_version": 0, "cache": 0, "_fastmath": 0, "linedata": 0, "profiles": 0, "molecular": 1,
         "absorption": 2, "radiation": 3, "kdist": 3, "forcing": 4, "api": 5, "api_lines": 5,
         "api_kdist": 5, "batch_jobs": 6,
         "batch_runner": 6, "batch": 6, "cli": 7}
IO_CEILING = RANKS["forcing"]  # the highest stage an io module may import


def _modules(package=PACKAGE):
    """{dotted name: (path, is package)} of every module under ``package``."""
    found = {}
    for path in sorted(package.rglob("*.py")):
        parts = list(path.relative_to(package.parent).with_suffix("").parts)
        is_package = parts[-1] == "__init__"
        if is_package:
            parts = parts[:-1]
        found[".".join(parts)] = (path, is_package)
    return found


def _owner(name, modules):
    """The module ``name`` refers to: itself, or the longest prefix that is a module."""
    while name and name not in modules:
        name = name.rpartition(".")[0]
    return name or None


def import_graph(package=PACKAGE):
    """{module: {imported module: first line}} over every import statement, at any depth.

    ``from pkg import name`` counts as an import of ``pkg.name`` where that is a module
    (``from . import _kernels``), else of ``pkg``. ``importlib.import_module("...")``
    with a constant name counts too.
    """
    modules = _modules(package)
    root = package.name
    graph = {}
    for name, (path, is_package) in modules.items():
        base = name if is_package else name.rpartition(".")[0]
        edges = {}

        def add(target, line):
            target = _owner(target, modules)
            if target and target != name:
                edges.setdefault(target, line)

        for node in ast.walk(ast.parse(path.read_text(), str(path))):
            if isinstance(node, ast.Import):
                for alias in node.names:
                    if alias.name.split(".")[0] == root:
                        add(alias.name, node.lineno)
            elif isinstance(node, ast.ImportFrom):
                if node.level:
                    anchor = base
                    for _ in range(node.level - 1):
                        anchor = anchor.rpartition(".")[0]
                    target = f"{anchor}.{node.module}" if node.module else anchor
                else:
                    target = node.module or ""
                if target.split(".")[0] != root:
                    continue
                for alias in node.names:
                    full = f"{target}.{alias.name}"
                    add(full if full in modules else target, node.lineno)
            elif (isinstance(node, ast.Call) and getattr(node.func, "attr", getattr(node.func, "id", None))
                  == "import_module" and node.args and isinstance(node.args[0], ast.Constant)
                  and str(node.args[0].value).split(".")[0] == root):
                add(node.args[0].value, node.lineno)
        graph[name] = edges
    return graph


def strongly_connected(graph):
    """The strongly connected components of more than one module (Tarjan, iterative)."""
    index, low, stack, on_stack, found = {}, {}, [], set(), []
    counter = 0
    for start in graph:
        if start in index:
            continue
        work = [(start, iter(graph.get(start, ())))]
        index[start] = low[start] = counter
        counter += 1
        stack.append(start)
        on_stack.add(start)
        while work:
            node, children = work[-1]
            for child in children:
                if child not in index:
                    index[child] = low[child] = counter
                    counter += 1
                    stack.append(child)
                    on_stack.add(child)
                    work.append((child, iter(graph.get(child, ()))))
                    break
                if child in on_stack:
                    low[node] = min(low[node], index[child])
            else:
                work.pop()
                if work:
                    low[work[-1][0]] = min(low[work[-1][0]], low[node])
                if low[node] == index[node]:
                    component = []
                    while True:
                        member = stack.pop()
                        on_stack.discard(member)
                        component.append(member)
                        if member == node:
                            break
                    if len(component) > 1:
                        found.append(sorted(component))
    return found


def _stage(module):
    """The stage of a dotted module name: the first part below the package root."""
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else None


def upward_imports(graph, root=PACKAGE.name):
    """["a -> b (line n): why"] for every import the rule forbids."""
    bad = []
    for module, edges in graph.items():
        src = _stage(module)
        for target, line in edges.items():
            dst = _stage(target)
            where = f"{module} -> {target} (line {line})"
            if target == root:
                bad.append(f"{where}: the package root is the public face; import the module that holds the name")
            elif src is None or dst == "io" and src == "io":
                continue
            elif src not in RANKS and src != "io" or dst not in RANKS and dst != "io":
                bad.append(f"{where}: {src if src not in RANKS and src != 'io' else dst} has no rank; add it to "
                           f"RANKS here and to the import rule in DEVELOPERS.md")
            elif src == "io":
                if RANKS[dst] > IO_CEILING:
                    bad.append(f"{where}: io modules may import the stages up to forcing/, not {dst}")
            elif dst != "io" and RANKS[dst] > RANKS[src]:
                bad.append(f"{where}: {src} (rank {RANKS[src]}) imports upward from {dst} (rank {RANKS[dst]})")
    return sorted(bad)


def test_the_import_graph_sees_every_kind_of_import(tmp_path):
    # a package of its own with one circle through a lazy, relative import inside a function and
    # one through an absolute import: the check must find both, and nothing in a clean part
    pkg = tmp_path / "specforce"
    (pkg / "stage").mkdir(parents=True)
    (pkg / "__init__.py").write_text("")
    (pkg / "stage" / "__init__.py").write_text("")
    (pkg / "stage" / "a.py").write_text("from . import b\n")
    (pkg / "stage" / "b.py").write_text("def f():\n    from .a import x\n")
    (pkg / "c.py").write_text("import specforce.d\n")
    (pkg / "d.py").write_text("def g():\n    import importlib\n    return importlib.import_module('specforce.c')\n")
    (pkg / "e.py").write_text("from .stage import a\n")
    graph = import_graph(pkg)
    assert graph["specforce.stage.b"] == {"specforce.stage.a": 2}
    assert sorted(strongly_connected(graph)) == [["specforce.c", "specforce.d"],
                                                 ["specforce.stage.a", "specforce.stage.b"]]


def test_an_upward_import_is_named():
    graph = {"specforce.molecular.lines": {"specforce.radiation.longwave": 7},
             "specforce.io.results": {"specforce.api": 3},
             "specforce.radiation.column": {"specforce.io.linestore": 1, "specforce.absorption.linesum": 2},
             "specforce.io.plots": {"specforce": 4}}
    bad = upward_imports(graph)
    assert len(bad) == 3  # the radiation stage may read the io module of its file format
    assert any(b.startswith("specforce.molecular.lines -> specforce.radiation.longwave (line 7)")
               and "molecular (rank 1) imports upward from radiation (rank 3)" in b for b in bad)
    assert any(b.startswith("specforce.io.results -> specforce.api") and "not api" in b for b in bad)
    assert any(b.startswith("specforce.io.plots -> specforce (line 4)") and "package root" in b for b in bad)


def test_no_import_circles():
    circles = strongly_connected(import_graph())
    assert circles == [], "import circles (each line a set of modules that import each other): " + "; ".join(
        " <-> ".join(c) for c in circles)


def test_nothing_imports_upward():
    bad = upward_imports(import_graph())
    assert bad == [], "imports against the rule in DEVELOPERS.md:\n" + "\n".join(bad)


@pytest.mark.parametrize("path", sorted(PACKAGE.rglob("*.py")), ids=lambda p: str(p.relative_to(PACKAGE.parent)))
def test_no_module_is_over_500_lines(path):
    with open(path, encoding="utf-8") as fh:
        lines = sum(1 for _ in fh)
    assert lines <= MAX_LINES, (f"{path.relative_to(PACKAGE.parent)} has {lines} lines (at most {MAX_LINES}); "
                                f"split it by responsibility into modules of the same stage")
