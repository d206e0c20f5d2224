"""The conflict graph and the inspect figures, checked against a plain pairwise count."""

from __future__ import annotations

import itertools
import random

import networkx as nx
from hypothesis import given, settings
from hypothesis import strategies as st

from timetabler.conflicts import conflict_graph, largest_clique, summarise
from timetabler.model import Problem


def pairwise_graph(enrolments):
    """Reference: loop over every pair of events and count shared attendees directly."""
    by_event = {}
    for a, e in enrolments:
        by_event.setdefault(e, set()).add(a)
    g = nx.Graph()
    g.add_nodes_from(by_event)
    for u, v in itertools.combinations(sorted(by_event), 2):
        shared = len(by_event[u] & by_event[v])
        if shared:
            g.add_edge(u, v, shared=shared)
    return g


enrolment_lists = st.lists(
    st.tuples(st.sampled_from([f"s{i}" for i in range(12)]), st.sampled_from([f"E{i}" for i in range(9)])),
    min_size=1,
    max_size=60,
    unique=True,
)


@settings(max_examples=60, deadline=None)
@given(enrolment_lists)
def test_incidence_matrix_graph_matches_pairwise_count(enrolments):
    got = conflict_graph(Problem(list(enrolments)))
    want = pairwise_graph(enrolments)
    assert set(got.nodes) == set(want.nodes)
    assert {frozenset(e): w for *e, w in got.edges(data="shared")} == {
        frozenset(e): w for *e, w in want.edges(data="shared")
    }


@settings(max_examples=40, deadline=None)
@given(enrolment_lists)
def test_largest_clique_is_a_clique_and_matches_networkx(enrolments):
    g = conflict_graph(Problem(list(enrolments)))
    clique = largest_clique(g)
    for u, v in itertools.combinations(clique, 2):
        assert g.has_edge(u, v)
    # Reference: networkx's exact maximum clique (max_weight_clique with unit weights).
    _, size = nx.max_weight_clique(g, weight=None)
    assert len(clique) == size


def test_event_sizes_and_isolated_events():
    p = Problem([("ann", "A"), ("ann", "B"), ("bo", "B"), ("cy", "C")])
    g = conflict_graph(p)
    assert g.nodes["B"]["size"] == 2
    s = summarise(p, g)
    assert (s.events, s.attendees, s.enrolments, s.conflict_pairs) == (3, 3, 4, 1)
    assert s.components == 2 and s.component_sizes == [2, 1]
    assert s.isolated_events == 1
    assert s.max_clique == 2


def test_greedy_clique_on_large_component_is_a_true_clique():
    rng = random.Random(7)
    g = nx.gnp_random_graph(450, 0.05, seed=rng.randrange(10**6))
    g = nx.relabel_nodes(g, {v: f"E{v}" for v in g})
    clique = largest_clique(g, budget_nodes=100)
    assert len(clique) >= 3
    for u, v in itertools.combinations(clique, 2):
        assert g.has_edge(u, v)
