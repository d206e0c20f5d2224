"""Counts honouring people (long events, extra time, unavailable days, quorums with optional attendees),
checked against references outside the counting code.

* Brute force: every assignment of start slots to the events is tried and kept when the
  independent validator (timetabler/scheduling/validator.py, which shares no code with
  timetabler/availability.py or the counting engines) finds no violation; the number kept is
  the number of timetables by definition.
* networkx: with one-slot events and nobody unavailable the count is the chromatic polynomial
  ``networkx.chromatic_polynomial(G)`` evaluated at K (through sympy).

The invented people sit on the boards of the Quillmarsh Society of Lens Grinders.
"""

from __future__ import annotations

import datetime as dt
import itertools
import random
from fractions import Fraction

import networkx as nx
import pytest
import sympy
from openpyxl import load_workbook

from timetabler.availability import Availability
from timetabler.conflicts import conflict_graph
from timetabler.counting import people_counts
from timetabler.counting.people_counts import PeopleCounter
from timetabler.counting.problem_counts import count_problem
from timetabler.model import Attendee, Event, Problem, Slot, generic_slots
from timetabler.scheduling import validate

FIRST_DAY = dt.date(2031, 5, 5)


def grid(days: int, hours: int) -> list[Slot]:
    """Touching 60-minute slots from 9:00, ``hours`` a day for ``days`` days."""
    return [Slot(f"D{d + 1} {9 + h}:00", date=FIRST_DAY + dt.timedelta(days=d), start=dt.time(9 + h),
                 length_minutes=60) for d in range(days) for h in range(hours)]


def brute_force(problem: Problem, slots: list[Slot]) -> int:
    """Every assignment of a start slot to every event, kept when the validator passes it."""
    codes = sorted(problem.events)
    kept = 0
    for starts in itertools.product(range(1, len(slots) + 1), repeat=len(codes)):
        if validate(problem, slots, dict(zip(codes, starts))).ok:
            kept += 1
    return kept


def counted(problem: Problem, slots: list[Slot], budget: float = 5.0):
    report, notes = count_problem(problem, [len(slots)], graph=conflict_graph(problem),
                                  slots_for=lambda k: slots, budget_seconds=budget)
    return report, notes


def assert_exact(problem: Problem, slots: list[Slot]) -> int:
    report, notes = counted(problem, slots)
    truth = brute_force(problem, slots)
    c = report.counts[0]
    assert c.exact and c.timetables == truth and c.lower == c.upper == truth
    assert not any("only bounded" in n for n in notes)
    return truth


def test_long_events_in_an_hourly_grid_with_an_unavailable_day():
    slots = grid(2, 4)  # two days, 9:00 to 13:00
    problem = Problem(
        [("orla", "BOARD"), ("orla", "LENS"), ("pell", "LENS"), ("pell", "AUDIT"), ("quade", "AUDIT"),
         ("quade", "BOARD"), ("rusk", "FUND")],
        events={"BOARD": Event("BOARD", duration_minutes=120), "AUDIT": Event("AUDIT", duration_minutes=180),
                "LENS": Event("LENS", duration_minutes=60), "FUND": Event("FUND", duration_minutes=90)},
        people={"pell": Attendee("pell", unavailable=("2031-05-06",)), "quade": Attendee("quade", unavailable=("5",))},
    )
    truth = assert_exact(problem, slots)
    # by hand: AUDIT (pell, day 1 only) in 9-12 or 10-13, LENS in the hour left; BOARD (quade not at D2 9:00) in
    # D2 10-12 or 11-13; FUND (rusk alone, two hours for 90 minutes) at any of 6 starts: 2 × 2 × 6
    assert truth == 24
    # the starts alone (the old upper bound) count more: the long events' second hours clash too
    found = Availability.of(problem, slots)
    assert not found.one_slot_each
    starts_only = nx.Graph(conflict_graph(problem))
    bound = sum(1 for combo in itertools.product(*(sorted(found.starts[e]) for e in sorted(starts_only)))
                if all(a != b for (a, b) in ((combo[sorted(starts_only).index(u)], combo[sorted(starts_only).index(v)])
                                             for u, v in starts_only.edges())))
    assert bound > truth


