"""The order in which the evaluator computes declarations, and the groups of lines that refer to
each other through a lag (a loan balance, a loss carried forward), which it steps through the years.

The dependency graph is read from the formulas; its strongly connected components (Tarjan's
algorithm) come in dependency order, and the members of a component are ordered so that a same-year
reference is computed before it is read.
"""

from __future__ import annotations

from tea.model import expr as E
from tea.model.declare import Def, Model


def edges(model: Model, d: Def) -> list[tuple[tuple[str, str], bool]]:
    """(key, lagged) for each reference of a formula: lagged when it sits under a lag of >= 1 year."""
    out: list[tuple[tuple[str, str], bool]] = []

    def visit(n: E.Node, lagged: bool) -> None:
        if isinstance(n, E.Ref):
            out.append((model.get(n).key, lagged))
            return
        if isinstance(n, E.Lag):
            visit(n.x, lagged or (isinstance(n.k, int) and n.k >= 1))
            visit(n.fill, lagged)
            if isinstance(n.k, E.Node):
                visit(n.k, lagged)
            return
        for c in (n.args if isinstance(n, E.Method) else E.children(n)):
            visit(c, lagged)

    visit(d.expr, False)
    return out


def components(model: Model, defs: list[Def]) -> list[list[Def]]:
    """Strongly connected components in dependency order (Tarjan's algorithm, iterative)."""
    by_key = {d.key: d for d in defs}
    graph = {d.key: [k for k, _ in edges(model, d) if k in by_key] for d in defs}
    index: dict = {}
    low: dict = {}
    on: set = set()
    stack: list = []
    out: list[list[Def]] = []
    counter = 0
    for root in graph:
        if root in index:
            continue
        work = [(root, iter(graph[root]))]
        index[root] = low[root] = counter
        counter += 1
        stack.append(root)
        on.add(root)
        while work:
            v, it = work[-1]
            advanced = False
            for w in it:
                if w not in index:
                    index[w] = low[w] = counter
                    counter += 1
                    stack.append(w)
                    on.add(w)
                    work.append((w, iter(graph[w])))
                    advanced = True
                    break
                if w in on:
                    low[v] = min(low[v], index[w])
            if advanced:
                continue
            work.pop()
            if work:
                low[work[-1][0]] = min(low[work[-1][0]], low[v])
            if low[v] == index[v]:
                comp = []
                while True:
                    w = stack.pop()
                    on.discard(w)
                    comp.append(by_key[w])
                    if w == v:
                        break
                out.append(comp)
    return out


def same_year_order(model: Model, comp: list[Def]) -> list[Def]:
    """Members of a recursive group ordered so that same-year references come first."""
    keys = {d.key for d in comp}
    deps = {d.key: {k for k, lagged in edges(model, d) if k in keys and not lagged} for d in comp}
    order: list[Def] = []
    done: set = set()
    by_key = {d.key: d for d in comp}
    while len(order) < len(comp):
        ready = [k for k in deps if k not in done and deps[k] <= done]
        if not ready:
            names = ", ".join(sorted(k[1] for k in deps if k not in done))
            raise ValueError(f"these formulas refer to each other in the same year (no lag between them): {names}")
        for k in sorted(ready, key=lambda k: [d.key for d in comp].index(k)):
            order.append(by_key[k])
            done.add(k)
    return order


__all__ = ["edges", "components", "same_year_order"]
