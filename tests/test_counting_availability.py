"""Counts that honour availability: list-colouring counts checked against brute force."""

import itertools
import random

import networkx as nx

from timetabler.conflicts import conflict_graph
from timetabler.counting.problem_counts import count_problem
from timetabler.model import Attendee, Problem


def brute_force(graph: nx.Graph, k: int, allowed: dict) -> int:
    """Every assignment of 1..k to the events, kept when clash-free and within the lists (this test's own enumeration)."""
    nodes = sorted(graph)
    total = 0
    for slots in itertools.product(range(1, k + 1), repeat=len(nodes)):
        a = dict(zip(nodes, slots))
        if all(a[v] in allowed[v] for v in nodes) and all(a[u] != a[v] for u, v in graph.edges()):
            total += 1
    return total


def test_counts_with_unavailable_attendees_match_brute_force():
    rng = random.Random(7)
    seen = []
    for trial in range(6):
        people = [f"member{i}" for i in range(6)]
        events = [f"M{j}" for j in range(5)]
        pairs = sorted({(p, e) for p in people for e in rng.sample(events, 2)})
        k = 4
        away = {p: tuple(str(s) for s in rng.sample(range(1, k + 1), rng.randint(0, 2))) for p in people}
        problem = Problem(pairs, people={p: Attendee(p, away[p]) for p in people})
        graph = conflict_graph(problem)
        allowed = {e: {s for s in range(1, k + 1)
                       if not any((p, e) in set(pairs) and str(s) in away[p] for p in people)} for e in graph}
        report, _ = count_problem(problem, [k], graph=graph)
        count = report.counts[0]
        assert count.exact
        truth = brute_force(graph, k, allowed)
        assert count.timetables == truth, trial
        seen.append((truth, sum(len(a) < k for a in allowed.values())))
        assert "required attendees can make" in report.to_json()["meaning"]
    assert any(t > 0 and short for t, short in seen)  # some trials have both timetables and shortened lists
