"""The conflict graph: events as nodes, an edge where two events share attendees.

The graph is built from the sparse attendee × event incidence matrix ``B`` (one row per
attendee, one column per event, 1 where enrolled): the off-diagonal entries of ``BᵀB``
are the numbers of shared attendees, its diagonal the event sizes. This costs
``O(Σ_attendees d²)`` for attendee degrees ``d`` and never loops over pairs of students.
"""

from __future__ import annotations

import time
from dataclasses import dataclass

import networkx as nx
import numpy as np
from scipy import sparse

from .model import Problem


def incidence_matrix(problem: Problem, required_only: bool = False) -> tuple[sparse.csr_matrix, list[str], list[str]]:
    """The attendee × event 0/1 matrix, with the attendee and event orders used.

    With ``required_only`` the optional enrolments (Attendance column) are left out.
    """
    attendees = problem.attendees
    events = problem.event_codes
    a_index = {a: i for i, a in enumerate(attendees)}
    e_index = {e: j for j, e in enumerate(events)}
    pairs = problem.required_enrolments() if required_only else problem.enrolments
    rows = np.fromiter((a_index[a] for a, _ in pairs), dtype=np.int64, count=len(pairs))
    cols = np.fromiter((e_index[e] for _, e in pairs), dtype=np.int64, count=len(pairs))
    data = np.ones(len(rows), dtype=np.int64)
    matrix = sparse.csr_matrix((data, (rows, cols)), shape=(len(attendees), len(events)))
    return matrix, attendees, events


def graph_of_every_event(problem: Problem, graph: nx.Graph | None = None) -> nx.Graph:
    """``graph`` (the conflict graph when None) holding every event of ``problem``: events nobody is
    enrolled in are added with size 0 to a copy, never to the caller's graph."""
    graph = conflict_graph(problem) if graph is None else graph
    missing = [c for c in problem.events if c not in graph]
    if missing:
        graph = graph.copy()
        graph.add_nodes_from(missing, size=0)
    return graph


def conflict_graph(problem: Problem) -> nx.Graph:
    """The conflict graph of a problem.

    Nodes are event codes (every event, enrolled or not) with attribute ``size`` (number
    of attendees, optional ones included: they need seats too); edges carry ``shared``, the
    number of required attendees the two events share. Optional attendees make no clash.

    Examples
    --------
    >>> from timetabler.model import Problem
    >>> g = conflict_graph(Problem([("ann", "M1"), ("ann", "M2"), ("bo", "M2")]))
    >>> sorted(g.edges(data="shared"))
    [('M1', 'M2', 1)]
    """
    matrix, _, events = incidence_matrix(problem)
    sizes = np.asarray(matrix.sum(axis=0)).ravel() if matrix.shape[0] else np.zeros(len(events), dtype=np.int64)
    if problem.optional:
        matrix, _, _ = incidence_matrix(problem, required_only=True)
    co = (matrix.T @ matrix).tocoo()
    graph = nx.Graph()
    for j, code in enumerate(events):
        graph.add_node(code, size=int(sizes[j]))
    mask = co.row < co.col
    for i, j, w in zip(co.row[mask], co.col[mask], co.data[mask]):
        graph.add_edge(events[i], events[j], shared=int(w))
    return graph


def largest_clique(graph: nx.Graph, budget_nodes: int = 400, deadline: float | None = None) -> list:
    """A large set of mutually clashing events: a lower bound on the number of slots.

    Exact (``networkx.max_weight_clique`` with unit weights) on components of at most
    ``budget_nodes`` events; a greedy clique by degree on larger ones (fewer starts once
    ``deadline``, a ``time.monotonic()`` value, has passed). The result is always a true
    clique, so its size is always a valid lower bound.
    """
    best: list = []
    for comp in nx.connected_components(graph):
        if len(comp) <= len(best):
            continue
        sub = graph.subgraph(comp)
        if len(comp) <= budget_nodes:
            clique, _ = nx.max_weight_clique(sub, weight=None)
        else:
            clique = _greedy_clique(sub, deadline)
        if len(clique) > len(best):
            best = list(clique)
    return sorted(best, key=str)