def test_extra_time_runs_into_the_next_slot():
    slots = grid(1, 5)
    problem = Problem(
        [("sable", "OPTICS"), ("sable", "GLASS"), ("sable", "PRISM"), ("tamsin", "GLASS"), ("tamsin", "PRISM")],
        events={c: Event(c, duration_minutes=60) for c in ("OPTICS", "GLASS", "PRISM")},
        people={"sable": Attendee("sable", extra_time_percent=50)},
    )
    found = Availability.of(problem, slots)
    assert found.sittings  # sable's 90 minutes take the next hour
    truth = assert_exact(problem, slots)
    # by hand: sable's sittings take two touching hours each and end by 14:00 (so no event starts at 13:00);
    # the three two-hour sittings on a four-hour morning: 0 ways, so the count is 0 exactly
    assert truth == 0
    five = grid(1, 6)
    assert assert_exact(problem, five) == 6  # 9-10-11 / 11-12 ... : the three sittings tile six hours, in 3! orders


def test_a_quorum_counting_optional_attendees_busy_elsewhere():
    slots = grid(1, 4)
    enrol = [("ulla", "COUNCIL"), ("vane", "COUNCIL"), ("wren", "COUNCIL"), ("vane", "TOOLS"), ("wren", "MARKET"),
             ("ulla", "TOOLS")]
    problem = Problem(enrol, events={"COUNCIL": Event("COUNCIL", quorum=2), "TOOLS": Event("TOOLS"),
                                     "MARKET": Event("MARKET")},
                      optional={("vane", "COUNCIL"), ("wren", "COUNCIL")},
                      people={"wren": Attendee("wren", unavailable=("1",))})
    counter = PeopleCounter(problem)
    assert counter.live_quorums == ["COUNCIL"]
    truth = assert_exact(problem, slots)
    assert 0 < truth < 4 ** 3
    # the clash what-ifs count plain colourings, which these rules are not: none are given
    report, _ = counted(problem, slots)
    assert report.most_freeing_clashes == [] and report.riskiest_absent_clashes == []


def test_random_small_problems_match_brute_force():
    rng = random.Random(20310505)
    kinds = {"long": 0, "extra": 0, "quorum": 0, "nonzero": 0}
    for trial in range(30):
        days, hours = rng.choice([(1, 4), (2, 3), (2, 2), (1, 5), (3, 2)])
        slots = grid(days, hours)
        problem = random_problem(rng, days, hours)
        truth = assert_exact(problem, slots)
        found = Availability.of(problem, slots)
        kinds["long"] += bool(found.spans)
        kinds["extra"] += bool(found.sittings)
        kinds["quorum"] += bool(PeopleCounter(problem).live_quorums)
        kinds["nonzero"] += truth > 0
    assert min(kinds.values()) >= 3, kinds  # every rule was in play, and many cases have timetables


def random_problem(rng: random.Random, days: int, hours: int) -> Problem:
    k = days * hours
    names = ["xan", "yeva", "zorn", "abel", "brin"][:rng.randint(2, 5)]
    codes = [f"G{i}" for i in range(rng.randint(2, 4))]
    events = {c: Event(c, duration_minutes=rng.choice([60, 60, 90, 120])) for c in codes}
    enrol, optional = [], set()
    for c in codes:
        for a in rng.sample(names, rng.randint(1, len(names))):
            enrol.append((a, c))
            if rng.random() < 0.3:
                optional.add((a, c))
    for c in codes:
        if rng.random() < 0.4:
            events[c].quorum = rng.randint(1, sum(1 for _, cc in enrol if cc == c))
    people = {}
    for a in names:
        refs = [str(s) for s in rng.sample(range(1, k + 1), rng.randint(0, 1))]
        if rng.random() < 0.2:
            refs.append((FIRST_DAY + dt.timedelta(days=rng.randrange(days))).isoformat())
        extra = rng.choice([0, 0, 25, 50])
        if refs or extra:
            people[a] = Attendee(a, unavailable=tuple(refs), extra_time_percent=extra)
    return Problem(enrol, events=events, people=people, optional=optional)


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_without_people_the_count_is_the_chromatic_polynomial(seed):
    # reference: networkx.chromatic_polynomial, evaluated with sympy
    graph = nx.gnp_random_graph(7, 0.45, seed=seed)
    problem = Problem([(f"member{u}-{v}", f"E{w}") for u, v in graph.edges() for w in (u, v)],
                      events={f"E{v}": Event(f"E{v}") for v in graph})
    x = sympy.Symbol("x")
    poly = sympy.Poly(nx.chromatic_polynomial(nx.relabel_nodes(graph, lambda v: f"E{v}")), x)
    counter = PeopleCounter(problem)
    for k in range(1, 6):
        # the events' lists are full (every slot allowed), with or without times on the slots
        for slots in (generic_slots(k), grid(1, k)):
            found = Availability.of(problem, slots)
            assert found.one_slot_each and all(len(s) == k for s in found.starts.values())
            assert counter.total(found) == int(poly.eval(k))


