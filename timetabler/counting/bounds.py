"""Rigorous bounds and an unbiased estimate when the exact count is out of budget.

upper bound — a chordal *subgraph* ``H ⊆ G``
    Removing clashes never removes a timetable, so ``P(G, k) ≤ P(H, k)``. ``H`` keeps, for
    each vertex in turn, only the edges to a clique among its earlier neighbours, so the
    order is a perfect elimination order of ``H`` read backwards and
    ``P(H, k) = Π_v (k − |C_v|)`` (Fulkerson & Gross 1965; Read 1968).
lower bound — a chordal *supergraph* ``H ⊇ G`` and a found colouring
    Adding clashes never adds one, so ``P(G, k) ≥ P(H, k)`` for the fill-in graph of the
    elimination game (Parter 1961; Rose 1970) with ``P(H, k) = Π_v (k − d_v)``, ``d_v``
    the neighbours of ``v`` still present when it is eliminated. Also any proper
    colouring with ``c ≤ k`` colours gives ``k(k−1)…(k−c+1)`` timetables by relabelling
    its groups, so that falling factorial is a lower bound too (DSATUR, Brélaz 1979).
estimate — Knuth's random probe (Knuth, "Estimating the efficiency of backtrack
programs", Math. Comp. 29 (1975))
    Colour the vertices in a fixed order, each time picking uniformly one of the ``c_v``
    colours its earlier neighbours leave free; the product ``Π c_v`` (0 at a dead end) is
    an unbiased estimate of the number of leaves of the backtrack tree, which is exactly
    ``P(G, k)``. The mean of many probes and its standard error give the estimate and its
    error bar. Allowed-slot lists (fixed and barred slots) are respected the same way.
"""

from __future__ import annotations

import math
import random
import time
from dataclasses import dataclass
from typing import Sequence

import networkx as nx

from ..dsatur import dsatur
from .polynomial import falling_factorial


def chordal_subgraph_upper(graph: nx.Graph, k: int, order: Sequence | None = None) -> int:
    """``P(H, k)`` for a chordal subgraph ``H`` of ``graph``: an upper bound on ``P(G, k)``."""
    order = list(order) if order is not None else _smallest_last(graph)
    seen: set = set()
    kept: dict = {}
    value = 1
    for v in order:
        earlier = sorted((u for u in graph[v] if u in seen), key=lambda u: -graph.degree(u))
        clique: list = []
        for u in earlier:
            if all(w in kept[u] or u in kept[w] for w in clique):
                clique.append(u)
        kept[v] = set(clique)
        seen.add(v)
        value *= max(k - len(clique), 0)
        if value == 0:
            return 0
    return value


def chordal_supergraph_lower(graph: nx.Graph, k: int, deadline: float | None = None) -> int:
    """``P(H, k)`` for the minimum-degree fill-in ``H ⊇ graph``: a lower bound on ``P(G, k)``.

    The fill-in can grow dense on a large group; when ``deadline`` (``time.monotonic``) passes
    first the bound is given up and 0 returned (always a valid lower bound).
    """
    adj = {v: set(graph[v]) for v in graph}
    value = 1
    while adj:
        if deadline is not None and time.monotonic() > deadline:
            return 0
        v = min(adj, key=lambda x: (len(adj[x]), str(x)))
        nbrs = adj.pop(v)
        value *= max(k - len(nbrs), 0)
        if value == 0:
            return 0
        for u in nbrs:
            adj[u].discard(v)
            adj[u] |= nbrs - {u}
    return value


def dsatur_colour_count(graph: nx.Graph) -> int:
    """Colours used by a DSATUR colouring (Brélaz 1979): an upper bound on the fewest slots."""
    if graph.number_of_nodes() == 0:
        return 0
    return max(dsatur(graph).values())


def colouring_lower(graph: nx.Graph, k: int, colour_count: int | None = None) -> int:
    """``k(k−1)…(k−c+1)`` for a DSATUR colouring with ``c`` colours (0 when ``c > k``)."""
    c = dsatur_colour_count(graph) if colour_count is None else colour_count
    return falling_factorial(k, c) if c <= k else 0


