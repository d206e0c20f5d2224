"""The published workbook, read back sheet by sheet with openpyxl and checked against the
solver's result, the independent validator and reference counts."""

from __future__ import annotations

import zipfile
from collections import defaultdict

import pytest
from openpyxl import load_workbook

from export_cases import RefCount, RefReport, comparison_of, count_report, dated_slots, rows_of, small_problem, solve_run
from timetabler.conflicts import conflict_graph
from timetabler.export.workbook import write_workbook
from timetabler.scheduling.validator import validate


@pytest.fixture(scope="module")
def published(tmp_path_factory):
    folder = tmp_path_factory.mktemp("book")
    source = folder / "resits.xlsx"
    source.write_bytes(b"stand-in input")  # only its name and identity matter to the exporter
    problem = small_problem(str(source))
    runs = [solve_run(problem, dated_slots(k)) for k in (4, 5)]
    counts = count_report(problem, [3, 4, 5])
    path = write_workbook(folder / "published.xlsx", problem=problem, runs=runs, counts=counts,
                          settings={"time limit (s)": 10})
    return problem, runs, counts, path, load_workbook(path)


def test_sheets_are_all_there_in_order(published):
    _, _, _, _, wb = published
    per_run = ["Grid", "Events", "Personal timetables", "Seats", "Rooms", "Attendee load"]
    expected = ["Overview", "Comparison", "Counts", "Count groups", "What if"]
    expected += [f"{s} ({k} slots)" for k in (4, 5) for s in per_run]
    assert wb.sheetnames == expected


def test_events_sheet_matches_the_assignment_with_real_dates(published):
    problem, runs, _, _, wb = published
    sizes = problem.event_sizes()
    for run in runs:
        ws = wb[f"Events ({run.slots} slots)"]
        header, rows = rows_of(ws)
        assert sorted(r["Event"] for r in rows) == sorted(problem.events)
        for r in rows:
            slot = run.slot_list[run.assignment[r["Event"]] - 1]
            assert r["Slot"] == run.assignment[r["Event"]]
            assert r["Slot label"] == slot.label
            assert r["Date"].date() == slot.date  # a real date cell, not text
            assert r["Start"] == slot.start and r["End"] == slot.end
            assert r["Size"] == sizes[r["Event"]]
            assert r["Rooms"] == ", ".join(name for name, _ in run.rooms[r["Event"]])
            assert r["Seats"] == sum(n for _, n in run.rooms[r["Event"]])
        date_cell = ws.cell(row=2, column=header.index("Date") + 1)
        assert date_cell.is_date and date_cell.number_format == "yyyy-mm-dd"


def test_personal_timetables_hold_every_enrolment_once_sorted(published):
    problem, runs, _, _, wb = published
    for run in runs:
        _, rows = rows_of(wb[f"Personal timetables ({run.slots} slots)"])
        got = [(r["Attendee"], r["Event"], r["Slot"]) for r in rows]
        assert sorted(got) == sorted((a, e, run.assignment[e]) for a, e in problem.enrolments)
        assert [r["Attendee"] for r in rows] == sorted(r["Attendee"] for r in rows)
        for r in rows:
            assert r["Date"].date() == run.slot_list[r["Slot"] - 1].date


def test_attendee_load_agrees_with_the_independent_validator(published):
    problem, runs, _, _, wb = published
    for run in runs:
        verdict = validate(problem, run.slot_list, run.assignment, run.rooms or None)
        assert verdict.ok, verdict.violations
        _, rows = rows_of(wb[f"Attendee load ({run.slots} slots)"])
        assert len(rows) == len(problem.attendees)
        assert sum(r["Back-to-back"] for r in rows) == verdict.soft["back_to_back"]
        assert sum(r["Same day, not back-to-back"] for r in rows) == verdict.soft["same_day"]
        assert sum(r["Overnight"] for r in rows) == verdict.soft["overnight"]
        assert sum(r["Proximity cost"] for r in rows) == verdict.soft["proximity"]
        assert all(r["Clashes"] == 0 for r in rows)
        for r in rows:
            assert r["Most in one day"] == verdict.attendee_load[r["Attendee"]]["most_in_one_day"]
            assert r["Clash or two in a day"] == ("yes" if r["Back-to-back"] or r["Same day, not back-to-back"] else "no")


