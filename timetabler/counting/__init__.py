"""Counting clash-free timetables: chromatic polynomials, exact where the graph allows.

``from timetabler.counting import count_timetables, chromatic_polynomial``

- :func:`chromatic_polynomial` — exact integer coefficients (power and falling-factorial
  bases), evaluation at any k, the chromatic number (:mod:`.reductions`).
- :func:`count_timetables` — per number of slots: the count (exact, or bounds and an
  estimate), per-component breakdown, ratios, groupings, what-if figures
  (:mod:`.timetables`).
"""

from .budget import Budget, BudgetExceeded
from .polynomial import ChromaticPolynomial
from .reductions import ENGINES, chromatic_polynomial
from .timetables import ComponentCount, CountReport, SlotCount, count_timetables

__all__ = [
    "Budget",
    "BudgetExceeded",
    "ChromaticPolynomial",
    "ComponentCount",
    "CountReport",
    "ENGINES",
    "SlotCount",
    "chromatic_polynomial",
    "count_timetables",
]
