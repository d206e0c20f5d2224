"""TabuCol: tabu search for a clash-free timetable with exactly K slots (plain clashes only).

A. Hertz and D. de Werra, "Using tabu search techniques for graph coloring", Computing 39
(1987) 345-351, with the tenure rule of P. Galinier and J.-K. Hao, "Hybrid evolutionary
algorithms for graph coloring", J. Combinatorial Optimization 3 (1999) 379-397: a move
gives a clashing event another slot; the move back is forbidden for ``0.6 * clashes +
random(0..9)`` iterations unless it reaches a new best. ``gamma[v][s]`` counts v's
neighbours in slot s, so every move is evaluated in O(1) and applied in O(degree).

Used by :func:`~timetabler.scheduling.fewest_slots` to tighten the DSATUR upper bound
before CP-SAT is asked to close the gap.
"""

from __future__ import annotations

import random
import time
from typing import Hashable

import networkx as nx


def tabucol(
    graph: nx.Graph,
    k: int,
    *,
    start: dict[Hashable, int] | None = None,
    seconds: float = 5.0,
    max_moves: int | None = None,
    seed: int = 0,
) -> dict[Hashable, int] | None:
    """A clash-free assignment of the vertices of ``graph`` to slots 1..k, or None if none was found.

    Examples
    --------
    >>> c = tabucol(nx.cycle_graph(7), 3, seconds=2)
    >>> c is not None and all(c[u] != c[v] for u, v in nx.cycle_graph(7).edges)
    True
    """
    nodes = list(graph.nodes)
    n = len(nodes)
    if n == 0:
        return {}
    if k < 1:
        return None
    index = {v: i for i, v in enumerate(nodes)}
    adj = [[index[u] for u in graph[v] if u != v] for v in nodes]
    rng = random.Random(seed)
    colour = [0] * n
    for i, v in enumerate(nodes):
        s = (start or {}).get(v)
        colour[i] = (s - 1) if s is not None and 1 <= s <= k else rng.randrange(k)
    gamma = [[0] * k for _ in range(n)]
    for i in range(n):
        for j in adj[i]:
            gamma[i][colour[j]] += 1
    clashes = sum(gamma[i][colour[i]] for i in range(n)) // 2
    best = clashes
    tabu = [[0] * k for _ in range(n)]
    conflicting = {i for i in range(n) if gamma[i][colour[i]] > 0}
    deadline = time.perf_counter() + seconds
    it = 0
    while clashes > 0:
        it += 1
        if max_moves is not None and it > max_moves:
            return None
        if it % 256 == 0 and time.perf_counter() > deadline:
            return None
        best_delta = None
        moves: list[tuple[int, int]] = []
        for i in conflicting:
            ci = colour[i]
            gi = gamma[i]
            own = gi[ci]
            for s in range(k):
                if s == ci:
                    continue
                delta = gi[s] - own
                if tabu[i][s] > it and clashes + delta >= best:
                    continue  # tabu, and not a new best (aspiration)
                if best_delta is None or delta < best_delta:
                    best_delta, moves = delta, [(i, s)]
                elif delta == best_delta:
                    moves.append((i, s))
        if not moves:
            continue
        i, s = moves[rng.randrange(len(moves))]
        old = colour[i]
        colour[i] = s
        for j in adj[i]:
            gamma[j][old] -= 1
            gamma[j][s] += 1
            if gamma[j][colour[j]] > 0:
                conflicting.add(j)
            else:
                conflicting.discard(j)
        if gamma[i][s] > 0:
            conflicting.add(i)
        else:
            conflicting.discard(i)
        clashes += best_delta
        tabu[i][old] = it + int(0.6 * clashes) + rng.randrange(10)
        if clashes < best:
            best = clashes
    return {v: colour[i] + 1 for i, v in enumerate(nodes)}
