"""Reductions applied before any search, and the choice of engine for what is left.

Identities used (Read 1968; Dong, Koh & Teo 2005, ch. 1–2):

simplicial vertex
    if the neighbours of ``v`` (``d`` of them) are pairwise adjacent,
    ``P(G) = (k − d) · P(G − v)``. Repeating this empties every chordal graph (trees,
    complete graphs, interval graphs) in one pass (Fulkerson & Gross 1965).
components
    ``P(G ∪ H) = P(G) · P(H)``.
blocks
    gluing at one cut vertex: ``P(G) = P(G1) · P(G2) / k``.
separating edge
    gluing at a clique ``K_2``: ``P(G) = P(G1) · P(G2) / (k (k − 1))``.
clique separator
    gluing at a clique ``K_s``: ``P(G) = P(G1) · P(G2) / P(K_s)``, ``P(K_s) = k^(s)``;
    clique separators are found through a minimal triangulation (Tarjan 1985).
cycle
    ``P(C_n) = (k − 1)^n + (−1)^n (k − 1)``.

What is left after the reductions ("hard pieces") goes to a frontier programme: the
subgraph expansion of :mod:`.frontier` for sparse pieces (its states are connectivity
partitions, few when the frontier has few edges); for dense ones the colour-class
expansion (its states are partitions of the frontier into independent sets, few when the
frontier has many edges), vectorised in the falling-factorial basis
(:mod:`.falling_frontier`) when the frontier has at most 15 vertices. The switch is a clash density of 0.25, measured on the
benchmark graphs of ``benchmarks/counting.py`` (our own rule, no published source).

The result of a reduction is a :class:`Reduction`: integer multiplicities of linear
factors ``(k − r)`` (negative for the divisors) and the hard pieces; every piece's
polynomial times the linear factors is the chromatic polynomial.
"""

from __future__ import annotations

from collections import Counter
from dataclasses import dataclass, field
from typing import Callable

import networkx as nx

from .budget import Budget, BudgetExceeded, UNLIMITED
from .deletion_contraction import deletion_contraction_polynomial
from .falling_frontier import MAX_WIDTH, falling_frontier_polynomial
from .frontier import colouring_polynomial, frontier_order, frontier_polynomial
from .polynomial import ChromaticPolynomial, cycle_power, poly_div_linear, poly_mul, poly_mul_linear

ENGINES = ("auto", "frontier", "falling-frontier", "colour-classes", "deletion-contraction")

# clash density above which the colour-class programme is used (own measurement, see above)
DENSE_FROM = 0.25
# beyond this many estimated states (log10 of a Bell-number bound on the widest frontiers)
# the sparse programme is not started at all; the bound overestimates the real count by
# one to two orders of magnitude on the benchmark graphs
MAX_FRONTIER_LOG10_STATES = 10.5
# frontier width past which no exact engine is tried (Bell(30) ≈ 8.5e23 partitions)
GIVE_UP_WIDTH = 30
_SEPARATOR_SEARCH_MAX_EDGES = 800
_SEPARATOR_SEARCH_MAX_NODES = 400
_CLIQUE_SEARCH_MAX_EDGES = 3000  # the triangulation's clique listing grows fast past this


@dataclass
class Piece:
    """A 2-connected piece with no simplicial vertex, left for an engine."""

    graph: nx.Graph
    power: list[int] | None = None
    method: str = ""


@dataclass
class Reduction:
    """``P(G) = Π_r (k − r)^roots[r] · Π P(piece)``."""

    roots: Counter = field(default_factory=Counter)
    pieces: list[Piece] = field(default_factory=list)
    steps: Counter = field(default_factory=Counter)

    def linear_power(self) -> tuple[list[int], list[int]]:
        """The numerator and denominator linear factors, expanded."""
        num, den = [1], []
        for r, mult in sorted(self.roots.items()):
            if mult > 0:
                for _ in range(mult):
                    num = poly_mul_linear(num, r)
            elif mult < 0:
                den.extend([r] * (-mult))
        return num, den

    def describe(self) -> str:
        parts = [f"{name} ×{n}" for name, n in sorted(self.steps.items()) if n]
        return ", ".join(parts) if parts else "none"


def _is_clique(graph: nx.Graph, nodes: list) -> bool:
    for i, u in enumerate(nodes):
        nb = graph[u]
        for w in nodes[i + 1:]:
            if w not in nb:
                return False
    return True