def test_full_lists_with_people_present_give_the_chromatic_polynomial():
    # people rows that take nothing away (no unavailability, no extra time) and one-hour events in hourly slots
    graph = nx.cycle_graph(5)
    problem = Problem([(f"m{u}{v}", f"R{w}") for u, v in graph.edges() for w in (u, v)],
                      events={f"R{v}": Event(f"R{v}", duration_minutes=60) for v in graph},
                      people={"m01": Attendee("m01")})
    x = sympy.Symbol("x")
    poly = sympy.Poly(nx.chromatic_polynomial(graph), x)  # k (k−1)... for C5: (k−1)^5 − (k−1)
    for k in (2, 3, 4):
        report, _ = counted(problem, grid(1, k))
        assert report.counts[0].exact and report.counts[0].timetables == int(poly.eval(k))


def test_what_if_gains_are_brute_force_ratios():
    slots = grid(2, 3)
    enrol = [("corm", "SEAL"), ("corm", "CHART"), ("dace", "CHART"), ("dace", "SEAL"), ("dace", "LEDGER"),
             ("eska", "LEDGER"), ("eska", "SEAL"), ("fenn", "ANNUAL")]
    problem = Problem(enrol, events={"SEAL": Event("SEAL", duration_minutes=120), "CHART": Event("CHART"),
                                     "LEDGER": Event("LEDGER"), "ANNUAL": Event("ANNUAL")},
                      people={"corm": Attendee("corm", unavailable=("2031-05-05",)),
                              "dace": Attendee("dace", unavailable=("D1 9:00",)),
                              "eska": Attendee("eska", unavailable=("3", "4")),
                              "fenn": Attendee("fenn", unavailable=("1", "2", "3")),
                              "gorse": Attendee("gorse", unavailable=("1",))})  # on no event: no figure
    report, _ = counted(problem, slots)
    base = brute_force(problem, slots)
    # by hand: corm only on day 2, so SEAL (two hours, eska not at D2 9:00) takes D2 10-12 and CHART D2 9:00;
    # LEDGER then at D1 10:00 (dace not at 9, eska not at 11); ANNUAL in any hour of D2: 1 × 1 × 3
    assert report.counts[0].exact and report.counts[0].timetables == base == 3
    named = report.most_limiting_people
    assert named and [d["gain"] for d in named] == sorted((d["gain"] for d in named), reverse=True)
    freed = {}
    for name in ("corm", "dace", "eska", "fenn", "gorse"):
        free = dict(problem.people)
        free[name] = Attendee(name)
        freed[name] = brute_force(Problem(enrol, events=problem.events, people=free), slots)
    for item in named:
        truth = Fraction(freed[item["attendee"]], base)
        assert item["slots"] == len(slots) and item["gain"] == pytest.approx(float(truth)) and truth > 1
    # every attendee whose unavailability removes timetables is named (at most five), the others not
    assert {d["attendee"] for d in named} == {n for n, v in freed.items() if v != base} and freed["gorse"] == base
    doc = report.to_json()["most_limiting_people"]
    assert doc == named and set(doc[0]) >= {"attendee", "slots", "gain"}


def test_a_group_too_large_for_the_time_gets_proven_bounds(monkeypatch):
    rng = random.Random(77)
    checked = 0
    monkeypatch.setattr(people_counts, "MAX_STATES", 0)  # no group with a rule finishes
    for trial in range(25):
        slots = grid(2, 3)
        problem = random_problem(rng, 2, 3)
        report, notes = counted(problem, slots, budget=2.0)
        c = report.counts[0]
        truth = brute_force(problem, slots)
        if c.exact:
            assert c.timetables == truth  # a zero found another way (a group with no start), or no rule at all
            continue
        assert c.lower <= truth <= c.upper and c.timetables is None
        assert any("only bounded" in n for n in notes)
        checked += truth > 0 and c.lower > 0
    assert checked >= 2  # the lower bound from a timetable found by search is above 0 where one exists


def test_the_lower_bound_from_one_timetable_is_proven():
    rng = random.Random(5)
    for trial in range(15):
        slots = grid(1, 5)
        problem = random_problem(rng, 1, 5)
        counter = PeopleCounter(problem)
        found = Availability.of(problem, slots)
        truth = brute_force(problem, slots)
        lower = 1
        whole = {}
        for group in counter.groups:
            lower *= counter.lower_bound(found, group)
            one = people_counts.find_timetable(counter.model(found, group))
            if one is not None:
                whole.update(one)
        assert lower <= truth and (lower > 0) == (truth > 0)
        if truth:  # the timetable the bound stands on passes the validator
            assert len(whole) == len(problem.events) and validate(problem, slots, whole).ok