def test_seats_and_rooms_add_up(published):
    problem, runs, _, _, wb = published
    sizes = problem.event_sizes()
    for run in runs:
        _, seats = rows_of(wb[f"Seats ({run.slots} slots)"])
        assert [r["Slot"] for r in seats] == list(range(1, run.slots + 1))
        for r in seats:
            here = [c for c, s in run.assignment.items() if s == r["Slot"]]
            assert r["Events"] == len(here)
            assert r["Seats needed"] == sum(sizes[c] for c in here)
            assert r["Seat limit"] == sum(room.capacity for room in problem.rooms)
            assert r["Free seats"] == r["Seat limit"] - r["Seats needed"]
        _, rooms = rows_of(wb[f"Rooms ({run.slots} slots)"])
        assert len(rooms) == run.slots * len(problem.rooms)
        used = defaultdict(int)
        for code, placed in run.rooms.items():
            for name, n in placed:
                used[(run.assignment[code], name)] += n
        for r in rooms:
            assert r["Seats used"] == used[(r["Slot"], r["Room"])]
            assert r["Free seats"] == r["Capacity"] - r["Seats used"]


def test_grid_puts_each_event_once_in_its_day_and_session(published):
    problem, runs, _, _, wb = published
    for run in runs:
        ws = wb[f"Grid ({run.slots} slots)"]
        values = list(ws.iter_rows(values_only=True))
        assert values[0][:2] == ("Day", "Date")
        seen, day, heads = {}, -1, []
        for row in values[1:]:
            if row[0] is not None:  # a day's heading row: day, date, each session's slot and times
                day += 1
                heads = row[2:]
                assert row[1].date() == run.slot_list[2 * day].date
                continue
            for session, cell in enumerate(row[2:]):
                if cell is None:
                    continue
                code = cell.split(" ")[0]
                assert code not in seen
                seen[code] = (day, session)
                slot = run.slot_list[run.assignment[code] - 1]
                assert heads[session] == f"{slot.label} {slot.start:%H:%M}–{slot.end:%H:%M}"
        assert sorted(seen) == sorted(problem.events)
        for code, (day_index, session_index) in seen.items():
            # dated_slots puts two sessions on each day
            assert (day_index, session_index) == divmod(run.assignment[code] - 1, 2)


def _independent_attendee_figures(problem, run):
    """Attendees with a back-to-back pair and with two events on a day, counted directly."""
    b2b = two = 0
    for attendee, codes in problem.events_by_attendee().items():
        slots = sorted(run.assignment[c] for c in codes)
        days = [run.slot_list[s - 1].day for s in slots]
        if any(t - s == 1 and run.slot_list[s - 1].day == run.slot_list[t - 1].day for s, t in zip(slots, slots[1:])):
            b2b += 1
        if len(days) != len(set(days)):
            two += 1
    return b2b, two


def test_comparison_and_overview_report_each_run(published):
    problem, runs, counts, _, wb = published
    rows = comparison_of(wb["Comparison"])
    assert [r["Slots"] for r in rows] == [4, 5]
    sizes = problem.event_sizes()
    for r, run in zip(rows, runs):
        assert r["Status"] == run.status and r["Penalty"] == run.penalty
        assert r["Clash-free timetable exists"] == "yes"
        assert r["Validator"] == "valid"
        assert r["Days"] == len({s.day for s in run.slot_list})
        ref = next(c for c in counts.counts if c.slots == run.slots)
        assert r["Clash-free timetables"] == str(ref.timetables)
        b2b, two = _independent_attendee_figures(problem, run)
        assert (r["Attendees with back-to-back"], r["Attendees with two in a day"]) == (b2b, two)
        peak = max(sum(sizes[c] for c, s in run.assignment.items() if s == n) for n in range(1, run.slots + 1))
        assert r["Peak seats"] == peak
    overview = [row for row in wb["Overview"].iter_rows(values_only=True)]
    labels = {row[0]: row[1] for row in overview if row and row[0] is not None}
    assert labels["Events"] == len(problem.events)
    assert labels["Enrolments"] == len(problem.enrolments)
    assert labels["Clashing pairs of events"] == conflict_graph(problem).number_of_edges()
    assert labels["time limit (s)"] == 10
    statuses = [row for row in overview if row and row[0] in (4, 5)]
    assert [(row[1], row[4]) for row in statuses] == [(run.status, "valid") for run in runs]


