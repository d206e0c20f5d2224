"""Clash-free timetables on plain conflict graphs, checked against the graph-theory literature
and against networkx's chromatic polynomial (a reference outside this project)."""

from __future__ import annotations

import itertools
import random

import networkx as nx
import pytest
import sympy

from timetabler.conflicts import conflict_graph
from timetabler.model import Problem, Weights, generic_slots
from timetabler.scheduling import SolveOptions, fewest_slots, solve, validate
from timetabler.scheduling.cliques import clique_cover, largest_clique_found
from timetabler.scheduling.dsatur import dsatur

ZERO = Weights(**{k: 0 for k in Weights().__dict__})
FAST = SolveOptions(time_limit=10, workers=2, seed=1)


def graph_problem(g: nx.Graph, weights: Weights = ZERO) -> Problem:
    """One attendee per edge (HV-Exxxx), one per isolated vertex: the conflict graph is ``g``."""
    enrol = []
    for i, (u, v) in enumerate(g.edges):
        enrol += [(f"HV-E{i:04d}", f"X{u}"), (f"HV-E{i:04d}", f"X{v}")]
    for v in g:
        if g.degree(v) == 0:
            enrol.append((f"HV-I{v}", f"X{v}"))
    return Problem(enrol, weights=weights)


def chromatic_from_networkx(g: nx.Graph) -> int:
    """Smallest k with P(G, k) > 0, P from networkx.chromatic_polynomial (sympy expression)."""
    poly = nx.chromatic_polynomial(g)
    x = sorted(poly.free_symbols, key=str)[0] if poly.free_symbols else sympy.Symbol("x")
    k = 0
    while sympy.Integer(poly.subs(x, k)) <= 0:
        k += 1
    return k


def random_graphs(count: int, n_range=(4, 8), seed=7, max_edges: int | None = None):
    rng = random.Random(seed)
    made = 0
    while made < count:
        n = rng.randint(*n_range)
        p = rng.choice([0.3, 0.5, 0.7])
        g = nx.gnp_random_graph(n, p, seed=rng.randrange(10**6))
        if max_edges is not None and g.number_of_edges() > max_edges:
            continue  # networkx.chromatic_polynomial is exponential in the edges
        made += 1
        yield g


@pytest.mark.parametrize("g", list(random_graphs(8, (4, 7), max_edges=10)), ids=lambda g: f"n{g.number_of_nodes()}m{g.number_of_edges()}")
def test_feasible_exactly_when_chromatic_polynomial_is_positive(g):
    # Reference: networkx.chromatic_polynomial (Whitney's expansion, evaluated with sympy).
    poly = nx.chromatic_polynomial(g)
    x = sorted(poly.free_symbols, key=str)[0] if poly.free_symbols else sympy.Symbol("x")
    p = graph_problem(g)
    for k in range(1, 5):
        run = solve(p, generic_slots(k), FAST)
        positive = sympy.Integer(poly.subs(x, k)) > 0
        assert run.status in ("optimal", "infeasible")
        assert (run.status == "optimal") == positive, (k, run.status, run.reason)
        if positive:
            assert validate(p, generic_slots(k), run.assignment).ok
        else:
            assert run.reason


@pytest.mark.parametrize("g", list(random_graphs(6, (5, 7), seed=11, max_edges=10)), ids=lambda g: f"n{g.number_of_nodes()}")
def test_fewest_slots_matches_networkx(g):
    res = fewest_slots(graph_problem(g), per_day=1, options=FAST)
    assert res.proven
    assert res.upper == res.lower == chromatic_from_networkx(g)
    if res.run and res.run.assignment:
        assert validate(graph_problem(g), generic_slots(res.upper, 1), res.run.assignment).ok


@pytest.mark.parametrize(
    "name,g,chi",
    [
        # closed forms: chi(C_odd) = 3, chi(K_n) = n, bipartite graphs 2 (textbook facts)
        ("C9", nx.cycle_graph(9), 3),
        ("K7", nx.complete_graph(7), 7),
        ("grid", nx.grid_2d_graph(4, 5), 2),
        # Petersen graph: chromatic number 3 (Holton & Sheehan, "The Petersen Graph", 1993)
        ("petersen", nx.petersen_graph(), 3),
        # Mycielski graphs: triangle-free with chi = k (Mycielski 1955); clique bound is 2
        ("grotzsch", nx.mycielski_graph(4), 4),
        ("myciel5", nx.mycielski_graph(5), 5),
        # wheel W_n on n nodes: chi = 3 when the rim (n-1) is even, 4 when odd (textbook)
        ("wheel8", nx.wheel_graph(8), 4),
    ],
)
def test_fewest_slots_on_graphs_with_known_chromatic_number(name, g, chi):
    p = graph_problem(g)
    res = fewest_slots(p, per_day=1, options=FAST)
    assert res.upper == chi and res.proven, res.to_json()
    run = solve(p, generic_slots(chi), FAST)
    assert run.status == "optimal" and validate(p, generic_slots(chi), run.assignment).ok
    below = solve(p, generic_slots(chi - 1), FAST)
    assert below.status == "infeasible" and below.proven


