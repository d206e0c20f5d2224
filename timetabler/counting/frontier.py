"""Frontier (vertex-elimination) dynamic programmes for sparse graphs.

Vertices are introduced one at a time in a fixed order; a vertex stays on the *frontier*
from its introduction until its last neighbour has been introduced. A DP state is a set
partition of the frontier, stored as a restricted-growth string in a ``bytes`` object
(first occurrences of the block labels 0, 1, 2, … in increasing order), so relabelling is
``bytes.translate`` and canonical forms are unique. The cost grows with the number of
partitions of the widest frontier, so a good order (:func:`frontier_order`, a greedy
minimum-frontier heuristic tried from several starts) is what makes this fast.

Two programmes share this machinery:

:func:`frontier_polynomial` — the subgraph (Fortuin–Kasteleyn) expansion
    ``P(G, k) = Σ_{A ⊆ E} (−1)^{|A|} k^{c(A)}`` (Whitney 1932; Biggs, *Algebraic Graph
    Theory*, ch. 10). States are partitions of the frontier into the connected pieces of
    the edges chosen so far; a piece that leaves the frontier multiplies the weight by
    ``k``. Choosing an edge whose ends are already joined cancels exactly against not
    choosing it, so such states are dropped — the transfer-matrix form of the
    broken-circuit cancellation. For planar graphs swept along a line the states are
    non-crossing partitions (Catalan, not Bell, many). The weight is evaluated at one huge
    ``k = 2^F`` (Kronecker substitution, see :mod:`.polynomial`), so inner loops handle
    one Python int per state and the whole polynomial falls out at the end.

:func:`colourings` — the colour-class expansion at a given ``k``
    States are partitions of the frontier into colour classes (blocks are independent
    sets); a vertex joins a block with no neighbour of it, or takes one of the ``k − b``
    colours unused by the ``b`` frontier blocks. Used for counts with fixed and barred
    slots and as an independent engine in cross-checks.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from itertools import combinations
from typing import Callable, Hashable, Sequence

import networkx as nx

from .budget import Budget, UNLIMITED
from .polynomial import kronecker_bits, unpack_at_power_of_two

# rough bytes per DP state besides its big-integer weight (dict slot, bytes key, int header)
_STATE_OVERHEAD = 160


def bell_log10(f: int) -> float:
    """log10 of the Bell number B(f): the number of set partitions of f things."""
    return _BELL_LOG10[f] if f < len(_BELL_LOG10) else _BELL_LOG10[-1] + (f - len(_BELL_LOG10) + 1) * 1.5


def _bell_table(limit: int) -> list[float]:
    row = [1]
    out = [0.0]
    for _ in range(limit):
        new = [row[-1]]
        for x in row:
            new.append(new[-1] + x)
        row = new
        out.append(math.log10(row[0]))
    return out


_BELL_LOG10 = _bell_table(60)


@dataclass
class FrontierOrder:
    """A vertex order and the frontier sizes it gives."""

    order: list
    widths: list[int]
    log10_cost: float  # log10 of Σ_t B(width_t + 1): an upper bound on states visited

    @property
    def width(self) -> int:
        return max(self.widths, default=0)


def _greedy(adj: dict, start: Hashable, key: Callable, limit: int | None = None) -> FrontierOrder:
    introduced: set = set()
    frontier: set = set()
    pending = {v: len(adj[v]) for v in adj}  # neighbours not yet introduced
    order: list = []
    widths: list[int] = []
    cost = 0.0
    candidates: set = set()
    current = start
    n = len(adj)
    while True:
        order.append(current)
        introduced.add(current)
        candidates.discard(current)
        frontier.add(current)
        peak = len(frontier)
        for u in adj[current]:
            pending[u] -= 1
            if u not in introduced:
                candidates.add(u)
        for u in [u for u in frontier if pending[u] == 0]:
            frontier.discard(u)
        widths.append(len(frontier))
        if limit is not None and peak > limit:  # no exact engine takes this: stop early
            rest = [v for v in adj if v not in introduced]
            return FrontierOrder(order + rest, widths, float("inf"))
        cost += 10 ** min(bell_log10(peak), 300)
        if len(order) == n:
            break
        pool = candidates if candidates else (set(adj) - introduced)

        def score(v):
            leaving = sum(1 for u in adj[v] if u in frontier and pending[u] == 1)
            stays = 1 if pending[v] > 0 else 0  # pending counts neighbours not yet introduced
            return (len(frontier) + stays - leaving, -sum(1 for u in adj[v] if u in frontier), key(v))

        current = min(pool, key=score)
    return FrontierOrder(order, widths, math.log10(cost) if cost > 0 else 0.0)


def frontier_order(graph: nx.Graph, tries: int | None = None, give_up_width: int | None = None) -> FrontierOrder:
    """A vertex order with a small frontier: greedy minimum growth, best of several starts.

    Starts are the vertices of least degree and the ends of a longest shortest path
    (a pseudo-peripheral pair), the classic seeds of bandwidth-reducing orders
    (Cuthill & McKee 1969; Gibbs, Poole & Stockmeyer 1976). With ``give_up_width`` a try
    stops as soon as its frontier grows past it (its cost is then infinite).
    """
    if graph.number_of_nodes() == 0:
        return FrontierOrder([], [], 0.0)
    adj = {v: set(graph[v]) - {v} for v in graph}
    names = {v: i for i, v in enumerate(sorted(graph, key=str))}
    key = names.__getitem__
    n = len(adj)
    if tries is None:
        tries = 24 if n <= 120 else (6 if n <= 600 else 2)
    starts: list = sorted(graph, key=lambda v: (graph.degree(v), key(v)))[:tries]
    try:
        comp_start = next(iter(graph))
        far = max(nx.single_source_shortest_path_length(graph, comp_start).items(), key=lambda kv: (kv[1], -key(kv[0])))[0]
        far2 = max(nx.single_source_shortest_path_length(graph, far).items(), key=lambda kv: (kv[1], -key(kv[0])))[0]
        starts = [far, far2] + [s for s in starts if s not in (far, far2)]
    except ValueError:
        pass
    best: FrontierOrder | None = None
    for s in starts[: max(tries, 1)]:
        found = _greedy(adj, s, key, give_up_width)
        if best is None or found.log10_cost < best.log10_cost:
            best = found
    # Cuthill–McKee (networkx) sweeps grids and meshes diagonally: frontiers with fewer
    # internal edges and far fewer states than a row sweep (measured on the 10×10 grid)
    if nx.is_connected(graph) and (best is None or best.log10_cost != float("inf") or n <= 600):
        for order in (list(nx.utils.cuthill_mckee_ordering(graph)), list(nx.utils.reverse_cuthill_mckee_ordering(graph))):
            found = order_cost(adj, order, give_up_width)
            if best is None or found.log10_cost < best.log10_cost:
                best = found
    assert best is not None
    return best


def order_cost(adj: dict, order: Sequence, limit: int | None = None) -> FrontierOrder:
    """The frontier sizes and the Bell-number cost of a given order."""
    position = {v: i for i, v in enumerate(order)}
    last = {v: max([position[u] for u in adj[v]] + [position[v]]) for v in order}
    frontier = 0
    closing: dict[int, int] = {}
    for v in order:
        closing[last[v]] = closing.get(last[v], 0) + 1
    widths = []
    cost = 0.0
    for t, _ in enumerate(order):
        frontier += 1
        peak = frontier
        frontier -= closing.get(t, 0)
        widths.append(frontier)
        if limit is not None and peak > limit:
            return FrontierOrder(list(order), widths, float("inf"))
        cost += 10 ** min(bell_log10(peak), 300)
    return FrontierOrder(list(order), widths, math.log10(cost) if cost > 0 else 0.0)


# --------------------------------------------------------------------------- shared steps


_CLOSE_GAP = [bytes(x - 1 if x > label else x for x in range(256)) for label in range(256)]


_ROTATIONS: dict[tuple[int, int], bytes] = {}


def _rotation(label: int, q: int) -> bytes:
    table = _ROTATIONS.get((label, q))
    if table is None:
        table = bytes(q if x == label else (x - 1 if label < x <= q else x) for x in range(256))
        _ROTATIONS[(label, q)] = table
    return table


class _Projection:
    """Drop frontier positions from restricted-growth states; return the canonical state and
    the number of blocks that vanished.

    Positions are dropped one at a time, highest first, with C-level ``bytes`` operations:
    dropping a position that is not the first occurrence of its label keeps the string
    restricted-growth; dropping the only occurrence closes a block (labels above it move
    down by one, ``bytes.translate``); dropping a first occurrence whose label occurs again
    rotates the labels first seen in between (another ``translate``).
    """

    def __init__(self, keep: Sequence[int], length: int):
        self.active = len(keep) < length
        kept = set(keep)
        self.dropped = [i for i in range(length - 1, -1, -1) if i not in kept]

    def __call__(self, state: bytes) -> tuple[bytes, int]:
        closed = 0
        for i in self.dropped:
            label = state[i]
            rest = state[:i] + state[i + 1:]
            if label not in rest:
                closed += 1
                state = rest.translate(_CLOSE_GAP[label])
            elif state.index(label) == i:
                # the label's first occurrence moves to j; the labels first seen between
                # (label + 1 … q) each move down one and the label becomes q
                j = rest.index(label, i)
                q = max(rest[:j]) if j else -1
                state = rest.translate(_rotation(label, q)) if q > label else rest
            else:
                state = rest
        return state, closed


_MERGE_TABLES: dict[tuple[int, ...], bytes] = {}


def _merge_table(labels: tuple[int, ...]) -> bytes:
    """Translate table merging the sorted ``labels`` into the first and closing the gaps."""
    table = _MERGE_TABLES.get(labels)
    if table is None:
        a = labels[0]
        gone = labels[1:]
        out = []
        for x in range(256):
            if x in labels:
                out.append(a)
            else:
                out.append(x - sum(1 for g in gone if g < x))
        table = bytes(out)
        _MERGE_TABLES[labels] = table
    return table


def _plan(graph: nx.Graph, order: Sequence) -> list[tuple[object, list[int], list[int]]]:
    """For each step: the vertex, frontier positions of its earlier neighbours, positions kept after."""
    position = {v: i for i, v in enumerate(order)}
    last = {v: max([position[u] for u in graph[v] if u != v] + [position[v]]) for v in order}
    frontier: list = []
    steps = []
    for t, v in enumerate(order):
        nbpos = [i for i, u in enumerate(frontier) if graph.has_edge(u, v)]
        grown = frontier + [v]
        keep = [i for i, u in enumerate(grown) if last[u] > t]
        steps.append((v, nbpos, keep))
        frontier = [grown[i] for i in keep]
    if len(frontier) > 250:
        raise ValueError("frontier too wide for byte labels")
    return steps


def _int_bytes(states: dict) -> float:
    """Bytes of a typical weight: the largest of a sample of the first states (CPython ints
    take 4 bytes per 30 bits, plus a header); a sampled bound, not a guarantee."""
    sample = 0
    for i, w in enumerate(states.values()):
        sample = max(sample, abs(w).bit_length())
        if i >= 64:
            break
    return 28 + 4 * (sample // 30 + 1)


# --------------------------------------------------------------------------- FK expansion


def frontier_polynomial(
    graph: nx.Graph,
    order: Sequence | None = None,
    budget: Budget = UNLIMITED,
    progress: Callable[[int, int], None] | None = None,
) -> list[int]:
    """Power-basis coefficients of the chromatic polynomial by the subgraph-expansion DP.

    Examples
    --------
    >>> import networkx as nx
    >>> frontier_polynomial(nx.cycle_graph(3))
    [0, 2, -3, 1]
    """
    n = graph.number_of_nodes()
    if n == 0:
        return [1]
    m = graph.number_of_edges()
    bits = kronecker_bits(n, m)
    if order is None:
        order = frontier_order(graph).order
    steps = _plan(graph, order)
    states: dict[bytes, int] = {b"": 1}
    single = [bytes((i,)) for i in range(256)]
    for t, (v, nbpos, keep) in enumerate(steps):
        budget.check_time("the frontier count")
        grown_len = len(steps[t - 1][2]) + 1 if t else 1
        project = _Projection(keep, grown_len)
        active = project.active
        n_nb = len(nbpos)
        p0 = nbpos[0] if nbpos else 0
        new: dict[bytes, int] = {}
        get = new.get
        per_state = _STATE_OVERHEAD + _int_bytes(states)
        for count, (s, w) in enumerate(states.items()):
            if count & 4095 == 4095:
                budget.check_time("the frontier count")
                budget.check_memory((len(new) + len(states)) * per_state, "the frontier count")
            b = (max(s) + 1) if s else 0
            neg = -w
            # options: (state, signed weight); v alone, or joined by its edges to one or more blocks
            if n_nb == 0:
                options = ((s + single[b], w),)
            elif n_nb == 1:
                options = ((s + single[b], w), (s + single[s[p0]], neg))
            else:
                labels = sorted({s[i] for i in nbpos})
                options = [(s + single[b], w)]
                for lab in labels:
                    options.append((s + single[lab], neg))
                for size in range(2, len(labels) + 1):
                    signed = neg if size % 2 else w
                    for chosen in combinations(labels, size):
                        options.append((s.translate(_merge_table(chosen)) + single[chosen[0]], signed))
            for ns, ww in options:
                if active:
                    ns, closed = project(ns)
                    if closed:
                        ww <<= bits * closed
                new[ns] = get(ns, 0) + ww
        states = {s: w for s, w in new.items() if w}
        if states:
            budget.check_memory(len(states) * (_STATE_OVERHEAD + _int_bytes(states)), "the frontier count")
        if progress is not None:
            progress(t + 1, n)
    value = states.get(b"", 0)
    return unpack_at_power_of_two(value, bits, n)


# --------------------------------------------------------------------------- colour classes


def colourings(
    graph: nx.Graph,
    k: int,
    order: Sequence | None = None,
    budget: Budget = UNLIMITED,
) -> int:
    """Number of proper colourings of ``graph`` with ``k`` labelled colours, by colour-class DP.

    Examples
    --------
    >>> import networkx as nx
    >>> colourings(nx.petersen_graph(), 3)   # 120, as recalled from the literature
    120
    """
    n = graph.number_of_nodes()
    if n == 0:
        return 1
    if order is None:
        order = frontier_order(graph).order
    steps = _plan(graph, order)
    states: dict[bytes, int] = {b"": 1}
    for t, (v, nbpos, keep) in enumerate(steps):
        budget.check_time("the colouring count")
        grown_len = len(steps[t - 1][2]) + 1 if t else 1
        project = _Projection(keep, grown_len)
        canon = project if project.active else None
        new: dict[bytes, int] = {}
        get = new.get
        per_state = _STATE_OVERHEAD + n * max(k, 2).bit_length() / 8
        for count, (s, w) in enumerate(states.items()):
            if count & 4095 == 4095:
                budget.check_time("the colouring count")
                budget.check_memory((len(new) + len(states)) * per_state, "the colouring count")
            b = (max(s) + 1) if s else 0
            banned = {s[i] for i in nbpos}
            options = [(s + bytes((lab,)), w) for lab in range(b) if lab not in banned]
            if k > b:
                options.append((s + bytes((b,)), w * (k - b)))
            for ns, ww in options:
                if canon is not None:
                    ns = canon(ns)[0]
                new[ns] = get(ns, 0) + ww
        states = new
        if not states:
            return 0
        budget.check_memory(len(states) * (_STATE_OVERHEAD + n * max(k, 2).bit_length() / 8), "the colouring count")
    return states.get(b"", 0)


def colouring_polynomial(graph: nx.Graph, order: Sequence | None = None, budget: Budget = UNLIMITED) -> list[int]:
    """Power-basis coefficients by the colour-class DP at ``k = 2^F`` (an independent engine)."""
    n = graph.number_of_nodes()
    if n == 0:
        return [1]
    bits = kronecker_bits(n, graph.number_of_edges())
    return unpack_at_power_of_two(colourings(graph, 1 << bits, order, budget), bits, n)