def test_counts_are_text_and_match_networkx(published):
    problem, _, counts, _, wb = published
    ws = wb["Counts"]
    header, rows = rows_of(ws)
    from export_cases import reference_counts

    # reference: networkx.chromatic_polynomial evaluated with sympy
    reference = {c.slots: c.timetables for c in reference_counts(conflict_graph(problem), [3, 4, 5]).counts}
    assert {r["Slots"]: r["Clash-free timetables"] for r in rows} == {k: str(v) for k, v in reference.items()}
    column = header.index("Clash-free timetables") + 1
    assert all(ws.cell(row=i, column=column).data_type == "s" for i in range(2, len(rows) + 2))
    assert rows[1]["Ratio to previous"] == pytest.approx(reference[4] / reference[3])


def test_lists_are_excel_tables_with_filters_and_frozen_headers(published):
    _, _, _, _, wb = published
    for name in wb.sheetnames:
        ws = wb[name]
        if name == "Overview" or name.startswith("Grid"):
            continue
        assert ws.freeze_panes == ("B2" if name == "Comparison" else "A2"), name
        (table,) = ws.tables.values()
        assert table.ref == f"A1:{ws.cell(row=1, column=ws.max_column).column_letter}{ws.max_row}", name
        assert table.autoFilter is not None
        assert [c.name for c in table.tableColumns] == [c.value for c in ws[1]]
        assert ws.column_dimensions["A"].width >= 8
        # printed: one page wide, landscape, the header row repeated on every page
        assert ws.page_setup.orientation == "landscape" and ws.page_setup.fitToWidth == 1
        assert ws.sheet_properties.pageSetUpPr.fitToPage and ws.print_title_rows == "$1:$1"
    assert wb["Attendee load (4 slots)"].conditional_formatting  # problems are highlighted


def test_counts_sheet_carries_a_native_chart_of_log10(published):
    _, _, _, path, _ = published
    with zipfile.ZipFile(path) as z:
        charts = [n for n in z.namelist() if n.startswith("xl/charts/chart")]
        assert len(charts) == 1
        xml = z.read(charts[0]).decode("utf-8")
    assert "scatterChart" in xml
    assert "'Counts'!$D$2:$D$4" in xml or "Counts!$D$2:$D$4" in xml  # log10 column, three slot counts
    assert "'Counts'!$A$2:$A$4" in xml or "Counts!$A$2:$A$4" in xml  # slots column


def test_a_thirty_digit_count_survives_the_round_trip(tmp_path):
    problem = small_problem()
    big = 123456789012345678901234567891  # 30 digits: far past a spreadsheet number's 15
    counts = RefReport([RefCount(40, big, True, 29.09), RefCount(41, big * 7 + 3, True, 29.94)])
    path = write_workbook(tmp_path / "big.xlsx", problem=problem, runs=[], counts=counts)
    _, rows = rows_of(load_workbook(path)["Counts"])
    assert int(rows[0]["Clash-free timetables"]) == big
    assert int(rows[1]["Clash-free timetables"]) == big * 7 + 3
    assert rows[0]["Digits"] == 30


def test_codes_that_look_like_formulas_stay_text(tmp_path):
    problem = small_problem(rooms=False)
    problem.enrolments.append(("HV-S0013", "=SUM(A1:A2)"))
    problem.__post_init__()
    run = solve_run(problem, dated_slots(5))
    path = write_workbook(tmp_path / "f.xlsx", problem=problem, runs=[run])
    ws = load_workbook(path)["Events"]
    cells = [c for c in ws["A"] if c.value == "=SUM(A1:A2)"]
    assert len(cells) == 1 and cells[0].data_type == "s"


