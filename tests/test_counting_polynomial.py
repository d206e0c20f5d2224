"""The chromatic polynomial against closed forms from the literature and a reference library.

Sources are named beside each check. Values recalled from memory are marked as such.
"""

from __future__ import annotations

import math

import networkx as nx
import pytest
import sympy
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from timetabler.counting import chromatic_polynomial
from timetabler.counting.polynomial import (
    cycle_power,
    falling_to_power,
    kronecker_bits,
    linear_factors_power,
    poly_div_linear,
    poly_eval,
    poly_mul_linear,
    power_to_falling,
    stirling2,
    unpack_at_power_of_two,
)

K = sympy.Symbol("k")


def networkx_power(graph: nx.Graph) -> list[int]:
    """Reference: networkx.chromatic_polynomial (deletion–contraction, sympy), lowest degree first."""
    if graph.number_of_nodes() == 0:
        return [1]
    expr = nx.chromatic_polynomial(graph)
    symbol = next(iter(expr.free_symbols)) if expr.free_symbols else K
    return [int(c) for c in reversed(sympy.Poly(expr, symbol).all_coeffs())]


@st.composite
def small_graphs(draw, max_nodes=9, max_edges=9):
    n = draw(st.integers(min_value=1, max_value=max_nodes))
    pairs = [(i, j) for i in range(n) for j in range(i + 1, n)]
    edges = draw(st.lists(st.sampled_from(pairs), max_size=max_edges, unique=True)) if pairs else []
    g = nx.Graph()
    g.add_nodes_from(range(n))
    g.add_edges_from(edges)
    return g


