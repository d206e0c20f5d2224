"""`timetabler count` on real files: counts, JSON contract, fixed slots, exit statuses."""

from __future__ import annotations

import networkx as nx
import pandas as pd
import pytest
import sympy


def enrolment_rows(graph: nx.Graph) -> list[dict]:
    """One invented attendee of Harrowgate Vale College per clash, so the clashes are exactly the edges."""
    rows = []
    for i, (u, v) in enumerate(sorted(graph.edges())):
        sid = f"HV-S{i + 1:04d}"
        rows += [{"Student": sid, "Exam": u}, {"Student": sid, "Exam": v}]
    for v in graph:  # every exam has someone sitting it
        if graph.degree(v) == 0:
            rows.append({"Student": f"HV-S9{len(rows):03d}", "Exam": v})
    return rows


def networkx_value(graph: nx.Graph, k: int) -> int:
    # reference: networkx.chromatic_polynomial (sympy), evaluated at k
    expr = nx.chromatic_polynomial(graph)
    return int(expr.subs({s: k for s in expr.free_symbols})) if expr.free_symbols else int(expr)


@pytest.fixture
def committee_graph() -> nx.Graph:
    g = nx.Graph()
    g.add_edges_from([("ESTATES", "FINANCE"), ("FINANCE", "LIBRARY"), ("LIBRARY", "ESTATES"),
                      ("LIBRARY", "SENATE"), ("SENATE", "GOVERN"), ("GOVERN", "AUDIT"), ("AUDIT", "SENATE")])
    g.add_edges_from([("ARTS", "SPORT")])
    g.add_node("CHAPEL")
    return g


