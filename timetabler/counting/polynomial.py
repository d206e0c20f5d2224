"""Chromatic polynomials as exact integer coefficient lists, and the closed forms.

A chromatic polynomial of a graph with ``n`` vertices is held two ways:

power basis
    ``P(k) = Σ_i c_i k^i`` with ``c_i`` exact Python ints, lowest degree first.
falling-factorial basis
    ``P(k) = Σ_j a_j k(k−1)…(k−j+1)``; ``a_j`` is the number of ways to split the vertices
    into ``j`` non-empty independent sets (for a timetable: ``j`` unlabelled clash-free
    groups of events). The two bases are linked by the Stirling numbers:
    ``k^i = Σ_j S(i, j) k^(j)`` (second kind) and ``k^(j) = Σ_i s(j, i) k^i`` (signed
    first kind) — Graham, Knuth & Patashnik, *Concrete Mathematics*, §6.1.

Closed forms used here (Read, "An introduction to chromatic polynomials", J. Combin.
Theory 4 (1968); Dong, Koh & Teo, *Chromatic Polynomials and Chromaticity of Graphs*,
2005): complete graph ``K_n``: ``k^(n)``; cycle ``C_n``: ``(k−1)^n + (−1)^n (k−1)``;
tree on ``n`` vertices: ``k (k−1)^(n−1)``; edgeless graph: ``k^n``.

Kronecker substitution
----------------------
The engines never carry polynomials in their inner loops. They evaluate ``P(G, X)`` at one
huge integer ``X = 2^F`` with plain Python ints and recover every coefficient from the
base-``X`` digits (:func:`unpack_at_power_of_two`). This is exact as long as
``X > 2·max|c_i|``; Whitney's broken-circuit theorem (Whitney 1932) gives
``|c_{n−i}| ≤ C(m, i)`` for a graph with ``m`` edges, so :func:`kronecker_bits` chooses
``F`` from that binomial bound.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from functools import lru_cache
from typing import Sequence


# --------------------------------------------------------------------------- arithmetic


def poly_mul(a: Sequence[int], b: Sequence[int]) -> list[int]:
    """Product of two power-basis coefficient lists (lowest degree first)."""
    if not a or not b:
        return []
    out = [0] * (len(a) + len(b) - 1)
    for i, x in enumerate(a):
        if x:
            for j, y in enumerate(b):
                out[i + j] += x * y
    return out


def poly_mul_linear(a: Sequence[int], root: int) -> list[int]:
    """``a(k) · (k − root)``."""
    out = [0] * (len(a) + 1)
    for i, x in enumerate(a):
        out[i + 1] += x
        out[i] -= root * x
    return out


def poly_div_linear(a: Sequence[int], root: int) -> list[int]:
    """Exact quotient ``a(k) / (k − root)``; raises ``ArithmeticError`` when not exact."""
    a = list(a)
    n = len(a) - 1
    if n < 1:
        raise ArithmeticError("cannot divide a constant by a linear factor")
    q = [0] * n
    carry = 0
    for i in range(n, 0, -1):
        carry = a[i] + carry * root if i < n else a[n]
        q[i - 1] = carry
    if a[0] + carry * root != 0:
        raise ArithmeticError(f"(k - {root}) does not divide the polynomial")
    return q


def poly_eval(a: Sequence[int], k: int) -> int:
    """Horner evaluation at an integer, exact."""
    value = 0
    for c in reversed(a):
        value = value * k + c
    return value


def falling_factorial(k: int, j: int) -> int:
    """``k (k−1) … (k−j+1)``; zero when ``0 ≤ k < j``."""
    out = 1
    for i in range(j):
        out *= k - i
        if out == 0:
            return 0
    return out


@lru_cache(maxsize=None)
def _stirling2_row(n: int) -> tuple[int, ...]:
    if n == 0:
        return (1,)
    prev = _stirling2_row(n - 1)
    row = [0] * (n + 1)
    for j in range(1, n + 1):
        row[j] = (prev[j - 1] if j - 1 < len(prev) else 0) + (j * prev[j] if j < len(prev) else 0)
    return tuple(row)


@lru_cache(maxsize=None)
def _stirling1_row(n: int) -> tuple[int, ...]:
    """Signed Stirling numbers of the first kind: coefficients of ``k^(n)`` in powers of k."""
    if n == 0:
        return (1,)
    return tuple(poly_mul_linear(_stirling1_row(n - 1), n - 1))


def stirling2(n: int, j: int) -> int:
    """Stirling number of the second kind ``S(n, j)`` (partitions of n things into j blocks)."""
    row = _stirling2_row(n)
    return row[j] if 0 <= j < len(row) else 0


def power_to_falling(power: Sequence[int]) -> list[int]:
    """Falling-factorial coefficients from power-basis ones (via ``S(i, j)``)."""
    out = [0] * len(power)
    for i, c in enumerate(power):
        if c:
            row = _stirling2_row(i)
            for j in range(i + 1):
                if row[j]:
                    out[j] += c * row[j]
    return out


def falling_to_power(falling: Sequence[int]) -> list[int]:
    """Power-basis coefficients from falling-factorial ones (via signed ``s(j, i)``)."""
    out = [0] * len(falling)
    for j, a in enumerate(falling):
        if a:
            row = _stirling1_row(j)
            for i in range(j + 1):
                out[i] += a * row[i]
    return out


# --------------------------------------------------------------------------- Kronecker


def kronecker_bits(n: int, m: int) -> int:
    """Bits ``F`` so that ``X = 2^F`` exceeds twice every coefficient of a chromatic polynomial.

    Whitney's broken-circuit theorem bounds ``|c_{n−i}|`` by ``C(m, i)`` for ``i ≤ n−1``.
    """
    if n <= 0:
        return 2
    biggest = max(math.comb(m, i) for i in range(0, min(n, m + 1)))
    return biggest.bit_length() + 2


def unpack_at_power_of_two(value: int, bits: int, degree: int) -> list[int]:
    """Coefficients ``c_0 … c_degree`` of the polynomial whose value at ``2^bits`` is ``value``.

    Digits are read in the balanced range ``[−2^(bits−1), 2^(bits−1))``; the caller
    guarantees (by :func:`kronecker_bits`) that every coefficient lies in it.
    """
    mask = (1 << bits) - 1
    half = 1 << (bits - 1)
    out = []
    for _ in range(degree + 1):
        digit = value & mask
        if digit >= half:
            digit -= 1 << bits
        out.append(digit)
        value = (value - digit) >> bits
    if value != 0:
        raise ArithmeticError("value has more digits than the stated degree")
    return out


# --------------------------------------------------------------------------- the object


@dataclass
class ChromaticPolynomial:
    """The chromatic polynomial of a graph, exact.

    Attributes
    ----------
    power : list[int]
        Coefficients in the power basis, lowest degree first (``power[i]`` multiplies k^i).
    method : str
        How it was obtained (for reports): e.g. ``"closed form"``, ``"frontier"``.

    Examples
    --------
    >>> import networkx as nx
    >>> from timetabler.counting import chromatic_polynomial
    >>> p = chromatic_polynomial(nx.cycle_graph(4))
    >>> p.power, p.falling, p(3)
    ([0, -3, 6, -4, 1], [0, 0, 1, 2, 1], 18)
    """

    power: list[int]
    method: str = ""
    _falling: list[int] | None = field(default=None, repr=False)

    @property
    def degree(self) -> int:
        return len(self.power) - 1

    @property
    def falling(self) -> list[int]:
        """``a_j``: ways to split the vertices into ``j`` non-empty independent sets."""
        if self._falling is None:
            self._falling = power_to_falling(self.power)
        return self._falling

    def __call__(self, k: int) -> int:
        return poly_eval(self.power, int(k))

    def groupings(self, k: int) -> int:
        """Ways to split the vertices into at most ``k`` non-empty independent sets."""
        return sum(self.falling[: max(0, k) + 1])

    @property
    def chromatic_number(self) -> int:
        """Smallest ``k ≥ 0`` with ``P(k) > 0`` (0 only for the empty graph)."""
        for k in range(0, self.degree + 1):
            if self(k) > 0:
                return k
        return self.degree  # unreachable for a chromatic polynomial

    def to_json(self) -> dict:
        return {
            "degree": self.degree,
            "power": [str(c) for c in self.power],
            "falling": [str(a) for a in self.falling],
            "method": self.method,
        }

    def pretty(self, variable: str = "k") -> str:
        """Human form, highest degree first: ``k^4 - 4 k^3 + 6 k^2 - 3 k``."""
        terms = []
        for i in range(self.degree, -1, -1):
            c = self.power[i]
            if c == 0:
                continue
            sign = "-" if c < 0 else "+"
            mag = abs(c)
            body = variable if i == 1 else (f"{variable}^{i}" if i > 1 else "")
            text = (str(mag) if (mag != 1 or not body) else "") + ((" " if mag != 1 and body else "") + body)
            terms.append((sign, text.strip()))
        if not terms:
            return "0"
        first_sign, first = terms[0]
        out = ("-" if first_sign == "-" else "") + first
        for sign, text in terms[1:]:
            out += f" {sign} {text}"
        return out


# --------------------------------------------------------------------------- closed forms


def cycle_power(n: int) -> list[int]:
    """``C_n`` (n ≥ 3): ``(k−1)^n + (−1)^n (k−1)`` (Read 1968)."""
    out = [1]
    for _ in range(n):
        out = poly_mul_linear(out, 1)
    sign = 1 if n % 2 == 0 else -1
    out[1] += sign
    out[0] -= sign
    return out


def edgeless_power(n: int) -> list[int]:
    """``n`` isolated vertices: ``k^n``."""
    return [0] * n + [1]


def linear_factors_power(roots: Sequence[int], base: Sequence[int] | None = None) -> list[int]:
    """``base(k) · Π (k − r)`` expanded (``base`` defaults to 1)."""
    out = list(base) if base is not None else [1]
    for r in roots:
        out = poly_mul_linear(out, r)
    return out
