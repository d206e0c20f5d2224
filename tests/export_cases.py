"""Small timetabling cases for the export and compare tests, with results from real engines.

Harrowgate Vale College is fictional; so are its attendees (HV-S0001 ...). Until the
scheduling and counting engines publish their entry points, the results here come from
exhaustive search over every assignment (tiny instances only) checked by the project's
independent validator, and from ``networkx.chromatic_polynomial`` (an external reference
implementation, evaluated with sympy) for the counts. When the engines are importable,
:func:`solve_run` and :func:`count_report` use them instead.
"""

from __future__ import annotations

import datetime as dt
import itertools
import math

import networkx as nx

from timetabler.conflicts import conflict_graph
from timetabler.counting import CountReport, SlotCount
from timetabler.model import Problem, Room, Slot
from timetabler.scheduling import SolveRun
from timetabler.scheduling.validator import validate

# A Harrowgate Vale College resit week: 6 papers, 12 candidates, 2 rooms.
ENROLMENTS = {
    "HV-S0001": ["MAT101", "PHY102", "CHE103"],
    "HV-S0002": ["MAT101", "PHY102"],
    "HV-S0003": ["MAT101", "BIO104"],
    "HV-S0004": ["PHY102", "CHE103"],
    "HV-S0005": ["CHE103", "HIS105"],
    "HV-S0006": ["BIO104", "HIS105"],
    "HV-S0007": ["BIO104", "GEO106"],
    "HV-S0008": ["GEO106"],
    "HV-S0009": ["MAT101", "GEO106"],
    "HV-S0010": ["HIS105"],
    "HV-S0011": ["PHY102", "GEO106"],
    "HV-S0012": ["CHE103", "BIO104", "MAT101"],
}


def small_problem(source: str = "", rooms: bool = True) -> Problem:
    pairs = [(a, e) for a, events in ENROLMENTS.items() for e in events]
    problem = Problem(pairs, source=source)
    if rooms:
        problem.rooms = [Room("Beacon Hall", 6), Room("Mill Room", 4)]
    return problem


def dated_slots(k: int, per_day: int = 2, first: dt.date = dt.date(2027, 6, 7)) -> list[Slot]:
    """K slots, ``per_day`` a day from ``first`` (09:00 and 14:00, two hours each)."""
    starts = [dt.time(9, 0), dt.time(14, 0), dt.time(17, 30)]
    out = []
    for i in range(k):
        day, session = divmod(i, per_day)
        date = first + dt.timedelta(days=day)
        out.append(Slot(f"{date:%a %d %b} {'am' if session == 0 else 'pm'}{'' if session < 2 else '2'}", date=date,
                        start=starts[session], length_minutes=120, day=day + 1))
    return out


# an exhaustive search's result is the solver's own result type, so exports see what they see from solve
BruteRun = SolveRun


def _seat(problem: Problem, assignment: dict[str, int], k: int) -> dict | None:
    """Seat each slot's events in distinct rooms, largest event in the largest room; None if impossible."""
    sizes = problem.event_sizes()
    rooms = sorted(problem.rooms, key=lambda r: -r.capacity)
    out = {}
    for s in range(1, k + 1):
        here = sorted((c for c, t in assignment.items() if t == s), key=lambda c: (-sizes[c], c))
        if len(here) > len(rooms):
            return None
        for code, room in zip(here, rooms):
            if sizes[code] > room.capacity:
                return None
            out[code] = [(room.name, sizes[code])]
    return out


def brute_force_run(problem: Problem, slots: list[Slot]) -> BruteRun:
    """The valid timetable of least validator penalty, by trying every assignment (tiny cases only)."""
    codes = problem.event_codes
    k = len(slots)
    graph = conflict_graph(problem)
    best = None
    for combo in itertools.product(range(1, k + 1), repeat=len(codes)):
        assignment = dict(zip(codes, combo))
        if any(assignment[u] == assignment[v] for u, v in graph.edges):
            continue
        rooms = _seat(problem, assignment, k) if problem.rooms else {}
        if rooms is None:
            continue
        verdict = validate(problem, slots, assignment, rooms or None)
        if verdict.ok and (best is None or verdict.penalty < best[0]):
            best = (verdict.penalty, assignment, rooms)
    if best is None:
        return BruteRun(k, list(slots), "infeasible", reason=f"no clash-free timetable with rooms in {k} slots",
                        proven=True)
    return BruteRun(k, list(slots), "optimal", best[1], best[2], penalty=best[0], bound=float(best[0]), proven=True)


def solve_run(problem: Problem, slots: list[Slot]):
    """A real SolveRun, checked by the validator as the commands check theirs (exports write the checks
    they are given)."""
    from timetabler.plan import solve_checked
    from timetabler.scheduling import SolveOptions

    return solve_checked(problem, slots, SolveOptions(time_limit=10, workers=2, seed=1, deterministic=True))


# reference counts travel in the counting engine's own result types, so exports see what they see from count
RefCount = SlotCount


def RefReport(counts: list, components: list | None = None, chromatic_number: int | None = None) -> CountReport:
    """A count report holding the given counts (the figures the exports read; the rest left empty)."""
    return CountReport(counts=list(counts), components=list(components or []), chromatic_number=chromatic_number,
                       events=0, clashes=0, isolated_events=0, constrained=False)


def reference_counts(graph: nx.Graph, ks: list[int]) -> CountReport:
    """P(G, k) from networkx.chromatic_polynomial (reference library; sympy polynomial)."""
    import sympy

    poly = sympy.Poly(nx.chromatic_polynomial(graph), sympy.Symbol("x"))
    out, previous = [], None
    for k in sorted(ks):
        value = int(poly.eval(k))
        out.append(RefCount(k, value, True, math.log10(value) if value > 0 else None,
                            ratio_to_previous=(value / previous) if previous else None))
        previous = value
    chi = next((k for k in range(0, len(graph) + 1) if int(poly.eval(k)) > 0), None)
    return RefReport(out, chromatic_number=chi)


def count_report(problem: Problem, ks: list[int]):
    """A real CountReport when the counting engine is available, else the reference counts."""
    try:
        from timetabler.counting import count_timetables
    except ImportError:
        return reference_counts(conflict_graph(problem), ks)
    return count_timetables(conflict_graph(problem), ks)


# --------------------------------------------------------------------------- reading sheets back


def comparison_of(ws):
    """The Comparison sheet (a row per figure, a column per slot count) as one dict per slot count."""
    values = list(ws.iter_rows(values_only=True))
    header = values[0]
    assert header[0] == "Figure"
    out = []
    for j, title in enumerate(header[1:], start=1):
        k = int(title.split()[0])
        row = {"Slots": k}
        for line in values[1:]:
            row[line[0]] = line[j]
        out.append(row)
    return out


def rows_of(ws):
    """Header and data rows of a sheet holding one table at A1, as dicts."""
    values = list(ws.iter_rows(values_only=True))
    header = list(values[0])
    return header, [dict(zip(header, row)) for row in values[1:] if any(v is not None for v in row)]
