"""The package's imports have no circles (issue 13: the layers only point down).

grimp (import-linter's import graph, installed with the test extras) lists every import of every
module of siting, also those inside functions; a circle is a strongly connected group of two or
more modules. The layer rules themselves are import-linter's contracts in pyproject.toml.
"""

import grimp


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
    graph = grimp.build_graph("siting")
    modules = {m for m in graph.modules if m == "siting" or m.startswith("siting.")}
    edges = {m: set(graph.find_modules_directly_imported_by(m)) & modules for m in modules}
    assert _circles(edges) == []
