"""The intake seen from the command line: same figures whatever the file, clean errors, the template."""

from __future__ import annotations

import json
import random
import shutil
import subprocess
from pathlib import Path

import networkx as nx
import pytest
from networkx.algorithms import bipartite

from intake_builders import write_ods, write_text, write_xlsx
from timetabler.cli import cli
from timetabler.cli.common import run_guarded
from timetabler.intake import ReadOptions, read_problem
from timetabler.intake.template import write_template

FIGURES = ("events", "attendees", "enrolments", "conflict_pairs", "components", "component_sizes", "max_clique",
           "isolated_events", "max_events_per_attendee")


def _enrolments(seed: int = 7) -> list[tuple[str, str]]:
    """A small invented session at Harrowgate Vale College: two faculties and a lone paper."""
    rng = random.Random(seed)
    science, arts = ["MAT101", "PHY110", "CHM120", "BIO130"], ["HIS101", "LIT120", "PHL130"]
    pairs = set()
    for i in range(1, 41):
        pool = science if i <= 22 else arts
        for e in rng.sample(pool, 2):
            pairs.add((f"HV-S{i:04d}", e))
    pairs.add(("HV-S0041", "LAT200"))
    return sorted(pairs)


def _renderings(tmp: Path, pairs) -> dict[str, Path]:
    long = [["Student", "Exam"]] + [list(p) for p in pairs]
    grouped: dict[str, list[str]] = {}
    for a, e in pairs:
        grouped.setdefault(a, []).append(e)
    width = max(len(v) for v in grouped.values())
    wide = [["Candidate"] + [f"Paper {i}" for i in range(1, width + 1)]] + [[a, *evs] for a, evs in grouped.items()]
    cell = [["Member ID", "Exams"]] + [[a, "; ".join(evs)] for a, evs in grouped.items()]
    codes = sorted({e for _, e in pairs})
    grid = [["Student", *codes]] + [[a, *["x" if c in evs else None for c in codes]] for a, evs in grouped.items()]
    return {
        "xlsx long": write_xlsx(tmp / "long.xlsx", {"Notes": [["Made for the demo"]], "Enrolments": [["Winter session"], [], *long]}),
        "csv long": write_text(tmp / "long.csv", long),
        "csv semicolon cp1252": write_text(tmp / "semi.csv", long, ";", "cp1252"),
        "tsv utf-16": write_text(tmp / "long.tsv", long, "\t", "utf-16-le", bom=True),
        "ods long": write_ods(tmp / "long.ods", {"Entries": long}),
        "xlsx wide columns": write_xlsx(tmp / "wide.xlsx", {"Wide": wide}),
        "csv wide cell": write_text(tmp / "cell.csv", cell),
        "ods wide cell": write_ods(tmp / "cell.ods", {"Cell": cell}),
        "xlsx tick grid": write_xlsx(tmp / "grid.xlsx", {"Grid": grid}),
    }


def _inspect(path: Path, capsys, *extra: str) -> tuple[int, dict | None, str]:
    capsys.readouterr()
    status = run_guarded(cli, ["inspect", str(path), "--json", *extra])
    out = capsys.readouterr()
    return status, (json.loads(out.out) if status == 0 else None), out.err


def test_inspect_gives_the_same_figures_whatever_the_file(tmp_path: Path, capsys):
    pairs = _enrolments()
    docs = {}
    for label, path in _renderings(tmp_path, pairs).items():
        status, doc, err = _inspect(path, capsys)
        assert status == 0, (label, err)
        docs[label] = {k: doc[k] for k in FIGURES}
    first = next(iter(docs.values()))
    for label, figures in docs.items():
        assert figures == first, label
    # Reference outside the project: the clash pairs are the edges of the bipartite
    # projection of the attendee-event graph onto the events (networkx.bipartite).
    b = nx.Graph()
    b.add_nodes_from({e for _, e in pairs}, side=1)
    b.add_edges_from(pairs)
    projected = bipartite.projected_graph(b, {e for _, e in pairs})
    assert first["conflict_pairs"] == projected.number_of_edges()
    assert first["components"] == nx.number_connected_components(projected)
    assert first["enrolments"] == len(pairs)
    assert first["max_clique"] == max(len(c) for c in nx.find_cliques(projected))