def test_what_if_rows_name_the_attendee_and_pseudonyms_hide_them(tmp_path):
    from timetabler.export.publishing import publish
    from timetabler.export.pseudonyms import Pseudonyms
    from timetabler.export.tables import what_if_table

    slots = grid(2, 3)
    problem = Problem([("Hale Morrow", "SEAL"), ("Hale Morrow", "CHART"), ("Ines Vapor", "CHART")],
                      events={"SEAL": Event("SEAL", duration_minutes=120), "CHART": Event("CHART")},
                      people={"Hale Morrow": Attendee("Hale Morrow", unavailable=("2031-05-05",))},
                      slots=slots, source=str(tmp_path / "board.xlsx"))
    report, _ = counted(problem, slots)
    rows = [r for r in what_if_table(report).rows if r[0] == "attendee made free"]
    assert rows and rows[0][1] == "Hale Morrow" and rows[0][2] == "" and rows[0][3] == 6
    assert rows[0][5].startswith("if Hale Morrow could make every slot there would be")
    key = tmp_path / "key"
    key.write_text("ab" * 32 + "\n")
    out = tmp_path / "board-out.xlsx"
    publish({"out": str(out), "pseudonyms": True, "pseudonym_key": str(key)}, problem=problem, runs=[],
            counts=report, quiet=True)
    sheet = load_workbook(out)["What if"]
    text = " ".join(str(v) for row in sheet.iter_rows(values_only=True) for v in row if v is not None)
    hidden = Pseudonyms(bytes.fromhex("ab" * 32))("Hale Morrow")
    assert "Hale Morrow" not in text and hidden in text
    assert report.most_limiting_people[0]["attendee"] == "Hale Morrow"  # the report itself is left as it was


def test_one_slot_events_agree_with_the_list_colouring_count():
    # where every event takes one slot for everyone, the count honouring people is the list-colouring
    # count that tests/test_counting_availability.py checks against its own brute force
    rng = random.Random(11)
    for trial in range(10):
        names = [f"n{i}" for i in range(8)]
        codes = [f"H{j}" for j in range(7)]
        pairs = sorted({(a, c) for a in names for c in rng.sample(codes, 2)})
        slots = grid(2, 3)
        people = {a: Attendee(a, unavailable=tuple(str(s) for s in rng.sample(range(1, 7), rng.randint(0, 2))))
                  for a in names}
        problem = Problem(pairs, people=people)
        found = Availability.of(problem, slots)
        assert found.one_slot_each and not PeopleCounter(problem).live_quorums
        report, _ = counted(problem, slots)
        assert report.counts[0].exact and PeopleCounter(problem).total(found) == report.counts[0].timetables


def test_a_large_board_keeps_to_the_time_and_its_bounds_hold():
    import time

    rng = random.Random(4)
    slots = grid(3, 6)
    codes = [f"B{i:02d}" for i in range(36)]
    enrol = sorted({(f"m{p}", c) for p in range(40) for c in rng.sample(codes, 3)})
    events = {c: Event(c, duration_minutes=rng.choice([60, 120])) for c in codes}
    people = {f"m{p}": Attendee(f"m{p}", unavailable=(str(rng.randint(1, 18)),)) for p in range(40)}
    # and a small group apart: two meetings of Sorrel, one of them long, Sorrel away on the first day
    small = [("sorrel", "S1"), ("sorrel", "S2"), ("teague", "S2")]
    small_events = {"S1": Event("S1", duration_minutes=120), "S2": Event("S2")}
    small_people = {"sorrel": Attendee("sorrel", unavailable=("2031-05-05",))}
    problem = Problem(enrol + small, events={**events, **small_events}, people={**people, **small_people})
    started = time.monotonic()
    report, notes = counted(problem, slots, budget=1.0)
    assert time.monotonic() - started < 2.5
    c = report.counts[0]
    assert not c.exact and c.timetables is None and 0 < c.lower <= c.upper and notes
    # the big group's attendees get no figure (their group was not counted); Sorrel's is the ratio of the
    # brute-force counts of the small group alone (the big group cancels)
    named = {d["attendee"]: d["gain"] for d in report.most_limiting_people}
    assert not any(name.startswith("m") for name in named)
    alone = Problem(small, events=small_events, people=small_people)
    freed = Problem(small, events=small_events)
    assert named["sorrel"] == pytest.approx(brute_force(freed, slots) / brute_force(alone, slots))