def lower_bound(graph: nx.Graph, k: int, colour_count: int | None = None, deadline: float | None = None) -> int:
    return max(chordal_supergraph_lower(graph, k, deadline), colouring_lower(graph, k, colour_count))


def _smallest_last(graph: nx.Graph) -> list:
    """Reverse of repeatedly removing a vertex of least degree (Matula & Beck 1983)."""
    adj = {v: set(graph[v]) for v in graph}
    out = []
    while adj:
        v = min(adj, key=lambda x: (len(adj[x]), str(x)))
        out.append(v)
        for u in adj.pop(v):
            adj[u].discard(v)
    return out[::-1]


@dataclass
class Estimate:
    """Mean of Knuth probes, as log10, with the relative standard error of the mean."""

    log10: float | None  # None when every probe hit a dead end (the mean is 0)
    relative_error: float | None
    probes: int
    zero: bool


def knuth_estimate(
    graph: nx.Graph,
    k: int,
    *,
    allowed: dict | None = None,
    probes: int = 2000,
    seconds: float = 1.0,
    seed: int = 20260412,
    order: Sequence | None = None,
    strategy: str = "auto",
) -> Estimate:
    """Knuth's unbiased random-probe estimate of the number of colourings with ``k`` colours.

    ``allowed`` maps a vertex to the set of colours (0-based) it may take; others take any.
    Probes first follow a fixed order (fast); when every one of them meets a dead end in
    the first half of the time, the rest of the time goes to probes that always branch on
    the vertex with the fewest free colours (a DSATUR-like choice, Brélaz 1979). The next
    vertex is then a function of the partial colouring alone, so every colouring is still
    exactly one leaf and the estimate stays unbiased; only its samples are reported.
    ``strategy`` ``"static"`` or ``"dynamic"`` forces one kind of probe.
    """
    order = list(order) if order is not None else _smallest_last(graph)
    earlier = {}
    seen: set = set()
    for v in order:
        earlier[v] = [u for u in graph[v] if u in seen]
        seen.add(v)
    rng = random.Random(seed)
    every = list(range(k))
    start = time.monotonic()

    def static_probe() -> int:
        colour: dict = {}
        product = 1
        for v in order:
            used = {colour[u] for u in earlier[v]}
            pool = allowed.get(v, every) if allowed else every
            free = [c for c in pool if c not in used]
            if not free:
                return 0
            product *= len(free)
            colour[v] = free[rng.randrange(len(free))]
        return product

    def dynamic_probe() -> int:
        remaining = list(order)
        pools = {v: set(allowed.get(v, every)) if allowed else set(every) for v in order}
        product = 1
        while remaining:
            v = min(remaining, key=lambda x: len(pools[x]))
            free = sorted(pools[v])
            if not free:
                return 0
            product *= len(free)
            c = free[rng.randrange(len(free))]
            remaining.remove(v)
            for u in graph[v]:
                pools[u].discard(c)
        return product

    if strategy == "dynamic":
        return _summarise(_run_probes(dynamic_probe, probes, start + seconds))
    samples = _run_probes(static_probe, probes, start + (seconds if strategy == "static" else seconds / 2))
    if strategy == "auto" and not any(samples) and graph.number_of_nodes() > 0:
        dynamic = _run_probes(dynamic_probe, probes, start + seconds)
        if any(dynamic):
            samples = dynamic
    return _summarise(samples)


def _run_probes(probe, limit: int, stop: float) -> list[int]:
    out: list[int] = []
    while len(out) < limit and (len(out) < 20 or time.monotonic() < stop):
        out.append(probe())
    return out


def _summarise(samples: list[int]) -> Estimate:
    done = len(samples)
    total = sum(samples)
    if total == 0:
        return Estimate(None, None, done, True)
    total_sq = sum(x * x for x in samples)
    mean_log10 = log10_int(total) - math.log10(done)
    if done > 1:
        # standard error / mean = sqrt((N Σx² − (Σx)²) / (N − 1)) / Σx, in logs (huge ints)
        num = done * total_sq - total * total
        rel = 10 ** (0.5 * (log10_int(num) - math.log10(done - 1)) - log10_int(total)) if num > 0 else 0.0
    else:
        rel = None
    return Estimate(mean_log10, rel, done, False)