def test_bad_input_exits_2_with_every_problem_and_no_traceback(tmp_path: Path, capsys):
    path = write_xlsx(tmp_path / "bad.xlsx", {
        "Enrolments": [["Student", "Exam"], ["HV-S0001", "MAT101"]],
        "Slots": [["Slot", "Date"], ["Mon AM", "someday"], ["Mon PM", "2027-13-01"]],
    })
    status, _, err = _inspect(path, capsys)
    assert status == 2
    assert "Traceback" not in err
    assert "row 2" in err and "row 3" in err and "B (Date)" in err and "someday" in err


def test_layout_and_case_options_reach_intake(tmp_path: Path, capsys):
    path = write_text(tmp_path / "a.csv", [["Student", "Exam"], ["HV-S0001", "MAT101, PHY110"], ["HV-S0002", "mat101"]])
    _, doc_auto, _ = _inspect(path, capsys)
    _, doc_long, _ = _inspect(path, capsys, "--layout", "long")
    _, doc_case, _ = _inspect(path, capsys, "--case-sensitive-codes")
    assert doc_auto["events"] == 2  # MAT101 (= mat101) and PHY110: the list cell was split
    assert doc_long["events"] == 2  # 'MAT101, PHY110' kept as one code, and mat101
    assert doc_case["events"] == 3  # split, and mat101 kept apart from MAT101


def test_wide_layout_from_named_columns(tmp_path: Path, capsys):
    path = write_xlsx(tmp_path / "w.xlsx", {"S": [["Who", "First", "Second"], ["HV-S0001", "MAT101", "PHY110"],
                                                  ["HV-S0002", "MAT101", None]]})
    status, doc, err = _inspect(path, capsys, "--attendee-column", "who", "--event-column", "First",
                                "--event-column", "Second")
    assert status == 0, err
    assert (doc["events"], doc["enrolments"], doc["conflict_pairs"]) == (2, 3, 1)


# --- template -----------------------------------------------------------------------


@pytest.mark.parametrize("example", [False, True])
def test_template_reads_back_without_error(tmp_path: Path, capsys, example: bool):
    path = tmp_path / "input.xlsx"
    args = ["template", str(path)] + (["--example"] if example else [])
    assert run_guarded(cli, args) == 0
    reading = read_problem(path)
    assert reading.sheet == "Enrolments"
    assert set(reading.other_sheets) == {"Events", "Slots", "Rooms", "Rules", "Weights", "Attendees"}
    assert not [w for w in reading.warnings if "not one timetabler knows" in w.message]
    if example:
        assert reading.warnings == []
        p = reading.problem
        assert len(p.slots) == 4 and p.slots[3].penalised and p.slots[0].date.isoformat() == "2027-05-03"
        assert {r.kind.value for r in p.rules} == {"before", "different days"}
        assert p.events["HIS130"].fixed_slot == "Tue 4 May AM"
        assert all(a.startswith("HV-S") for a in p.attendees)
        # the Shared column: the lab holds one event at a time, the halls are shared
        assert [(r.name, r.shared) for r in p.rooms] == [("Orchard Hall", True), ("Beacon Lab", False),
                                                         ("Cloister Room", True), ("Linden Room", False)]
        # the Attendees sheet: extra time for one candidate, a slot they cannot make and a room of their own for another
        assert p.people["HV-S0002"].extra_time_percent == 25
        assert p.people["HV-S0003"].unavailable == ("Tue 4 May PM",) and p.people["HV-S0003"].own_room_type == "Quiet"
        assert p.optional == set()  # the Attendance column is there, blank: everyone required
    else:
        assert reading.problem.enrolments == []
        assert [w.message for w in reading.warnings] == ["No enrolments were found below the header row."]


def test_template_has_drop_downs_and_instructions(tmp_path: Path):
    import openpyxl

    path = write_template(tmp_path / "t.xlsx")
    book = openpyxl.load_workbook(path)
    assert book.sheetnames[0] == "Instructions"
    rules = book["Rules"]
    lists = [dv.formula1 for dv in rules.data_validations.dataValidation if dv.type == "list"]
    assert any("before" in f and "different days" in f for f in lists)
    assert book["Enrolments"].column_dimensions["A"].number_format == "@"  # keeps leading zeros
    for ws in book.worksheets[1:]:
        assert all(c.comment is not None for c in ws[1] if c.value), ws.title  # every header explains itself
    assert "Enrolments" in " ".join(str(c.value) for c in book["Instructions"]["A"] if c.value)