def test_count_json_matches_networkx(run_command, tmp_path, committee_graph):
    path = tmp_path / "committees.csv"
    pd.DataFrame(enrolment_rows(committee_graph)).to_csv(path, index=False)
    result = run_command("count", path, "--slots", "2", "3", "4", "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    assert [c["slots"] for c in doc["counts"]] == [2, 3, 4]
    for c in doc["counts"]:
        assert c["exact"] is True
        assert int(c["timetables"]) == networkx_value(committee_graph, c["slots"])
    assert doc["chromatic_number"] == 3
    assert doc["isolated_events"] == 1
    sizes = sorted(comp["size"] for comp in doc["components"])
    assert sizes == [2, 6]


def test_count_polynomial_flag_prints_coefficients(run_command, tmp_path, committee_graph):
    path = tmp_path / "committees.csv"
    pd.DataFrame(enrolment_rows(committee_graph)).to_csv(path, index=False)
    result = run_command("count", path, "--slots", "3", "--polynomial", "--json")
    doc = result.json()
    power = [int(c) for c in doc["polynomial"]["power"]]
    k = sympy.Symbol("k")
    expr = nx.chromatic_polynomial(committee_graph)
    ref = sympy.Poly(expr.subs({s: k for s in expr.free_symbols}), k).all_coeffs()[::-1]
    assert power == [int(c) for c in ref]
    human = run_command("count", path, "--slots", "3", "--polynomial")
    assert human.status == 0
    assert "P(k) = k^9" in human.stdout
    assert "Fewest slots" in human.stdout


def test_fixed_slot_from_events_sheet_is_respected(run_command, tmp_path):
    # a triangle A-B-C plus D clashing with C; A fixed to slot 1, D barred from slot 2:
    # with 3 slots, B and C take the other two in 2 ways, D avoids C and slot 2.
    path = tmp_path / "pinned.xlsx"
    rows = [("HV-S0001", "A"), ("HV-S0001", "B"), ("HV-S0002", "B"), ("HV-S0002", "C"),
            ("HV-S0003", "C"), ("HV-S0003", "A"), ("HV-S0004", "C"), ("HV-S0004", "D")]
    with pd.ExcelWriter(path) as writer:
        pd.DataFrame(rows, columns=["Student", "Exam"]).to_excel(writer, sheet_name="Enrolments", index=False)
        pd.DataFrame({"Event": ["A", "D"], "Fixed slot": ["1", None], "Barred slots": [None, "2"]}).to_excel(
            writer, sheet_name="Events", index=False)
    result = run_command("count", path, "--slots", "3", "--json")
    assert result.status == 0, result.stderr
    doc = result.json()
    assert doc["constrained"] is True
    # enumerate: B,C ∈ {2,3} distinct (2 ways); D ∈ {1,3} minus C's slot
    brute = 0
    for b in (2, 3):
        c = 5 - b
        brute += sum(1 for d in (1, 3) if d != c)
    assert int(doc["counts"][0]["timetables"]) == brute


def test_missing_slots_is_a_clear_input_error(run_command, tmp_path, committee_graph):
    path = tmp_path / "committees.csv"
    pd.DataFrame(enrolment_rows(committee_graph)).to_csv(path, index=False)
    result = run_command("count", path)
    assert result.status == 2
    assert "--slots" in result.stderr
    bad = run_command("count", path, "--slots", "x")
    assert bad.status == 2


def test_human_table_shows_counts_and_not_exact_marks(run_command, tmp_path):
    g = nx.random_regular_graph(3, 140, seed=4)
    g = nx.relabel_nodes(g, lambda v: f"HV{v:03d}")
    path = tmp_path / "big.csv"
    pd.DataFrame(enrolment_rows(g)).to_csv(path, index=False)
    result = run_command("count", path, "--slots", "4", "--time-limit", "0.3")
    assert result.status == 0, result.stderr
    assert "not exact" in result.stdout and "proven between" in result.stdout
    doc = run_command("count", path, "--slots", "4", "--time-limit", "0.3", "--json").json()
    assert doc["counts"][0]["timetables"] is None
    assert int(doc["counts"][0]["lower"]) <= int(doc["counts"][0]["upper"])


def _column_cells(table_lines: list[str], header: str) -> str:
    """The text of one column of a rich table's single body row, its folded lines joined."""
    heads = [line for line in table_lines if line.startswith("┃")]
    columns = [" ".join(parts) for parts in zip(*[[c.strip() for c in line.strip("┃").split("┃")] for line in heads])]
    index = next(i for i, name in enumerate(columns) if " ".join(name.split()) == header)
    body = [line for line in table_lines if line.startswith("│")]
    return "".join(line.strip("│").split("│")[index].strip() for line in body)


def test_a_count_too_wide_for_its_column_keeps_every_digit(tmp_path):
    """At 80 columns the groups table had no room for 12 digits and cut them ("343,59…"), which
    reads as a figure. A path of 19 exams: a tree on n vertices has k(k-1)^(n-1) colourings
    (standard closed form for trees)."""
    import os
    import subprocess
    import sys

    path = tmp_path / "path.csv"
    pd.DataFrame([{"Student": f"QP-S{i:03d}", "Exam": f"QM{j:03d}"} for i in range(18) for j in (i, i + 1)]
                 ).to_csv(path, index=False)
    env = {**os.environ, "COLUMNS": "80"}
    done = subprocess.run([sys.executable, "-m", "timetabler", "count", str(path), "--slots", "4", "5", "6", "7"],
                          capture_output=True, text=True, env=env, timeout=60)
    assert done.returncode == 0, done.stderr
    lines = done.stdout.splitlines()
    start = next(i for i, line in enumerate(lines) if line.startswith("Groups of events"))
    table = lines[start + 1:]
    assert f"{4 * 3 ** 18:,}" == "1,549,681,956" and f"{5 * 4 ** 18:,}" == "343,597,383,680"
    assert _column_cells(table, "4 slots") == f"{4 * 3 ** 18:,}"
    assert _column_cells(table, "5 slots") == f"{5 * 4 ** 18:,}"
    assert "…" not in "".join(line for line in lines if line.startswith("│") and "(+" not in line)