def log10_int(x: int) -> float:
    """log10 of a Python int of any size without overflowing a float; -inf for 0.

    >>> round(log10_int(10 ** 400 * 3), 6), log10_int(0)
    (400.477121, -inf)
    """
    if x == 0:
        return -math.inf
    if x < 0:
        raise ValueError("log10 of a negative number")
    bits = x.bit_length()
    if bits < 1000:
        return math.log10(x)
    shift = bits - 64
    return math.log10(x >> shift) + shift * math.log10(2)


# --------------------------------------------------------------------------- bounds for large groups

def degeneracy_lower(graph: nx.Graph, k: int, allowed: dict | None = None) -> int:
    """The greedy product ``Π_v (|L_v| − e_v)`` over a degeneracy order: a lower bound on the count.

    In the reverse of a smallest-last order (Matula & Beck 1983) each event has at most
    the degeneracy of the graph as earlier neighbours ``e_v``. Colouring in that order,
    event ``v`` has at least ``|L_v| − e_v`` free slots (``L_v`` its allowed slots, all
    ``k`` without fixed or barred slots) whatever the earlier events took, so the search
    tree has at least that product of leaves, each a distinct timetable. 0 (no bound)
    as soon as some factor is not positive, which happens when ``k`` does not exceed the
    degeneracy.
    """
    seen: set = set()
    value = 1
    for v in _smallest_last(graph):
        size = k if not allowed or allowed.get(v) is None else len(allowed[v])
        value *= max(size - sum(1 for u in graph[v] if u in seen), 0)
        if value == 0:
            return 0
        seen.add(v)
    return value


def proper_within(graph: nx.Graph, colouring: dict, k: int, allowed: dict | None = None) -> bool:
    """True when ``colouring`` (0-based slots) is a clash-free timetable of ``graph`` within ``k`` slots."""
    if any(v not in colouring or not 0 <= colouring[v] < k for v in graph):
        return False
    if allowed and any(allowed.get(v) is not None and colouring[v] not in allowed[v] for v in graph):
        return False
    return all(colouring[u] != colouring[v] for u, v in graph.edges())


def agreeing_family_lower(graph: nx.Graph, k: int, colouring: dict, allowed: dict | None = None,
                          piece_edges: int = 10, piece_nodes: int = 6, deadline: float | None = None) -> int:
    """Timetables that agree with a found one outside small pieces, counted exactly: a lower bound.

    Take a clash-free timetable ``x`` and split the events into a fixed part ``F`` and
    small pieces (the components of the rest, at most ``piece_nodes`` events and
    ``piece_edges`` clashes each, grown greedily from the events with fewest clashes).
    With ``F`` kept as in ``x``, each piece may take any clash-free assignment from its
    lists ``L_v`` = allowed slots minus the slots of its neighbours in ``F``, and the
    pieces do not touch, so the family has ``Π_pieces N(piece)`` members, each ``N``
    counted exactly by inclusion–exclusion over the piece's clashes (Whitney's expansion
    with lists: ``Σ_{A ⊆ E} (−1)^{|A|} Π_{parts of (V, A)} |∩ L_v|``). Without fixed or
    barred slots every relabelling of the ``c`` slots used on ``F`` gives another such
    family, disjoint from the first (they differ on ``F``), hence the factor
    ``k (k − 1) … (k − c + 1)``. Returns 0 when ``colouring`` is not a clash-free
    timetable within ``k`` slots.
    """
    if not proper_within(graph, colouring, k, allowed):
        return 0
    free: set = set()
    part_of: dict = {}
    parts: dict = {}
    for v in sorted(graph, key=lambda u: (graph.degree(u), str(u))):
        if deadline is not None and time.monotonic() > deadline:
            break
        touching = {part_of[u] for u in graph[v] if u in free}
        nodes = {v}.union(*(parts[p] for p in touching)) if touching else {v}
        edges = sum(1 for a in nodes for b in graph[a] if b in nodes) // 2
        if len(nodes) > piece_nodes or edges > piece_edges:
            continue
        for p in touching:
            del parts[p]
        parts[v] = nodes
        for u in nodes:
            part_of[u] = v
        free.add(v)
    value = 1
    for nodes in parts.values():
        lists = {}
        for v in nodes:
            base = set(range(k)) if not allowed or allowed.get(v) is None else set(allowed[v])
            lists[v] = base - {colouring[u] for u in graph[v] if u not in free}
        value *= _list_colourings(graph.subgraph(nodes), lists)
    if not allowed:
        used = {colouring[v] for v in graph if v not in free}
        value *= falling_factorial(k, len(used))
    return value


