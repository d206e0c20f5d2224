"""K slots for a conflict graph whose events fall into groups of K that pairwise clash.

When the events split into disjoint cliques of exactly K events each (K being the number
of slots tried), every slot of a clash-free timetable takes exactly one event of each
clique: the events of one slot form a *transversal*, an independent set with one event from
every clique. A timetable with K slots is then a partition of the events into K
transversals. This module lists the transversals by backtracking over the cliques (one
event from each, none clashing with those already taken) and, when there are not too many,
looks for an exact cover of the events by them: Knuth's Algorithm X first on short lists,
then CP-SAT.

This is the set-partitioning formulation of colouring (A. Mehrotra and M. A. Trick, "A
column generation approach for graph coloring", INFORMS J. Computing 8 (1996) 344-354),
with every column listed instead of priced, which the clique partition makes affordable.
It decides graphs where a search slot by slot is lost in symmetry: on the 11 x 11 queen
graph (DIMACS queen11_11) it finds 11 slots from 2,680 transversals in 0.3 s, where CP-SAT
on the slot model and tabu search find none in a minute, and it proves queen10_10 needs
more than 10 in 0.2 s (CP-SAT on the slot model: 43 s).
"""

from __future__ import annotations

import time
from dataclasses import dataclass
from typing import Callable, Hashable, Sequence

import networkx as nx
from ortools.sat.python import cp_model


def clique_partition(graph: nx.Graph, k: int, cliques: Sequence[Sequence[Hashable]]) -> list[list[Hashable]] | None:
    """Disjoint cliques of exactly ``k`` events covering every event, chosen among ``cliques``, or None.

    Each clique of size ``k`` in turn seeds a greedy choice of disjoint ones; the first
    choice that covers the graph is returned.

    Examples
    --------
    >>> g = nx.complete_graph(3)
    >>> g.add_edges_from([(3, 4), (4, 5), (3, 5), (0, 3)])
    >>> clique_partition(g, 3, [[0, 1, 2], [3, 4, 5], [0, 3]])
    [[0, 1, 2], [3, 4, 5]]
    """
    n = graph.number_of_nodes()
    if k < 1 or n == 0 or n % k:
        return None
    tight = [frozenset(c) for c in cliques if len(c) == k]
    for seed in tight:
        chosen, used = [seed], set(seed)
        for c in tight:
            if not c & used:
                chosen.append(c)
                used |= c
        if len(used) == n:
            return [sorted(c, key=str) for c in chosen]
    return None


@dataclass
class TransversalColouring:
    """What the transversal method settled: a timetable (event -> slot 1..k), or a proof that
    none with k slots exists (``impossible``), or neither (``colouring`` None, not impossible)."""

    colouring: dict[Hashable, int] | None = None
    impossible: bool = False
    transversals: int | None = None  # how many were listed (None: the listing did not finish)


def colour_by_transversals(
    graph: nx.Graph,
    k: int,
    cliques: Sequence[Sequence[Hashable]],
    *,
    seconds: float,
    configure: Callable[[cp_model.CpSolver, float], None] | None = None,
    max_sets: int = 200_000,
    deterministic: bool = False,
) -> TransversalColouring:
    """Decide whether the events of ``graph`` fit in ``k`` slots by the transversal method.

    Settles nothing when the events do not split into cliques of ``k`` (see
    :func:`clique_partition`), when there are more than ``max_sets`` transversals, or when
    the time runs out. When every transversal was listed and CP-SAT proves that no ``k`` of
    them cover the events, no timetable with ``k`` slots exists (``impossible``).
    ``configure(solver, seconds)`` sets CP-SAT's parameters (workers, seed, time); without it
    CP-SAT gets ``seconds`` and its defaults. With ``deterministic`` the listing stops on
    ``max_sets`` only, not on the clock.

    Examples
    --------
    >>> c = colour_by_transversals(nx.cycle_graph(4), 2, [[0, 1], [1, 2], [2, 3], [3, 0]], seconds=5)
    >>> sorted(c.colouring.items()), c.transversals
    ([(0, 1), (1, 2), (2, 1), (3, 2)], 2)
    >>> colour_by_transversals(nx.cycle_graph(6), 2, [[0, 1], [2, 3], [4, 5]], seconds=5).impossible
    False
    """
    start = time.perf_counter()
    blocks = clique_partition(graph, k, cliques)
    if blocks is None:
        return TransversalColouring()
    deadline = None if deterministic else start + seconds / 2  # at most half the time for the listing
    sets = transversals(graph, blocks, max_sets=max_sets, deadline=deadline,
                        max_steps=2_000_000 if deterministic else None)
    if sets is None:
        return TransversalColouring()
    if len(sets) < k:  # every slot takes a different transversal
        return TransversalColouring(impossible=True, transversals=len(sets))
    # Algorithm X first on short listings (queen11_11, 2,680 transversals: 0.3 s; CP-SAT alone: 8 s), CP-SAT
    # with what is left; on long ones each node of Algorithm X scans them all (queen8_12, 195,270: CP-SAT
    # alone 9 s, Algorithm X first 17 s), so CP-SAT goes alone
    picked, finished = None, False
    if len(sets) <= 50_000:
        now = time.perf_counter()
        x_deadline = None if deterministic else now + max(0.05, seconds - (now - start)) / 3
        picked, finished = exact_cover(sets, list(graph), deadline=x_deadline,
                                       max_steps=20_000 if deterministic else None)
    if picked is not None:
        return TransversalColouring({v: slot for slot, j in enumerate(picked, start=1) for v in sets[j]},
                                    transversals=len(sets))
    if finished:
        return TransversalColouring(impossible=True, transversals=len(sets))
    model = cp_model.CpModel()
    chosen = [model.new_bool_var(f"transversal[{j}]") for j in range(len(sets))]
    covering: dict[Hashable, list[cp_model.IntVar]] = {v: [] for v in graph}
    for literal, events in zip(chosen, sets):
        for v in events:
            covering[v].append(literal)
    for literals in covering.values():
        model.add_exactly_one(literals)
    solver = cp_model.CpSolver()
    solver.parameters.catch_sigint_signal = False  # Ctrl-C and SIGTERM stay the caller's (see cpsat_run.set_parameters)
    left = max(0.05, seconds - (time.perf_counter() - start))
    if configure is not None:
        configure(solver, left)
    else:
        solver.parameters.max_time_in_seconds = left
    status = solver.solve(model)
    if status == cp_model.INFEASIBLE:
        return TransversalColouring(impossible=True, transversals=len(sets))
    if status not in (cp_model.OPTIMAL, cp_model.FEASIBLE):
        return TransversalColouring(transversals=len(sets))
    taken = [events for literal, events in zip(chosen, sets) if solver.boolean_value(literal)]
    return TransversalColouring({v: slot for slot, events in enumerate(taken, start=1) for v in events},
                                transversals=len(sets))


