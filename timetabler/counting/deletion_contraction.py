"""Deletion–contraction with memoisation: the slow, obviously correct oracle for tests.

``P(G, k) = P(G − e, k) − P(G / e, k)`` for any edge ``e`` (Whitney 1932; Birkhoff &
Lewis 1946), with ``P`` of an edgeless graph on ``n`` vertices equal to ``k^n``. Vertices
are frozensets of the original vertices merged into them, so a graph met twice on the
way down (the same merged vertices, the same edges) is solved once. It grows like
φ^(n+m); use it on graphs of a dozen vertices, not more.
"""

from __future__ import annotations

import networkx as nx

from .budget import Budget, UNLIMITED
from .polynomial import edgeless_power


def deletion_contraction_polynomial(graph: nx.Graph, budget: Budget = UNLIMITED) -> list[int]:
    """Power-basis coefficients of the chromatic polynomial by deletion–contraction.

    Examples
    --------
    >>> import networkx as nx
    >>> deletion_contraction_polynomial(nx.path_graph(3))
    [0, 1, -2, 1]
    """
    vertices = frozenset(frozenset([v]) for v in graph)
    edges = frozenset(frozenset([frozenset([u]), frozenset([v])]) for u, v in graph.edges() if u != v)
    memo: dict = {}

    def solve(vs: frozenset, es: frozenset) -> list[int]:
        if not es:
            return edgeless_power(len(vs))
        key = (vs, es)
        hit = memo.get(key)
        if hit is not None:
            return hit
        budget.check_time("deletion–contraction")
        edge = next(iter(es))
        a, b = tuple(edge)
        deleted = solve(vs, es - {edge})
        merged = a | b
        new_es = set()
        for e in es:
            if e == edge:
                continue
            x, y = tuple(e)
            x = merged if x in (a, b) else x
            y = merged if y in (a, b) else y
            if x != y:
                new_es.add(frozenset([x, y]))
        contracted = solve((vs - {a, b}) | {merged}, frozenset(new_es))
        out = [0] * max(len(deleted), len(contracted))
        for i, c in enumerate(deleted):
            out[i] += c
        for i, c in enumerate(contracted):
            out[i] -= c
        while len(out) > 1 and out[-1] == 0:
            out.pop()
        memo[key] = out
        return out

    return solve(vertices, edges)
