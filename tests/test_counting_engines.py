"""Every engine agrees with every other; bounds bracket the truth; the estimate is honest."""

from __future__ import annotations

import math
import random

import networkx as nx
import pytest

from timetabler.counting import Budget, BudgetExceeded, chromatic_polynomial
from timetabler.counting.bounds import (
    chordal_subgraph_upper,
    chordal_supergraph_lower,
    colouring_lower,
    knuth_estimate,
)
from timetabler.counting.falling_frontier import falling_frontier_polynomial
from timetabler.counting.frontier import colourings, frontier_order, frontier_polynomial
from timetabler.counting.reductions import reduce_graph

EXACT_ENGINES = ["frontier", "falling-frontier", "colour-classes", "deletion-contraction"]


def random_graphs(count: int, max_nodes: int, seed: int = 7):
    rng = random.Random(seed)
    for i in range(count):
        n = rng.randint(1, max_nodes)
        p = rng.choice([0.15, 0.3, 0.5, 0.7, 0.9])
        yield nx.gnp_random_graph(n, p, seed=rng.randrange(10**6))


@pytest.mark.parametrize("graph", list(random_graphs(40, 11)), ids=lambda g: f"n{g.number_of_nodes()}m{g.number_of_edges()}")
def test_engines_agree_with_and_without_reductions(graph):
    # the memoised deletion–contraction (Whitney 1932) is the oracle where it is quick
    # (it grows like φ^(n+m)); on denser graphs the oracle is the reduced deletion–contraction
    quick = graph.number_of_edges() <= 20
    oracle = chromatic_polynomial(graph, engine="deletion-contraction", reduce=not quick).power
    for engine in EXACT_ENGINES if quick else EXACT_ENGINES[:3]:
        for reduce in (True, False):
            assert chromatic_polynomial(graph, engine=engine, reduce=reduce).power == oracle, (engine, reduce)
    assert chromatic_polynomial(graph).power == oracle


@pytest.mark.parametrize("seed", range(8))
def test_frontier_and_colour_class_dps_agree_on_medium_sparse_graphs(seed):
    # two independent expansions (subgraph expansion vs colour classes) of the same number
    g = nx.random_regular_graph(3, 16 + 2 * seed, seed=seed)
    order = frontier_order(g).order
    p = frontier_polynomial(g, order)
    for k in (2, 3, 4, 5):
        assert sum(c * k**i for i, c in enumerate(p)) == colourings(g, k, order)
    # the vectorised falling-factorial programme (Python ints in numpy object arrays past n = 25)
    assert falling_frontier_polynomial(g, order) == p


def test_reductions_keep_the_polynomial_and_do_the_work():
    # Petersen graph + a pendant path of 3 vertices at 0 + a 5-cycle glued on its edge 0-1.
    # Read 1968: a pendant vertex multiplies by (k − 1); gluing on an edge (a K_2 clique)
    # gives P(G1) P(G2) / (k (k − 1)); P(C_5) = (k − 1)^5 − (k − 1).
    g = nx.petersen_graph()
    g.add_edges_from([(0, "a"), ("a", "b"), ("b", "c")])
    g.add_edges_from([(0, "x"), ("x", "y"), ("y", "z"), ("z", 1)])
    red = reduce_graph(g)
    assert red.steps["simplicial vertex"] >= 3
    assert red.steps["separating clash"] >= 1
    petersen = chromatic_polynomial(nx.petersen_graph())
    p = chromatic_polynomial(g)
    for k in range(2, 8):
        c5 = (k - 1) ** 5 - (k - 1)
        assert p(k) * k * (k - 1) == petersen(k) * (k - 1) ** 3 * c5
    assert p.power == chromatic_polynomial(g, engine="frontier", reduce=False).power


def test_chordal_graphs_close_by_simplicial_elimination():
    # Fulkerson & Gross 1965: chordal graphs have a perfect elimination order, so the
    # reductions alone finish them (no engine runs)
    g = nx.complete_to_chordal_graph(nx.gnp_random_graph(18, 0.15, seed=3))[0]
    p = chromatic_polynomial(g)
    assert "frontier" not in p.method and "colour" not in p.method
    assert p.power == chromatic_polynomial(g, engine="colour-classes", reduce=False).power


@pytest.mark.parametrize("graph", list(random_graphs(15, 12, seed=11)), ids=lambda g: f"n{g.number_of_nodes()}m{g.number_of_edges()}")
def test_bounds_bracket_the_exact_count(graph):
    # a chordal subgraph can only have more colourings, a chordal supergraph fewer
    # (adding clashes never adds a timetable); a c-colouring gives k^(c) relabellings
    p = chromatic_polynomial(graph)
    for k in range(1, 7):
        exact = p(k)
        assert chordal_supergraph_lower(graph, k) <= exact <= chordal_subgraph_upper(graph, k)
        assert colouring_lower(graph, k) <= exact


def test_knuth_estimate_is_close_and_honest():
    # Knuth 1975: the random probe is unbiased; with 3000 probes the mean should sit within
    # a few standard errors of the truth (a 4-sigma miss has probability < 1e-4)
    g = nx.random_regular_graph(3, 20, seed=5)
    p = chromatic_polynomial(g)
    for k in (3, 4):
        for strategy in ("static", "dynamic"):
            est = knuth_estimate(g, k, probes=3000, seconds=5.0, seed=1, strategy=strategy)
            truth = math.log10(p(k))
            sigma = math.log10(1 + est.relative_error)
            assert abs(est.log10 - truth) <= 4 * sigma + 1e-9, strategy
    # a graph with no 2-colouring: every probe dies, the estimate says zero
    assert knuth_estimate(nx.cycle_graph(5), 2, probes=50).zero


def test_budget_is_enforced_never_a_wrong_number():
    g = nx.random_regular_graph(3, 120, seed=1)
    with pytest.raises(BudgetExceeded):
        chromatic_polynomial(g, budget=Budget.seconds(0.2))
    with pytest.raises(BudgetExceeded):
        frontier_polynomial(nx.grid_2d_graph(6, 6), budget=Budget(None, memory_bytes=10_000))


def test_clique_separator_splits_and_keeps_the_polynomial():
    # two Petersen graphs each joined to all of a triangle x, y, z through three of their
    # vertices: no cut vertex and no separating edge, but the triangle separates them.
    # Read 1968 / Dong, Koh & Teo 2005: P(G) = P(G1) P(G2) / P(K_3), P(K_3) = k(k−1)(k−2)
    g = nx.Graph([("x", "y"), ("y", "z"), ("x", "z")])
    halves = []
    for shift in (0, 100):
        half = nx.relabel_nodes(nx.petersen_graph(), lambda v, s=shift: v + s)
        half.add_edges_from([("x", "y"), ("y", "z"), ("x", "z")])
        half.add_edges_from((shift + i, c) for i in range(3) for c in "xyz")
        halves.append(half)
        g.add_edges_from(half.edges())
    red = reduce_graph(g)
    assert red.steps["clique separator"] == 1
    p = chromatic_polynomial(g)
    p1, p2 = (chromatic_polynomial(h, engine="colour-classes", reduce=False) for h in halves)
    for k in range(3, 8):
        assert p(k) * k * (k - 1) * (k - 2) == p1(k) * p2(k)
    assert p.power == chromatic_polynomial(g, engine="frontier", reduce=False).power
