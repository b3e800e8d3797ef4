"""The package's imports have no circles (issue 13: the layers only point down).

grimp (import-linter's import graph, installed with the test extras) lists every import of every
module of siting, also those inside functions; a circle is a strongly connected group of two or
more modules. The layer rules themselves are import-linter's contracts in pyproject.toml.
"""

import grimp

#: grimp's cache is off: by default it writes .grimp_cache/ into the current folder (the
#: checkout), where parallel test workers, lint-imports and other runs would write the same
#: files at once; the graph is built from the sources every time (a tenth of a second).
NO_CACHE = None


def _circles(edges: dict[str, set[str]]) -> list[list[str]]:
    """Strongly connected groups of two or more modules (Tarjan's algorithm)."""
    index: dict[str, int] = {}
    low: dict[str, int] = {}
    stack: list[str] = []
    on_stack: set[str] = set()
    found: list[list[str]] = []

    def visit(v: str) -> None:
        index[v] = low[v] = len(index)
        stack.append(v)
        on_stack.add(v)
        for w in edges[v]:
            if w not in index:
                visit(w)
                low[v] = min(low[v], low[w])
            elif w in on_stack:
                low[v] = min(low[v], index[w])
        if low[v] == index[v]:
            group = []
            while True:
                w = stack.pop()
                on_stack.discard(w)
                group.append(w)
                if w == v:
                    break
            if len(group) > 1:
                found.append(sorted(group))

    for v in edges:
        if v not in index:
            visit(v)
    return found


def test_the_finder_sees_a_circle():
    """The finder itself: a -> b -> c -> a is one circle, d alone is none (by construction)."""
    edges = {"a": {"b"}, "b": {"c"}, "c": {"a"}, "d": {"a"}}
    assert _circles(edges) == [["a", "b", "c"]]


def test_no_module_of_siting_imports_itself_round_a_circle():
    graph = grimp.build_graph("siting", cache_dir=NO_CACHE)
    modules = {m for m in graph.modules if m == "siting" or m.startswith("siting.")}
    edges = {m: set(graph.find_modules_directly_imported_by(m)) & modules for m in modules}
    assert _circles(edges) == []


def test_no_circle_with_type_checking_imports_left_out_either():
    """The layers contract leaves out imports made for type checkers only (a writer names a run's
    result type); the run-time graph without them has no circle either."""
    graph = grimp.build_graph("siting", exclude_type_checking_imports=True, cache_dir=NO_CACHE)
    modules = {m for m in graph.modules if m == "siting" or m.startswith("siting.")}
    edges = {m: set(graph.find_modules_directly_imported_by(m)) & modules for m in modules}
    assert _circles(edges) == []


def _nested_siting_imports(source: str) -> list[int]:
    """Line numbers of imports of siting modules made inside a function or class body."""
    import ast

    found = []

    def visit(node, nested: bool) -> None:
        for child in ast.iter_child_nodes(node):
            inner = nested or isinstance(
                child, (ast.FunctionDef, ast.AsyncFunctionDef, ast.ClassDef)
            )
            if (
                nested
                and isinstance(child, ast.ImportFrom)
                and (child.module or "").startswith("siting")
            ):
                found.append(child.lineno)
            if (
                nested
                and isinstance(child, ast.Import)
                and any(a.name.startswith("siting") for a in child.names)
            ):
                found.append(child.lineno)
            visit(child, inner)

    visit(ast.parse(source), False)
    return found


def test_the_nested_import_finder_sees_one():
    """The finder itself, on a made-up module (by construction)."""
    source = "import os\nfrom siting import errors\ndef f():\n    from siting.x import y\n"
    assert _nested_siting_imports(source) == [4]


def test_no_module_imports_a_siting_module_inside_a_function():
    """Issue 13 item 2: no import hidden inside a function (to dodge a circle or otherwise); every
    module of siting imports the modules it uses at its top, where the layers contract sees them.
    The CLI picks the module of the command given by name (importlib), which is not an import
    statement and keeps `siting --help` from loading the numerical stack."""
    from pathlib import Path

    package = Path(__file__).resolve().parents[1] / "siting"
    nested = {
        str(path.relative_to(package)): lines
        for path in sorted(package.rglob("*.py"))
        if "_assets" not in path.parts and (lines := _nested_siting_imports(path.read_text()))
    }
    assert nested == {}