def test_template_refuses_to_overwrite(tmp_path: Path, capsys):
    path = tmp_path / "keep.xlsx"
    path.write_bytes(b"precious")
    assert run_guarded(cli, ["template", str(path)]) == 2
    assert path.read_bytes() == b"precious"
    assert "--force" in capsys.readouterr().err
    assert run_guarded(cli, ["template", str(path), "--force"]) == 0
    assert read_problem(path).sheet == "Enrolments"
    assert run_guarded(cli, ["template", str(tmp_path / "t.csv")]) == 2


@pytest.mark.skipif(shutil.which("soffice") is None, reason="LibreOffice is not installed")
def test_libreoffice_copy_of_the_template_reads_the_same(tmp_path: Path):
    """Reference outside the project: LibreOffice re-saves the example as .ods and .xlsx; both read the same."""
    source = write_template(tmp_path / "example.xlsx", example=True)
    out = tmp_path / "lo"
    out.mkdir()
    for target in ("ods", "xlsx:Calc MS Excel 2007 XML"):
        subprocess.run(["soffice", "--headless", f"-env:UserInstallation=file://{tmp_path}/profile",
                        "--convert-to", target, "--outdir", str(out), str(source)],
                       check=True, capture_output=True, timeout=120)
    original = read_problem(source).problem
    for copy in (out / "example.ods", out / "example.xlsx"):
        problem = read_problem(copy, ReadOptions()).problem
        assert sorted(problem.enrolments) == sorted(original.enrolments)
        assert problem.slots == original.slots
        assert [(r.kind, r.events) for r in problem.rules] == [(r.kind, r.events) for r in original.rules]
        assert problem.events == original.events
        assert problem.rooms == original.rooms


def _damaged_number_cell(path: Path) -> Path:
    from intake_builders import inline_cell, rows_xml, sheet_xml, write_parts_xlsx

    body = rows_xml([["Student", "Exam"], ["HV-S0001", "MAT101"]])
    body += f'<row r="3">{inline_cell("A3", "HV-S0002")}<c r="B3" t="n"><v>twelve</v></c></row>'
    return write_parts_xlsx(path, {"Entries": sheet_xml(body)})


def test_a_damaged_workbook_is_bad_input_not_a_bug(tmp_path: Path, run_command):
    """A malformed cell inside the rows is exit 2 with file, sheet and cell named (it was exit 1, a traceback)."""
    path = _damaged_number_cell(tmp_path / "entries.xlsx")
    result = run_command("inspect", path)
    assert result.status == 2, result.stderr
    assert "Traceback" not in result.stderr
    text = " ".join(result.stderr.split())
    assert "sheet 'Entries', row 3, column 'B3'" in text and "number cell holds text" in text


def test_a_damaged_earlier_timetable_is_bad_input(tmp_path: Path, run_command):
    good = write_text(tmp_path / "entries.csv", [["Student", "Exam"], ["HV-S0001", "MAT101"], ["HV-S0002", "PHY110"]])
    earlier = _damaged_number_cell(tmp_path / "earlier.xlsx")
    result = run_command("solve", good, "--slots", "2", "--keep", earlier, "--time-limit", "5")
    assert result.status == 2, result.stderr
    assert "number cell holds text" in " ".join(result.stderr.split())


def test_escape_sequences_in_a_file_never_reach_the_terminal(tmp_path: Path, run_command):
    """Codes and ids holding terminal escape sequences are printed as visible escapes, in tables and warnings."""
    path = write_text(tmp_path / "entries.csv", [["Student", "Exam"], ["HV-S0001", "MAT101\x1b[2J"],
                                                 ["HV-S0001", "PHY110"], ["HV-S0002\x1b]0;title\x07", None]])
    for args in (("inspect", path), ("inspect", path, "--json"), ("solve", path, "--slots", "2", "--time-limit", "5")):
        result = run_command(*args)
        assert result.status == 0, result.stderr
        for stream in (result.stdout, result.stderr):
            assert "\x1b" not in stream and "\x07" not in stream, (args, stream)
    shown = run_command("inspect", path)
    assert "Found: 'HV-S0002\\x1b]0;title\\x07'" in " ".join(shown.stderr.split()), shown.stderr
