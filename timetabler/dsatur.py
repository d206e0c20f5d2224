"""DSATUR: the saturation-degree greedy colouring of Brélaz (1979).

D. Brélaz, "New methods to color the vertices of a graph", Comm. ACM 22 (1979) 251-256.
At each step the uncoloured vertex whose neighbours already use the most distinct colours
(its *saturation*) is coloured with the smallest colour it may take; ties go to the vertex
with most uncoloured neighbours. With per-vertex allowed colours the rule generalises to
"fewest colours still open" (the same order when every vertex may take every colour). Here colours are slot numbers 1, 2, ..., and each vertex
may carry a set of allowed slots (fixed and barred slots, slot lengths), so the same
routine gives the upper bound of :func:`~timetabler.scheduling.fewest_slots` and the
warm start of the CP-SAT model, and the counting engines take its order and colouring
(:func:`dsatur_order`). It sits below both (it needs only networkx).

With ``seats`` the colouring also keeps within seat limits: each limit is a set of vertices
and the seats each colour has for them (a slot's seats, the seats of the rooms of one type
free in a slot), and a vertex takes only a colour with room left for its size in every limit
it belongs to (first fit, in DSATUR's order).
"""

from __future__ import annotations

import heapq
from typing import Hashable, Mapping

import networkx as nx


def dsatur(
    graph: nx.Graph,
    allowed: Mapping[Hashable, set[int]] | None = None,
    *,
    limit: int | None = None,
    sizes: Mapping[Hashable, int] | None = None,
    seats: list[tuple[set, Mapping[int, int]]] | None = None,
    apart: Mapping[Hashable, set] | None = None,
    day: Mapping[int, int] | None = None,
) -> dict[Hashable, int]:
    """Colour ``graph`` with DSATUR; colours are 1, 2, ....

    Parameters
    ----------
    graph
        The conflict graph.
    allowed
        Optional set of allowed colours per vertex (vertices absent from it may take any).
    limit
        Optional largest colour. A vertex that cannot be coloured within its allowed colours
        and the limit is left out of the result (the colouring is then partial).
    sizes, seats
        Optional seat limits: ``seats`` lists (vertices, colour -> seats) pairs; a vertex of
        ``sizes[v]`` seats takes a colour only where every limit holding it has that many left
        (colours missing from a limit's mapping have no limit).
    apart, day
        Optional: vertices that must take colours of different days (``day`` maps colour to day).

    Examples
    --------
    >>> g = nx.cycle_graph(5)
    >>> c = dsatur(g)
    >>> max(c.values()), all(c[u] != c[v] for u, v in g.edges)
    (3, True)
    """
    allowed = allowed or {}
    sizes = sizes or {}
    limits = [(members, caps, {}) for members, caps in (seats or [])]
    mine = {v: [lim for lim in limits if v in lim[0]] for v in graph} if (limits or apart) else {}

    apart = apart or {}
    day = day or {}

    def room_for(v, c: int) -> bool:
        need = sizes.get(v, 0)
        if any(u in colour and day.get(colour[u]) == day.get(c) for u in apart.get(v, ())):
            return False
        return all(c not in caps or used.get(c, 0) + need <= caps[c] for _, caps, used in mine.get(v, ()))

    colour: dict[Hashable, int] = {}
    seen: dict[Hashable, set[int]] = {v: set() for v in graph}
    uncoloured_deg = {v: graph.degree(v) for v in graph}
    order = {v: i for i, v in enumerate(sorted(graph, key=lambda v: (-graph.degree(v), str(v))))}
    big = (limit if limit is not None else graph.number_of_nodes() + 1)

    def free_count(v) -> int:
        # colours still open to v; with no restrictions this is big - saturation, so the order is DSATUR's
        options = allowed.get(v)
        if options is None:
            return big - len(seen[v])
        return sum(1 for x in options if x not in seen[v] and (limit is None or x <= limit))

    heap = [(free_count(v), -uncoloured_deg[v], order[v], v) for v in graph]
    heapq.heapify(heap)
    done: set = set()
    while heap:
        free, negdeg, _, v = heapq.heappop(heap)
        if v in done or free != free_count(v) or -negdeg != uncoloured_deg[v]:
            continue  # stale entry
        done.add(v)
        options = allowed.get(v)
        c = None
        if options is None:
            c = 1
            while c in seen[v] or (mine and not room_for(v, c) and (limit is None or c <= limit)):
                c += 1
            if limit is not None and c > limit:
                c = None
        else:
            free = sorted(x for x in options if x not in seen[v] and (limit is None or x <= limit)
                          and (not mine or room_for(v, x)))
            if free and mine.get(v):  # seat limits: the colour with most seats left, so none fills up first
                c = max(free, key=lambda x: (min(caps.get(x, 0) - used.get(x, 0) for _, caps, used in mine[v]), -x))
            else:
                c = free[0] if free else None
        if c is not None:
            for _, caps, used in mine.get(v, ()):
                used[c] = used.get(c, 0) + sizes.get(v, 0)
        for u in graph[v]:
            if u in done:
                continue
            uncoloured_deg[u] -= 1
            if c is not None:
                seen[u].add(c)
            heapq.heappush(heap, (free_count(u), -uncoloured_deg[u], order[u], u))
        if c is not None:
            colour[v] = c
    return colour


def dsatur_order(graph: nx.Graph) -> tuple[list, dict]:
    """DSATUR's order of the vertices of ``graph`` and its colouring with 0-based colours.

    >>> order, colours = dsatur_order(nx.cycle_graph(5))
    >>> len(order), max(colours.values()) + 1
    (5, 3)
    """
    colour = dsatur(graph)
    return list(colour), {v: c - 1 for v, c in colour.items()}