def test_infeasible_only_gives_overview_and_comparison_with_the_reason(tmp_path):
    problem = small_problem()
    run = solve_run(problem, dated_slots(2))
    assert run.status == "infeasible"
    path = write_workbook(tmp_path / "none.xlsx", problem=problem, runs=[run])
    wb = load_workbook(path)
    assert wb.sheetnames == ["Overview", "Comparison"]
    rows = comparison_of(wb["Comparison"])
    assert rows[0]["Clash-free timetable exists"] == "no" and rows[0]["Reason"]
    assert rows[0]["Validator"] is None


def test_overview_lists_rules_and_pinned_events_and_the_timetable_keeps_them(tmp_path):
    from timetabler.model import Rule, RuleKind

    problem = small_problem(rooms=False)
    problem.rules = [Rule(RuleKind.BEFORE, ("PHY102", "MAT101")), Rule(RuleKind.DIFFERENT_DAYS, ("BIO104", "GEO106"))]
    problem.events["HIS105"].fixed_slot = "1"
    problem.events["CHE103"].barred_slots = ("2", "3")
    slots = dated_slots(6)
    run = solve_run(problem, slots)
    verdict = validate(problem, slots, run.assignment)
    assert verdict.ok, verdict.violations
    path = write_workbook(tmp_path / "rules.xlsx", problem=problem, runs=[run])
    wb = load_workbook(path)
    text = [row[0] for row in wb["Overview"].iter_rows(values_only=True) if row and row[0]]
    for rule in problem.rules:
        assert rule.describe() in text
    assert "HIS105: fixed to slot 1" in text and "CHE103: barred from 2, 3" in text
    _, rows = rows_of(wb["Events"])
    slot = {r["Event"]: r["Slot"] for r in rows}
    assert slot["HIS105"] == 1 and slot["CHE103"] not in (2, 3) and slot["PHY102"] < slot["MAT101"]


def test_moves_sheet_lists_every_event_the_repair_moved(tmp_path):
    pytest.importorskip("timetabler.scheduling")
    from timetabler.scheduling import SolveOptions, solve

    problem = small_problem(rooms=False)
    slots = dated_slots(5)
    before = solve(problem, slots, SolveOptions(time_limit=5, seed=1, deterministic=True))
    # a late enrolment that clashes with the earlier timetable: six papers in five slots, so
    # some slot holds two papers; a new candidate sits both
    by_slot = defaultdict(list)
    for code, n in before.assignment.items():
        by_slot[n].append(code)
    first, second = next(sorted(codes) for codes in by_slot.values() if len(codes) > 1)[:2]
    problem.enrolments.append(("HV-S0099", first))
    problem.enrolments.append(("HV-S0099", second))
    after = solve(problem, slots, SolveOptions(time_limit=5, seed=1, deterministic=True), previous=before.assignment)
    assert after.status in ("optimal", "feasible") and after.moves
    path = write_workbook(tmp_path / "repair.xlsx", problem=problem, runs=[after])
    _, rows = rows_of(load_workbook(path)["Moves"])
    assert [(r["Event"], r["From slot"], r["To slot"]) for r in rows] == [(m["event"], m["from"], m["to"]) for m in after.moves]
    for r in rows:
        assert r["To slot"] == after.assignment[r["Event"]] != before.assignment[r["Event"]]
        assert r["New date"].date() == slots[r["To slot"] - 1].date


def test_control_characters_and_overlong_text_do_not_break_the_file(tmp_path):
    problem = small_problem(rooms=False)
    run = solve_run(problem, dated_slots(2))  # infeasible: carries a reason
    run.reason = "bell\x07 " + "x" * 40000
    path = write_workbook(tmp_path / "odd.xlsx", problem=problem, runs=[run])
    rows = comparison_of(load_workbook(path)["Comparison"])
    reason = rows[0]["Reason"]
    assert reason.startswith("bell x") and "\x07" not in reason
    assert len(reason) <= 32767 and reason.endswith("(cut: too long for one cell)")
    ws = load_workbook(path)["Comparison"]
    (cell,) = [c for c in ws["B"] if c.value == reason]
    assert cell.alignment.wrap_text and ws.row_dimensions[cell.row].height == 409  # a row's greatest height