def eliminate_simplicial(graph: nx.Graph, roots: Counter, steps: Counter) -> nx.Graph:
    """Remove simplicial vertices until none is left; record ``(k − d)`` for each."""
    g = nx.Graph(graph)
    work = list(g)
    queued = set(work)
    while work:
        v = work.pop()
        queued.discard(v)
        if v not in g:
            continue
        nbrs = list(g[v])
        if _is_clique(g, nbrs):
            roots[len(nbrs)] += 1
            steps["simplicial vertex"] += 1
            g.remove_node(v)
            for u in nbrs:
                if u not in queued:
                    queued.add(u)
                    work.append(u)
    return g


def _separating_edge(block: nx.Graph):
    """An edge whose two ends disconnect the (2-connected) block, with the parts, or None."""
    if block.number_of_edges() > _SEPARATOR_SEARCH_MAX_EDGES:
        return None
    for u, v in block.edges():
        rest = block.subgraph([w for w in block if w != u and w != v])
        parts = list(nx.connected_components(rest))
        if len(parts) > 1:
            return (u, v), parts
    return None


def reduce_graph(graph: nx.Graph, reduction: Reduction | None = None, budget: Budget = UNLIMITED) -> Reduction:
    """Split ``graph`` by the identities above into linear factors and hard pieces."""
    red = reduction if reduction is not None else Reduction()
    budget.check_time("the reductions")
    g = eliminate_simplicial(graph, red.roots, red.steps)
    for comp in nx.connected_components(g):
        sub = g.subgraph(comp)
        blocks = [set(b) for b in nx.biconnected_components(sub)]
        if len(blocks) > 1:
            red.roots[0] -= len(blocks) - 1
            red.steps["block split"] += len(blocks) - 1
        for block in blocks:
            _reduce_block(nx.Graph(sub.subgraph(block)), red, budget)
    return red


def _reduce_block(block: nx.Graph, red: Reduction, budget: Budget = UNLIMITED) -> None:
    if any(_is_clique(block, list(block[v])) for v in block):
        reduce_graph(block, red, budget)
        return
    n, m = block.number_of_nodes(), block.number_of_edges()
    if n == m and all(d == 2 for _, d in block.degree()):
        red.pieces.append(Piece(block, cycle_power(n), "closed form (cycle)"))
        red.steps["cycle"] += 1
        return
    found = _separating_edge(block)
    if found is not None:
        (u, v), parts = found
        red.roots[0] -= len(parts) - 1
        red.roots[1] -= len(parts) - 1
        red.steps["separating clash"] += len(parts) - 1
        for part in parts:
            reduce_graph(nx.Graph(block.subgraph(set(part) | {u, v})), red, budget)
        return
    found = _clique_separator(block)
    if found is not None:
        clique, parts = found
        for r in range(len(clique)):
            red.roots[r] -= len(parts) - 1
        red.steps["clique separator"] += len(parts) - 1
        for part in parts:
            reduce_graph(nx.Graph(block.subgraph(set(part) | set(clique))), red, budget)
        return
    red.pieces.append(Piece(block))


def _clique_separator(block: nx.Graph):
    """A clique whose removal disconnects the block, with the parts, or None.

    Clique minimal separators are among the minimal separators of a minimal triangulation
    (Tarjan 1985; Berry, Pogorelcnik & Simonet 2010); those of the chordal graph are the
    intersections of neighbouring maximal cliques in a clique tree. The triangulation is
    networkx's MCS-M ``complete_to_chordal_graph``.
    """
    if block.number_of_nodes() > _SEPARATOR_SEARCH_MAX_NODES or block.number_of_edges() > _CLIQUE_SEARCH_MAX_EDGES:
        return None
    chordal, _ = nx.complete_to_chordal_graph(block)
    cliques = [frozenset(c) for c in nx.chordal_graph_cliques(chordal)]
    if len(cliques) < 2:
        return None
    meet = nx.Graph()
    for i in range(len(cliques)):
        for j in range(i + 1, len(cliques)):
            common = len(cliques[i] & cliques[j])
            if common:
                meet.add_edge(i, j, weight=common)
    for i, j in nx.maximum_spanning_tree(meet).edges():
        sep = list(cliques[i] & cliques[j])
        if not _is_clique(block, sep):
            continue
        rest = block.subgraph([w for w in block if w not in set(sep)])
        parts = list(nx.connected_components(rest))
        if len(parts) > 1:
            return sep, parts
    return None