# networkx.chromatic_polynomial is the reference library named in the issue
@settings(max_examples=50, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(small_graphs())
def test_agrees_with_networkx_on_random_small_graphs(graph):
    assert chromatic_polynomial(graph).power == networkx_power(graph)


@pytest.mark.parametrize("n", range(1, 9))
def test_complete_graph_is_falling_factorial(n):
    # Read 1968: P(K_n, k) = k (k−1) … (k−n+1)
    p = chromatic_polynomial(nx.complete_graph(n))
    for k in range(0, 12):
        assert p(k) == math.perm(k, n) if k >= n else p(k) == 0
    assert p.falling == [0] * n + [1]


@pytest.mark.parametrize("n", range(3, 16))
def test_cycles_closed_form(n):
    # Read 1968: P(C_n, k) = (k−1)^n + (−1)^n (k−1)
    p = chromatic_polynomial(nx.cycle_graph(n))
    for k in range(0, 8):
        assert p(k) == (k - 1) ** n + (-1) ** n * (k - 1)
    assert p.power == cycle_power(n)


@pytest.mark.parametrize("seed", range(6))
def test_random_trees_closed_form(seed):
    # Read 1968: every tree on n vertices has P(T, k) = k (k−1)^(n−1)
    n = 5 + 7 * seed
    tree = nx.random_labeled_tree(n, seed=seed) if hasattr(nx, "random_labeled_tree") else nx.random_tree(n, seed=seed)
    p = chromatic_polynomial(tree)
    for k in range(0, 6):
        assert p(k) == k * (k - 1) ** (n - 1)


@pytest.mark.parametrize("n", range(3, 12))
def test_wheels_closed_form(n):
    # Dong, Koh & Teo 2005, ch. 1: the wheel (hub + C_n) has P = k · P(C_n, k − 1)
    wheel = nx.wheel_graph(n + 1)  # hub 0 and a cycle on n vertices
    p = chromatic_polynomial(wheel)
    for k in range(0, 8):
        assert p(k) == k * ((k - 2) ** n + (-1) ** n * (k - 2))


@pytest.mark.parametrize("a,b", [(1, 1), (2, 3), (3, 3), (4, 5), (5, 6)])
def test_complete_bipartite_by_stirling_numbers(a, b):
    # Dong, Koh & Teo 2005 (complete bipartite graphs): colour side A with exactly j
    # colours (S(a, j) partitions, k(k−1)…(k−j+1) labellings); side B then uses the other
    # k − j colours freely: P(K_{a,b}, k) = Σ_j S(a, j) k^(j) (k − j)^b
    p = chromatic_polynomial(nx.complete_bipartite_graph(a, b))
    for k in range(0, 8):
        expected = sum(stirling2(a, j) * math.perm(k, j) * (k - j) ** b for j in range(a + 1) if j <= k)
        assert p(k) == expected


@settings(max_examples=40, deadline=None)
@given(small_graphs(max_nodes=14, max_edges=30))
def test_whitney_coefficient_identities(graph):
    # Whitney 1932 (see Read 1968, Theorem 2): monic of degree n; k^(n−1) has −m;
    # k^(n−2) has C(m, 2) − (number of triangles); coefficients alternate in sign;
    # the lowest non-zero power is k^c for c connected components.
    p = chromatic_polynomial(graph)
    n, m = graph.number_of_nodes(), graph.number_of_edges()
    triangles = sum(nx.triangles(graph).values()) // 3
    assert p.degree == n and p.power[n] == 1
    assert p.power[n - 1] == -m
    if n >= 2:
        assert p.power[n - 2] == math.comb(m, 2) - triangles
    for i, c in enumerate(p.power):
        assert c == 0 or (c > 0) == ((n - i) % 2 == 0)
    lowest = next(i for i, c in enumerate(p.power) if c)
    assert lowest == nx.number_connected_components(graph)


def test_petersen_graph_has_120_three_colourings():
    # The Petersen graph has exactly 120 proper 3-colourings and chromatic number 3
    # (value as recalled from the literature, e.g. Biggs, Algebraic Graph Theory).
    p = chromatic_polynomial(nx.petersen_graph())
    assert p(3) == 120
    assert p(2) == 0
    assert p.chromatic_number == 3
    # the whole polynomial, k(k−1)(k−2)(k^7 − 12k^6 + 67k^5 − 230k^4 + 529k^3 − 814k^2
    # + 775k − 352) (as recalled from Biggs, Algebraic Graph Theory)
    assert p.power == linear_factors_power([0, 1, 2], [-352, 775, -814, 529, -230, 67, -12, 1])


@pytest.mark.parametrize("n,expected", [(1, 3), (2, 18), (3, 246), (4, 7812), (5, 580986)])
def test_square_grid_three_colourings_oeis_a078099(n, expected):
    # OEIS A078099: proper 3-colourings of the n×n grid graph (values as recalled)
    p = chromatic_polynomial(nx.grid_2d_graph(n, n))
    assert p(3) == expected


@settings(max_examples=40, deadline=None)
@given(small_graphs(max_nodes=10, max_edges=25))
def test_falling_factorial_coefficients_count_groupings(graph):
    # a_j = number of partitions of V into j independent sets: check by brute force over
    # all set partitions (small graphs), and both bases evaluate to the same numbers.
    p = chromatic_polynomial(graph)
    nodes = list(graph)
    counts = [0] * (len(nodes) + 1)
    for partition in _set_partitions(nodes):
        if all(not graph.has_edge(u, v) for block in partition for u in block for v in block if u != v):
            counts[len(partition)] += 1
    assert p.falling == counts
    assert falling_to_power(p.falling) == p.power
    for k in range(0, 6):
        assert sum(a * math.perm(k, j) for j, a in enumerate(p.falling)) == p(k)


def _set_partitions(items):
    if not items:
        yield []
        return
    first, rest = items[0], items[1:]
    for part in _set_partitions(rest):
        yield [[first]] + part
        for i in range(len(part)):
            yield part[:i] + [[first] + part[i]] + part[i + 1:]


def test_basis_conversions_round_trip():
    # Graham, Knuth & Patashnik §6.1: k^i = Σ_j S(i, j) k^(j); the conversion is invertible
    for power in ([0, 0, 0, 1], [3, -1, 4, -1, 5], [0, 1]):
        assert falling_to_power(power_to_falling(power)) == power


def test_kronecker_unpacking_and_linear_division():
    poly = [5, -7, 0, 3, -1]
    bits = 8
    assert unpack_at_power_of_two(poly_eval(poly, 1 << bits), bits, 4) == poly
    assert poly_div_linear(poly_mul_linear(poly, 3), 3) == poly
    with pytest.raises(ArithmeticError):
        poly_div_linear([1, 0, 1], 1)  # k^2 + 1 has no root 1
    # the bit budget covers Whitney's bound C(m, i) on every coefficient
    assert (1 << (kronecker_bits(10, 45) - 1)) > 2 * max(math.comb(45, i) for i in range(10))