def test_count_groups_multiply_to_the_total_and_match_networkx(tmp_path):
    import sympy
    import networkx as nx

    problem = small_problem(rooms=False)
    problem.enrolments += [("HV-S0020", "ART201"), ("HV-S0020", "ART202"), ("HV-S0021", "MUS301")]
    problem.__post_init__()  # a second group (ART201-ART202) and an event with no clash (MUS301)
    counts = count_report(problem, [3, 4])
    path = write_workbook(tmp_path / "groups.xlsx", problem=problem, runs=[], counts=counts)
    wb = load_workbook(path)
    _, groups = rows_of(wb["Count groups"])
    _, totals = rows_of(wb["Counts"])
    graph = conflict_graph(problem)
    x = sympy.Symbol("x")
    for k, total in zip((3, 4), totals):
        product = 1
        for g in groups:
            product *= int(g[f"Timetables with {k} slots"])
        assert product == int(total["Clash-free timetables"])
    assert [g["Events"] for g in groups] == [6, 2, 1]
    for g in groups[:2]:
        codes = g["Event codes"].split(", ")
        # reference: networkx.chromatic_polynomial of the group's own clash graph
        poly = sympy.Poly(nx.chromatic_polynomial(graph.subgraph(codes)), x)
        assert [int(g[f"Timetables with {k} slots"]) for k in (3, 4)] == [int(poly.eval(k)) for k in (3, 4)]
    assert groups[2]["Event codes"] == "events with no clash: any slot each"


def test_what_if_figures_match_networkx(published):
    import sympy
    import networkx as nx

    problem, _, _, _, wb = published
    _, rows = rows_of(wb["What if"])
    assert rows
    graph = conflict_graph(problem)
    x = sympy.Symbol("x")
    poly = lambda g, k: int(sympy.Poly(nx.chromatic_polynomial(g), x).eval(k))  # reference library
    for r in rows:
        k, u, v = r["Slots"], r["Event"], r["Other event"]
        base = poly(graph, k)
        if r["Change"] == "a new shared attendee":
            assert not graph.has_edge(u, v)
            expected = poly(nx.contracted_nodes(graph, u, v, self_loops=False), k) / base
        else:
            cut = nx.Graph(graph)
            cut.remove_edge(u, v)
            expected = poly(cut, k) / base
        assert r["Effect"] == pytest.approx(expected)


def test_estimated_counts_are_marked_with_their_bounds(tmp_path):
    import networkx as nx

    from timetabler.counting import count_timetables

    # a dense random clash graph and half a second: too hard to count exactly, so the
    # engine gives rigorous bounds and an estimate
    graph = nx.relabel_nodes(nx.gnp_random_graph(60, 0.3, seed=3), lambda i: f"E{i:02d}")
    counts = count_timetables(graph, [12, 14], budget_seconds=0.5, what_if=False)
    assert not any(c.exact for c in counts.counts)
    path = write_workbook(tmp_path / "estimate.xlsx", problem=small_problem(), runs=[], counts=counts)
    _, rows = rows_of(load_workbook(path)["Counts"])
    for row, c in zip(rows, counts.counts):
        assert row["Exact"] == "no" and row["Clash-free timetables"] is None
        assert row["log10"] == pytest.approx(c.estimate_log10)
        assert int(row["Lower bound"]) == c.lower and int(row["Upper bound"]) == c.upper  # exact text, 60+ digits
        assert c.lower <= 10 ** c.estimate_log10 <= c.upper
        assert row["Estimate relative error"] == pytest.approx(c.estimate_relative_error)
    from timetabler.export.count_chart import chart_points

    assert [(x, exact) for x, _, exact, _, _ in chart_points(counts)] == [(12, False), (14, False)]


def test_progress_names_every_sheet_as_it_is_begun(tmp_path):
    problem = small_problem()
    run = solve_run(problem, dated_slots(5))
    seen = []
    path = write_workbook(tmp_path / "p.xlsx", problem=problem, runs=[run], progress=seen.append)
    assert seen == load_workbook(path).sheetnames
