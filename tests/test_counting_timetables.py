"""count_timetables against brute-force enumeration of timetables and closed forms."""

from __future__ import annotations

import itertools
import math
import random

import networkx as nx
import pytest

from timetabler.counting import chromatic_polynomial, count_timetables


def brute_force(graph: nx.Graph, k: int, fixed=None, barred=None) -> int:
    """Every assignment of events to slots 1..k, checked one by one (the definition)."""
    nodes = list(graph)
    total = 0
    for slots in itertools.product(range(1, k + 1), repeat=len(nodes)):
        at = dict(zip(nodes, slots))
        if any(at[u] == at[v] for u, v in graph.edges()):
            continue
        if fixed and any(at[e] != s for e, s in fixed.items()):
            continue
        if barred and any(at[e] in bs for e, bs in barred.items()):
            continue
        total += 1
    return total


def small_conflict_graph(seed: int) -> nx.Graph:
    rng = random.Random(seed)
    g = nx.gnp_random_graph(rng.randint(4, 7), rng.choice([0.25, 0.4, 0.6]), seed=seed)
    return nx.relabel_nodes(g, {v: f"HV{v:03d}" for v in g})


@pytest.mark.parametrize("seed", range(10))
def test_totals_match_enumeration(seed):
    g = small_conflict_graph(seed)
    report = count_timetables(g, [1, 2, 3, 4], what_if=False)
    for c in report.counts:
        assert c.exact
        assert c.timetables == brute_force(g, c.slots)
        assert c.lower == c.upper == c.timetables
    # the product over components (an isolated event gives k)
    for c in report.counts:
        product = c.slots ** report.isolated_events
        for comp in report.components:
            product *= next(x.timetables for x in comp.counts if x.slots == c.slots)
        assert product == c.timetables


@pytest.mark.parametrize("seed", range(8))
def test_fixed_and_barred_slots_match_enumeration(seed):
    g = small_conflict_graph(100 + seed)
    rng = random.Random(seed)
    nodes = sorted(g)
    fixed = {nodes[0]: rng.randint(1, 3)}
    barred = {nodes[-1]: {rng.randint(1, 4)}, nodes[1]: {1, 2}}
    for k in (2, 3, 4):
        report = count_timetables(g, [k], fixed=fixed, barred=barred, what_if=False)
        assert report.constrained
        assert report.counts[0].timetables == brute_force(g, k, fixed, barred)


def test_groupings_and_ratio_match_their_definitions():
    g = small_conflict_graph(3)
    report = count_timetables(g, [2, 3, 4], what_if=False)
    nodes = list(g)
    for c in report.counts:
        # splits into at most k non-empty clash-free groups, by brute force over labellings:
        # each grouping into j groups is counted j! times among surjective labellings by j slots
        brute = 0
        for j in range(1, c.slots + 1):
            onto = sum(1 for lab in itertools.product(range(j), repeat=len(nodes))
                       if len(set(lab)) == j and all(lab[nodes.index(u)] != lab[nodes.index(v)] for u, v in g.edges()))
            brute += onto // math.factorial(j)
        assert c.groupings == brute
        previous = brute_force(g, c.slots - 1)
        if previous:
            assert c.ratio_to_previous == pytest.approx(c.timetables / previous, rel=1e-12)


def test_chromatic_number_and_reason():
    # an odd cycle needs 3 slots (Read 1968: P(C_5, 2) = 1 − 1 = 0); a K_4 needs 4
    g = nx.disjoint_union(nx.cycle_graph(5), nx.complete_graph(4))
    report = count_timetables(g, [3, 4], what_if=False)
    assert report.chromatic_number == 4
    assert report.counts[0].timetables == 0
    assert "pairwise share attendees" in report.fewest_slots_reason


def test_what_if_figures_match_their_definitions():
    # share lost by a new clash u–v = P(G/uv, k) / P(G, k): the timetables with u, v together
    g = nx.relabel_nodes(nx.path_graph(5), lambda v: f"E{v}")
    report = count_timetables(g, [3])
    total = brute_force(g, 3)
    top = report.riskiest_absent_clashes[0]
    u, v = top["events"]
    together = sum(1 for lab in itertools.product(range(3), repeat=5)
                   if all(lab[a] != lab[b] for a, b in [(0, 1), (1, 2), (2, 3), (3, 4)])
                   and lab[int(u[1:])] == lab[int(v[1:])])
    assert top["share_lost"] == pytest.approx(together / total)
    gain = report.most_freeing_clashes[0]
    cut = nx.Graph(g)
    cut.remove_edge(*gain["events"])
    assert gain["gain"] == pytest.approx(brute_force(cut, 3) / total)


def test_too_large_is_not_exact_with_true_bounds():
    # a 3-regular graph of 150 events cannot be counted in a fifth of a second: the report
    # must say not exact, give null timetables in JSON, and bounds that hold
    g = nx.random_regular_graph(3, 150, seed=2)
    report = count_timetables(g, [4], budget_seconds=0.2, what_if=False)
    c = report.counts[0]
    assert not c.exact and c.timetables is None
    assert 0 < c.lower <= c.upper
    assert c.estimate_log10 is not None
    assert math.log10(c.lower) - 1 <= c.estimate_log10 <= math.log10(c.upper) + 1
    doc = report.to_json()
    assert doc["counts"][0]["timetables"] is None and doc["counts"][0]["exact"] is False
    assert report.chromatic_number is None


def test_json_contract_and_big_integers_as_text():
    g = nx.grid_2d_graph(6, 6)
    g = nx.relabel_nodes(g, lambda v: f"HV-{v[0]}{v[1]}")
    report = count_timetables(g, [5], what_if=False)
    doc = report.to_json()
    entry = doc["counts"][0]
    assert set(entry) >= {"slots", "timetables", "exact", "log10", "lower", "upper", "estimate_log10",
                          "ratio_to_previous", "groupings"}
    assert isinstance(entry["timetables"], str) and entry["timetables"].isdigit()
    assert int(entry["timetables"]) == chromatic_polynomial(g, engine="colour-classes", reduce=False)(5)
    assert entry["log10"] == pytest.approx(math.log10(int(entry["timetables"])))


def test_progress_reports_steps_and_groups():
    seen = []
    g = nx.disjoint_union(nx.random_regular_graph(3, 24, seed=1), nx.cycle_graph(7))
    count_timetables(g, [3], progress=lambda message, done, total: seen.append((done, total, message)),
                     what_if=False)
    assert seen[-1][0] == seen[-1][1] == 2  # two groups linked by clashes, both done
    assert any("step" in message for _, _, message in seen)  # the long count reported its steps