def queen_graph(n: int) -> nx.Graph:
    g = nx.Graph()
    cells = [(r, c) for r in range(n) for c in range(n)]
    g.add_nodes_from(cells)
    for (a, b), (c, d) in itertools.combinations(cells, 2):
        if a == c or b == d or abs(a - c) == abs(b - d):
            g.add_edge((a, b), (c, d))
    return g


def test_queen_graph_needs_exactly_n_slots_when_n_is_prime_to_6():
    # chi(queen_n) = n exactly when gcd(n, 6) = 1 (a classical result on n-queens colourings,
    # recalled from memory: Chvatal's notes on queen graph colourings); queen7_7 in the DIMACS table has 7.
    g = queen_graph(7)
    p = graph_problem(g)
    run = solve(p, generic_slots(7), SolveOptions(time_limit=20, workers=2, seed=3))
    assert run.status == "optimal"
    assert validate(p, generic_slots(7), run.assignment).ok


def test_dsatur_is_proper_and_exact_on_bipartite_graphs():
    # Brelaz (1979): DSATUR colours every bipartite graph with 2 colours.
    for seed in range(5):
        g = nx.bipartite.random_graph(8, 9, 0.4, seed=seed)
        c = dsatur(g)
        assert all(c[u] != c[v] for u, v in g.edges)
        if g.number_of_edges():
            assert max(c.values()) == 2
    for g in random_graphs(10, (10, 30), seed=5):
        c = dsatur(g)
        assert len(c) == g.number_of_nodes() and all(c[u] != c[v] for u, v in g.edges)


def test_dsatur_respects_allowed_colours_and_limit():
    g = nx.path_graph(3)
    c = dsatur(g, {0: {2}, 1: {2, 3}}, limit=3)
    assert c[0] == 2 and c[1] == 3 and c[2] in (1, 2)
    partial = dsatur(nx.complete_graph(4), limit=3)
    assert len(partial) == 3


def test_clique_cover_covers_every_edge_with_cliques():
    for g in random_graphs(10, (10, 40), seed=3):
        cover = clique_cover(g)
        covered = set()
        for clique in cover:
            for a, b in itertools.combinations(clique, 2):
                assert g.has_edge(a, b)
                covered.add(frozenset((a, b)))
        assert covered == {frozenset(e) for e in g.edges}
        q = largest_clique_found(g, cover)
        assert all(g.has_edge(a, b) for a, b in itertools.combinations(q, 2))
        assert len(q) == max((len(c) for c in nx.find_cliques(g)), default=0)


def test_enrolment_built_graph_is_the_instance():
    g = nx.petersen_graph()
    cg = conflict_graph(graph_problem(g))
    assert cg.number_of_edges() == g.number_of_edges()


def test_components_are_solved_apart_and_joined():
    g = nx.disjoint_union_all([nx.complete_graph(4), nx.cycle_graph(5), nx.empty_graph(3)])
    p = graph_problem(g)
    seen = []
    run = solve(p, generic_slots(4), FAST, progress=seen.append)
    assert run.status == "optimal" and len(run.assignment) == g.number_of_nodes()
    assert validate(p, generic_slots(4), run.assignment).ok
    assert any(e.get("event") == "phase" for e in seen)


def test_time_limit_is_respected_on_a_hard_instance():
    # queen8_8 with 8 slots is infeasible (published chi = 9) and hard to prove quickly.
    p = graph_problem(queen_graph(8))
    run = solve(p, generic_slots(8), SolveOptions(time_limit=2, workers=2, explain=False))
    assert run.status in ("unknown", "infeasible")
    assert run.wall_seconds < 2 + 3.0  # model building and clean-up on a busy machine


def test_tabucol_finds_proper_colourings_and_gives_up_below_chi():
    from timetabler.scheduling.tabucol import tabucol

    g = nx.convert_node_labels_to_integers(queen_graph(7))
    c = tabucol(g, 7, seconds=10, seed=2)
    # chi(queen7_7) = 7 (DIMACS table); tabu search usually finds it; when it does it must be proper
    if c is not None:
        assert all(c[u] != c[v] for u, v in g.edges) and max(c.values()) <= 7
    petersen = nx.petersen_graph()
    c3 = tabucol(petersen, 3, seconds=5, seed=1)
    assert c3 is not None and all(c3[u] != c3[v] for u, v in petersen.edges)
    assert tabucol(petersen, 2, max_moves=2000, seconds=5) is None  # chi(Petersen) = 3


def test_transversals_of_the_queen_graph_rows_are_the_n_queens_solutions():
    # One cell from each row, no two attacking: the n-queens solutions. Their numbers 4, 40, 92
    # for n = 6, 7, 8 are OEIS A000170.
    from timetabler.scheduling.transversals import clique_partition, transversals

    for n, solutions in ((6, 4), (7, 40), (8, 92)):
        g = queen_graph(n)
        rows = [[(r, c) for c in range(n)] for r in range(n)]
        found = transversals(g, rows)
        assert len(found) == solutions and len(set(found)) == solutions
        assert all(not g.has_edge(u, v) for t in found for u, v in itertools.combinations(t, 2))
        assert transversals(g, rows, max_sets=solutions - 1) is None  # the caps are honoured
        assert transversals(g, rows, max_steps=n) is None
        # the clique partition is found among the cover's cliques
        blocks = clique_partition(g, n, clique_cover(g))
        assert blocks is not None and sorted(v for b in blocks for v in b) == sorted(g.nodes)
        assert all(g.has_edge(u, v) for b in blocks for u, v in itertools.combinations(b, 2))