# --------------------------------------------------------------------------- engines


def density(graph: nx.Graph) -> float:
    n = graph.number_of_nodes()
    return 2 * graph.number_of_edges() / (n * (n - 1)) if n > 1 else 0.0


def piece_polynomial(graph: nx.Graph, engine: str = "auto", budget: Budget = UNLIMITED,
                     progress: Callable[[int, int], None] | None = None) -> tuple[list[int], str]:
    """Power coefficients of one piece by the named engine (``auto``: chosen by density)."""
    if engine == "auto":
        order = frontier_order(graph, give_up_width=GIVE_UP_WIDTH)
        if order.log10_cost == float("inf"):
            raise BudgetExceeded(
                f"a group of {graph.number_of_nodes()} events and {graph.number_of_edges()} clashes "
                f"is beyond exact counting (no vertex order keeps fewer than {GIVE_UP_WIDTH} events open at once)"
            )
        if density(graph) >= DENSE_FROM:
            if order.width + 1 <= MAX_WIDTH:
                return falling_frontier_polynomial(graph, order.order, budget), "falling-frontier"
            return colouring_polynomial(graph, order.order, budget), "colour-classes"
        if order.log10_cost > MAX_FRONTIER_LOG10_STATES:
            raise BudgetExceeded(
                f"a group of {graph.number_of_nodes()} events and {graph.number_of_edges()} clashes "
                f"is beyond exact counting (frontier width {order.width})"
            )
        return frontier_polynomial(graph, order.order, budget, progress), "frontier"
    if engine == "frontier":
        return frontier_polynomial(graph, None, budget, progress), engine
    if engine == "colour-classes":
        return colouring_polynomial(graph, None, budget), engine
    if engine == "falling-frontier":
        return falling_frontier_polynomial(graph, None, budget), engine
    if engine == "deletion-contraction":
        return deletion_contraction_polynomial(graph, budget), engine
    raise ValueError(f"unknown engine {engine!r}; choose one of {', '.join(ENGINES)}")


def chromatic_polynomial(
    graph: nx.Graph,
    *,
    engine: str = "auto",
    reduce: bool = True,
    budget: Budget | None = None,
    budget_seconds: float | None = None,
    progress: Callable[[int, int], None] | None = None,
) -> ChromaticPolynomial:
    """The chromatic polynomial of ``graph``, exact, or ``BudgetExceeded``.

    Parameters
    ----------
    graph : networkx.Graph
        Self-loops are not allowed (a vertex clashing with itself has no colouring).
    engine : str
        ``"auto"`` (default), ``"frontier"``, ``"falling-frontier"``,
        ``"colour-classes"`` or ``"deletion-contraction"`` (the slow oracle).
    reduce : bool
        Apply the reductions first (default). ``False`` hands the whole graph to the engine.
    budget, budget_seconds
        Time and memory limits; beyond them :class:`BudgetExceeded` is raised.

    Examples
    --------
    >>> import networkx as nx
    >>> p = chromatic_polynomial(nx.petersen_graph())
    >>> p(3), p.chromatic_number   # 120 proper 3-colourings, as recalled from the literature
    (120, 3)
    """
    if nx.number_of_selfloops(graph):
        raise ValueError("the graph has a self-loop: no proper colouring exists")
    if budget is None:
        budget = Budget.seconds(budget_seconds)
    if engine not in ENGINES:
        raise ValueError(f"unknown engine {engine!r}; choose one of {', '.join(ENGINES)}")
    if not reduce:
        power, method = piece_polynomial(nx.Graph(graph), engine, budget, progress)
        return ChromaticPolynomial(_trim(power), method)
    red = reduce_graph(graph, budget=budget)
    methods = []
    power, den = red.linear_power()
    for piece in sorted(red.pieces, key=lambda p: p.graph.number_of_nodes()):
        if piece.power is None:
            piece.power, piece.method = piece_polynomial(piece.graph, engine, budget, progress)
        methods.append(piece.method)
        power = poly_mul(power, piece.power)
    for r in den:
        power = poly_div_linear(power, r)
    method = "reductions (" + red.describe() + ")"
    engines = sorted(set(methods) - {"closed form (cycle)"})
    if engines:
        method += " + " + ", ".join(engines)
    return ChromaticPolynomial(_trim(power), method)


def _trim(power: list[int]) -> list[int]:
    power = list(power)
    while len(power) > 1 and power[-1] == 0:
        power.pop()
    return power
