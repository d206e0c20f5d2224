"""Cliques of the conflict graph: an edge clique cover for the model, and a large clique for bounds.

Every set of events that pairwise clash can hold at most one event per slot. Writing that
as one at-most-one constraint per clique of a cover of the edges (rather than one
constraint per clashing pair) gives the CP-SAT model far fewer constraints and a much
tighter linear relaxation: the pairwise form allows ``x = 1/2`` on every event of a
triangle, the clique form does not. This is the standard "clique formulation" of graph
colouring (see e.g. Mehrotra & Trick, "A column generation approach for graph
coloring", INFORMS J. Computing 8 (1996) 344-354, for the polytope it strengthens).
"""

from __future__ import annotations

from typing import Hashable

import networkx as nx


def clique_cover(graph: nx.Graph) -> list[list[Hashable]]:
    """Greedy cover of every edge of ``graph`` by maximal cliques.

    Each clique is grown from an uncovered edge by repeatedly adding the common neighbour
    with most still-uncovered edges into the clique, until no common neighbour is left, so
    every clique is maximal. Every edge lies in at least one returned clique.

    Examples
    --------
    >>> g = nx.complete_graph(4)
    >>> g.add_edge(3, 4)
    >>> sorted(sorted(c) for c in clique_cover(g))
    [[0, 1, 2, 3], [3, 4]]
    """
    adj = {v: set(graph[v]) - {v} for v in graph}
    uncovered = {v: set(adj[v]) for v in graph}
    order = sorted(graph, key=lambda v: (-len(adj[v]), str(v)))
    cliques: list[list[Hashable]] = []
    for v in order:
        while uncovered[v]:
            u = max(uncovered[v], key=lambda w: (len(uncovered[w]), str(w)))
            clique = [v, u]
            candidates = adj[v] & adj[u]
            score = {w: (w in uncovered[v]) + (w in uncovered[u]) for w in candidates}
            while candidates:
                w = max(candidates, key=lambda y: (score[y], len(adj[y]), str(y)))
                clique.append(w)
                candidates = candidates & adj[w]
                unc_w = uncovered[w]
                for y in candidates:
                    if y in unc_w:
                        score[y] += 1
            for i, a in enumerate(clique):
                for b in clique[i + 1:]:
                    uncovered[a].discard(b)
                    uncovered[b].discard(a)
            cliques.append(clique)
    return cliques


def largest_clique_found(graph: nx.Graph, cover: list[list[Hashable]] | None = None,
                         exact_nodes: int = 150) -> list[Hashable]:
    """A large clique: exact on components of at most ``exact_nodes`` events, else the
    largest clique among the cover and a greedy search. Always a true clique."""
    best: list[Hashable] = []
    for comp in nx.connected_components(graph):
        if len(comp) <= len(best):
            continue
        sub = graph.subgraph(comp)
        if len(comp) <= exact_nodes:
            clique, _ = nx.max_weight_clique(sub, weight=None)
            clique = list(clique)
        else:
            clique = _greedy(sub)
        if len(clique) > len(best):
            best = clique
    for c in cover or ():
        if len(c) > len(best):
            best = list(c)
    return sorted(best, key=str)


def _greedy(graph: nx.Graph, starts: int = 60) -> list[Hashable]:
    adj = {v: set(graph[v]) for v in graph}
    best: list[Hashable] = []
    for start in sorted(graph, key=lambda v: (-len(adj[v]), str(v)))[:starts]:
        clique = [start]
        cand = set(adj[start])
        while cand:
            w = max(cand, key=lambda y: (len(cand & adj[y]), str(y)))
            clique.append(w)
            cand &= adj[w]
        if len(clique) > len(best):
            best = clique
    return best