def test_colouring_by_transversals_decides_queen_graphs_both_ways():
    # chi(queen7_7) = 7 and chi(queen6_6) = 7 > 6 (DIMACS table, ../shared index.tsv values for queen6_6/7_7)
    from timetabler.scheduling.transversals import colour_by_transversals

    seven = queen_graph(7)
    found = colour_by_transversals(seven, 7, clique_cover(seven), seconds=20)
    c = found.colouring
    assert c is not None and set(c.values()) == set(range(1, 8)) and found.transversals == 40
    assert all(c[u] != c[v] for u, v in seven.edges)
    six = queen_graph(6)
    no = colour_by_transversals(six, 6, clique_cover(six), seconds=20)  # 4 transversals cannot make 6 slots
    assert no.colouring is None and no.impossible and no.transversals == 4
    # no partition into cliques of 3 (10 events): nothing settled either way
    other = colour_by_transversals(nx.petersen_graph(), 3, clique_cover(nx.petersen_graph()), seconds=5)
    assert other.colouring is None and not other.impossible


def test_fewest_slots_uses_the_clique_partition_when_the_other_searches_cannot_close_the_gap(monkeypatch):
    import importlib

    from timetabler.scheduling import SolveRun
    solve_module = importlib.import_module("timetabler.scheduling.fewest_slots_search")
    # as on queen11_11, where tabu search and CP-SAT on the slot model find nothing in a minute
    monkeypatch.setattr(solve_module, "tabucol", lambda *a, **k: None)
    monkeypatch.setattr(solve_module, "solve", lambda problem, slots, *a, **k: SolveRun(
        slots=len(slots), slot_list=list(slots), status="unknown"))
    p = graph_problem(queen_graph(7))
    res = fewest_slots(p, options=SolveOptions(time_limit=20, workers=2))
    assert res.upper == res.lower == 7 and res.proven and "transversals" in res.upper_reason
    assert validate(p, generic_slots(7, 2), res.run.assignment).ok


def test_fewest_slots_proves_a_slot_count_impossible_by_transversals():
    # queen6_6: 6 events pairwise clash in each row, but only 4 ways (the 6-queens solutions,
    # OEIS A000170) pick one per row without clashes, so 6 slots cannot hold it; chi = 7 (DIMACS table).
    res = fewest_slots(graph_problem(queen_graph(6)), options=SolveOptions(time_limit=20, workers=2))
    assert res.lower == res.upper == 7 and res.proven
    assert "no 6 cover every event" in res.lower_reason and "of the 4 clash-free ways" in res.lower_reason


def test_exact_cover_agrees_with_trying_every_choice_of_sets():
    from timetabler.scheduling.transversals import exact_cover

    rng = random.Random(7)
    found_some = missed_some = 0
    for _ in range(200):
        items = list(range(rng.randint(3, 8)))
        sets = [frozenset(rng.sample(items, rng.randint(1, 3))) for _ in range(rng.randint(1, 10))]
        # the reference: every subset of the sets, by brute force
        exists = any(
            sorted(v for j in pick for v in sets[j]) == items
            for r in range(len(sets) + 1) for pick in itertools.combinations(range(len(sets)), r))
        picked, finished = exact_cover(sets, items)
        assert finished and (picked is not None) == exists
        if picked is not None:
            found_some += 1
            assert sorted(v for j in picked for v in sets[j]) == items  # disjoint and covering
        else:
            missed_some += 1
    assert found_some and missed_some  # both answers were exercised
    _, finished = exact_cover([frozenset([i]) for i in range(30)] * 2, list(range(30)), max_steps=5)
    assert not finished  # stopped by the step limit, so nothing is claimed


def test_solve_and_fewest_slots_leave_the_callers_graph_as_it_was():
    # EMPTY has no enrolment, so it is not in the conflict graph: the engines add it to a copy of their own
    from timetabler.conflicts import conflict_graph
    from timetabler.model import Event
    from timetabler.plan import solve_checked
    from timetabler.scheduling import SolveOptions, fewest_slots

    p = Problem([("a", "X"), ("a", "Y")], events={"X": Event("X"), "Y": Event("Y"), "EMPTY": Event("EMPTY")})
    graph = conflict_graph(p)
    before = (sorted(graph.nodes), sorted(graph.edges))
    run = solve_checked(p, generic_slots(2), SolveOptions(time_limit=2, workers=1), graph=graph)
    assert run.validation.ok and set(run.assignment) == {"X", "Y", "EMPTY"}
    assert fewest_slots(p, options=SolveOptions(time_limit=2, workers=1), graph=graph).upper == 2
    assert (sorted(graph.nodes), sorted(graph.edges)) == before