def transversals(graph: nx.Graph, blocks: Sequence[Sequence[Hashable]], *, max_sets: int = 200_000,
                 deadline: float | None = None, max_steps: int | None = None) -> list[frozenset] | None:
    """Every independent set of ``graph`` with exactly one event from each of ``blocks``.

    None when there are more than ``max_sets`` of them, the clock passes ``deadline`` (a
    ``time.perf_counter()`` value) or the search takes more than ``max_steps`` steps. Backtracking over the blocks in order, each event
    kept only when it clashes with none already taken (sets of events as bits of an int).

    Examples
    --------
    >>> sorted(sorted(t) for t in transversals(nx.cycle_graph(4), [[0, 1], [2, 3]]))
    [[0, 2], [1, 3]]
    """
    nodes = [v for block in blocks for v in block]
    index = {v: i for i, v in enumerate(nodes)}
    clashes = [0] * len(nodes)  # bit i set: the event clashes with nodes[i]
    for v in nodes:
        for u in graph[v]:
            if u in index:
                clashes[index[v]] |= 1 << index[u]
    members = [[index[v] for v in block] for block in blocks]
    found: list[int] = []
    stopped = False
    steps = 0

    def extend(depth: int, banned: int, taken: int) -> None:
        nonlocal stopped, steps
        steps += 1
        if stopped or (max_steps is not None and steps > max_steps) or (
                deadline is not None and steps % 4096 == 0 and time.perf_counter() > deadline):
            stopped = True
            return
        if depth == len(members):
            found.append(taken)
            stopped = len(found) > max_sets
            return
        for i in members[depth]:
            if not banned >> i & 1:
                extend(depth + 1, banned | clashes[i], taken | 1 << i)

    extend(0, 0, 0)
    if stopped:
        return None
    return [frozenset(v for i, v in enumerate(nodes) if bits >> i & 1) for bits in found]


def exact_cover(sets: Sequence[frozenset], items: Sequence[Hashable], *, deadline: float | None = None,
                max_steps: int | None = None) -> tuple[list[int] | None, bool]:
    """Indices of disjoint ``sets`` covering every one of ``items``, by Knuth's Algorithm X.

    D. E. Knuth, "Dancing links", in Millennial Perspectives in Computer Science (2000)
    187-214: branch on the uncovered item in fewest live sets, try each such set, drop every
    set that meets it. Here the live sets are a numpy mask over a sets x items matrix rather
    than linked lists. Returns ``(indices, True)`` when found, ``(None, True)`` when the
    search finished without one (no exact cover exists), ``(None, False)`` when it stopped
    at ``deadline`` (a ``time.perf_counter()`` value) or after ``max_steps`` nodes.

    Examples
    --------
    >>> exact_cover([frozenset("ab"), frozenset("bc"), frozenset("c"), frozenset("a")], "abc")
    ([0, 2], True)
    >>> exact_cover([frozenset("ab"), frozenset("bc")], "abc")
    (None, True)
    """
    import numpy as np

    index = {v: i for i, v in enumerate(items)}
    member = np.zeros((len(sets), len(items)), dtype=bool)
    for j, events in enumerate(sets):
        member[j, [index[v] for v in events]] = True
    items_of = [np.flatnonzero(row) for row in member]
    never = len(sets) + 1
    steps = 0

    class Stop(Exception):
        pass

    def search(live: "np.ndarray", uncovered: "np.ndarray", taken: list[int]) -> list[int] | None:
        nonlocal steps
        steps += 1
        if (max_steps is not None and steps > max_steps) or (
                deadline is not None and steps % 64 == 0 and time.perf_counter() > deadline):
            raise Stop
        if not uncovered.any():
            return taken
        counts = np.where(uncovered, member[live].sum(axis=0), never)
        item = int(counts.argmin())
        if counts[item] == 0:
            return None
        for j in np.flatnonzero(live & member[:, item]):
            mine = items_of[j]
            rest = uncovered.copy()
            rest[mine] = False
            found = search(live & ~member[:, mine].any(axis=1), rest, taken + [int(j)])
            if found is not None:
                return found
        return None

    try:
        return search(np.ones(len(sets), dtype=bool), np.ones(len(items), dtype=bool), []), True
    except Stop:
        return None, False