def _greedy_clique(graph: nx.Graph, deadline: float | None = None) -> list:
    best: list = []
    adj = {v: set(graph[v]) for v in graph}
    for start in sorted(graph, key=graph.degree, reverse=True)[:50]:
        if best and deadline is not None and time.monotonic() > deadline:
            break
        clique = [start]
        candidates = set(adj[start])
        while candidates:
            v = max(candidates, key=lambda u: (len(candidates & adj[u]), str(u)))
            clique.append(v)
            candidates &= adj[v]
        if len(clique) > len(best):
            best = clique
    return best


@dataclass
class ConflictSummary:
    """The figures ``timetabler inspect`` reports."""

    events: int
    attendees: int
    enrolments: int
    conflict_pairs: int
    density: float
    components: int
    component_sizes: list[int]
    isolated_events: int
    max_clique: int
    clique_events: list[str]
    busiest_attendees: list[tuple[str, int]]
    max_events_per_attendee: int

    def to_dict(self) -> dict:
        return {
            "events": self.events,
            "attendees": self.attendees,
            "enrolments": self.enrolments,
            "conflict_pairs": self.conflict_pairs,
            "density": self.density,
            "components": self.components,
            "component_sizes": self.component_sizes,
            "isolated_events": self.isolated_events,
            "max_clique": self.max_clique,
            "clique_events": self.clique_events,
            "busiest_attendees": [{"attendee": a, "events": n} for a, n in self.busiest_attendees],
            "max_events_per_attendee": self.max_events_per_attendee,
        }


def summarise(problem: Problem, graph: nx.Graph | None = None, top: int = 5) -> ConflictSummary:
    """Figures of a problem and its conflict graph."""
    graph = conflict_graph(problem) if graph is None else graph
    n = graph.number_of_nodes()
    m = graph.number_of_edges()
    comps = sorted((len(c) for c in nx.connected_components(graph)), reverse=True)
    clique = largest_clique(graph)
    load = {a: len(evs) for a, evs in problem.events_by_attendee().items()}
    busiest = sorted(load.items(), key=lambda kv: (-kv[1], kv[0]))[:top]
    return ConflictSummary(
        events=n,
        attendees=len(load),
        enrolments=len(problem.enrolments),
        conflict_pairs=m,
        density=(2 * m / (n * (n - 1))) if n > 1 else 0.0,
        components=len(comps),
        component_sizes=comps,
        isolated_events=sum(1 for v in graph if graph.degree(v) == 0),
        max_clique=len(clique),
        clique_events=[str(c) for c in clique],
        busiest_attendees=busiest,
        max_events_per_attendee=max(load.values(), default=0),
    )


def people_figures(problem: Problem) -> list[tuple[str, int]]:
    """What the upload says of people (empty when nothing): the Attendees sheet, optional
    attendance, quorums and events longer than a slot."""
    if not problem.has_people and not any(e.duration_minutes for e in problem.events.values()):
        return []
    people = list(problem.people.values())
    shortest = min((s.length_minutes for s in problem.slots if s.length_minutes), default=None)
    rows = [
        ("Attendees in the Attendees sheet", len(people)),
        ("Attendees with slots they cannot make", sum(1 for p in people if p.unavailable)),
        ("Attendees with extra time", sum(1 for p in people if p.extra_time_percent)),
        ("Attendees seated in a room of their own", sum(1 for p in people if p.own_room_type)),
        ("Optional enrolments", len(problem.optional)),
        ("Events with a quorum", sum(1 for e in problem.events.values() if e.quorum)),
        ("Events longer than a slot", sum(1 for e in problem.events.values()
                                          if shortest and e.duration_minutes and e.duration_minutes > shortest)),
    ]
    return rows if any(n for _, n in rows) else []