def _list_colourings(piece: nx.Graph, lists: dict) -> int:
    """Clash-free assignments of a small graph with a list per vertex (exact).

    Inclusion–exclusion over the clashes, or plain enumeration of all but the last
    vertex, whichever has fewer terms.
    """
    nodes = sorted(piece, key=lambda v: (len(lists[v]), str(v)))
    edges = list(piece.edges())
    leaves = 1
    for v in nodes[:-1]:
        leaves *= max(len(lists[v]), 1)
    if leaves < (1 << len(edges)):
        return _enumerate_lists(piece, nodes, lists)
    total = 0
    for mask in range(1 << len(edges)):
        parent = {v: v for v in piece}

        def find(v):
            while parent[v] != v:
                parent[v] = parent[parent[v]]
                v = parent[v]
            return v

        chosen = 0
        for i, (a, b) in enumerate(edges):
            if mask >> i & 1:
                chosen += 1
                ra, rb = find(a), find(b)
                if ra != rb:
                    parent[ra] = rb
        common: dict = {}
        for v in piece:
            r = find(v)
            common[r] = lists[v] if r not in common else common[r] & lists[v]
        term = 1
        for s in common.values():
            term *= len(s)
            if term == 0:
                break
        total += -term if chosen % 2 else term
    return total


def _enumerate_lists(piece: nx.Graph, nodes: list, lists: dict) -> int:
    colour: dict = {}

    def count(i: int) -> int:
        v = nodes[i]
        options = [c for c in lists[v] if all(colour.get(u) != c for u in piece[v])]
        if i == len(nodes) - 1:
            return len(options)
        total = 0
        for c in options:
            colour[v] = c
            total += count(i + 1)
        colour.pop(v, None)
        return total

    return count(0) if nodes else 1


def clique_product_upper(graph: nx.Graph, k: int, order: Sequence, allowed: dict | None = None,
                         deadline: float | None = None) -> int | None:
    """``Π_v min(|L_v|, k − ω_v)`` with ``ω_v`` a clique among the earlier neighbours: an upper bound.

    Colouring in ``order``, the earlier neighbours of ``v`` that form a clique hold
    distinct slots in every clash-free timetable, so ``v`` has at most ``k − |clique|``
    choices, whatever the earlier events took; the search tree, whose leaves are the
    timetables, has at most the product of these branchings as leaves (the argument of
    the chordal-subgraph bound of Read 1968 without requiring the cliques to nest).
    The cliques are grown greedily with bit sets; any clique gives a valid bound. None
    when ``deadline`` (``time.monotonic``) passes first.
    """
    position = {v: i for i, v in enumerate(order)}
    bit = {v: 1 << i for v, i in position.items()}
    adjacency = {v: sum(bit[u] for u in graph[v]) for v in graph}
    by_bit = {i: v for v, i in position.items()}
    degree = dict(graph.degree())
    value = 1
    placed = 0
    for v in order:
        if deadline is not None and time.monotonic() > deadline:
            return None
        candidates = adjacency[v] & placed
        size = 0
        while candidates:
            best, best_score = None, -1
            if candidates.bit_count() > 24:  # many candidates: the one of highest degree, no rescoring
                rest = candidates
                while rest:
                    low = rest & -rest
                    u = by_bit[low.bit_length() - 1]
                    if degree[u] > best_score:
                        best, best_score = u, degree[u]
                    rest ^= low
            else:
                rest = candidates
                while rest:
                    low = rest & -rest
                    u = by_bit[low.bit_length() - 1]
                    score = (adjacency[u] & candidates).bit_count()
                    if score > best_score:
                        best, best_score = u, score
                    rest ^= low
            size += 1
            candidates &= adjacency[best]
        options = k if not allowed or allowed.get(v) is None else len(allowed[v])
        value *= max(min(options, k - size), 0)
        if value == 0:
            return 0
        placed |= bit[v]
    return value
