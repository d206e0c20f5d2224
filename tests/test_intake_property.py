"""Property: any messy rendering of a known enrolment table reads back to the same enrolments.

Hypothesis draws a small enrolment table (Harrowgate Vale College, fictional) and a
rendering of it: file type and encoding, delimiter, layout (long, wide in columns, wide
in one cell, a grid of ticks under event-code headers), header spelling, title rows, blank rows, duplicated rows, shuffled and extra
columns, upper/lower case and padding of codes, numeric ids as float numbers or as
``"40001.0"`` text. Reading it back must give exactly the drawn enrolments (compared
without regard to case, the documented default).
"""

from __future__ import annotations

import tempfile
from pathlib import Path

from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from intake_builders import write_ods, write_text, write_xlsx
from timetabler.intake import read_problem

ATTENDEES = [f"HV-S{i:04d}" for i in range(1, 9)] + ["40001", "40002", "51234"]
EVENTS = ["MAT101", "PHY110", "CHM120", "HIS130", "GEO140", "Estates committee", "70010", "70020"]
ATTENDEE_HEADERS = ["Student", "student id", "CANDIDATE NUMBER", " Attendee ", "Member", "Student_No"]
EVENT_HEADERS = ["Exam", "exam code", "MODULE", "Paper", " Committee ", "Course-Code"]
LIST_HEADERS = ["Exams", "Events", "modules taken", "Papers"]
FILE_KINDS = ["xlsx", "ods", "csv-utf8", "csv-bom", "csv-utf16", "csv-cp1252", "tsv"]


@st.composite
def tables(draw):
    pairs = draw(st.lists(st.tuples(st.sampled_from(ATTENDEES), st.sampled_from(EVENTS)), min_size=1, max_size=25, unique=True))
    return pairs


@st.composite
def renderings(draw):
    return {
        "kind": draw(st.sampled_from(FILE_KINDS)),
        "delimiter": draw(st.sampled_from([",", ";", "|", "\t"])),
        "layout": draw(st.sampled_from(["long", "wide-columns", "wide-cell", "grid"])),
        "tick": draw(st.sampled_from(["x", "X", 1, "yes", "\u2713", "TRUE"])),
        "attendee_header": draw(st.sampled_from(ATTENDEE_HEADERS)),
        "event_header": draw(st.sampled_from(EVENT_HEADERS)),
        "list_header": draw(st.sampled_from(LIST_HEADERS)),
        "titles": draw(st.integers(0, 3)),
        "blank_every": draw(st.sampled_from([0, 2, 5])),
        "duplicates": draw(st.integers(0, 3)),
        "extra_column": draw(st.booleans()),
        "event_first": draw(st.booleans()),
        "case_seed": draw(st.integers(0, 2**16)),
        "numbers_as_float": draw(st.booleans()),
        "separator": draw(st.sampled_from(["; ", ";", ", ", "\n"])),
    }


def _mess(text: str, seed: int, i: int) -> str:
    """Change case and padding of a code in a way that depends on the seed and position."""
    mode = (seed >> (i % 12)) % 4
    if mode == 1:
        text = text.lower()
    elif mode == 2:
        text = text.upper()
    if (seed >> ((i + 3) % 12)) % 3 == 0:
        text = f"  {text} "
    return text


def _number(value: str, as_float: bool, text_file: bool):
    """A numeric id as a number cell (workbooks) or as exported text (CSV)."""
    if not value.isdigit():
        return value
    if text_file:
        return f"{value}.0" if as_float else value
    return float(value) if as_float else int(value)


def render(pairs, r, folder: Path) -> Path:
    text_file = r["kind"] not in ("xlsx", "ods")
    grouped: dict[str, list[str]] = {}
    for a, e in pairs:
        grouped.setdefault(a, []).append(e)
    counter = iter(range(10**6))

    def event_cell(e):
        return _number(_mess(e, r["case_seed"], next(counter)), r["numbers_as_float"], text_file)

    def attendee_cell(a):
        return _number(_mess(a, r["case_seed"] >> 1, next(counter)), r["numbers_as_float"], text_file)

    if r["layout"] == "long":
        header = [r["attendee_header"], r["event_header"]]
        body = [[attendee_cell(a), event_cell(e)] for a, e in pairs]
    elif r["layout"] == "wide-columns":
        width = max(len(v) for v in grouped.values())
        header = [r["attendee_header"]] + [f"{r['event_header'].strip().split()[0].split('-')[0]} {i}" for i in range(1, width + 1)]
        body = [[attendee_cell(a)] + [event_cell(e) for e in evs] for a, evs in grouped.items()]
    elif r["layout"] == "grid":
        codes = sorted({e for _, e in pairs})
        header = [r["attendee_header"]] + [_mess(c, r["case_seed"], i) for i, c in enumerate(codes)]
        mark = "x" if r["kind"] == "csv-cp1252" and r["tick"] == "\u2713" else r["tick"]  # no tick sign in Windows-1252
        body = [[attendee_cell(a)] + [mark if c in evs else None for c in codes] for a, evs in grouped.items()]
    else:
        header = [r["attendee_header"], r["list_header"]]
        body = [[attendee_cell(a), r["separator"].join(str(event_cell(e)) for e in evs)] for a, evs in grouped.items()]
    body = [row + [None] * (len(header) - len(row)) for row in body]
    if r["event_first"]:
        header = header[1:] + header[:1]
        body = [row[1:] + row[:1] for row in body]
    if r["extra_column"]:
        header = header + ["Programme"]
        body = [row + ["BSc Natural Sciences"] for row in body]
    body = body + body[: r["duplicates"]] if r["layout"] == "long" else body
    rows: list[list] = []
    for i, row in enumerate(body):
        rows.append(row)
        if r["blank_every"] and i % r["blank_every"] == 1:
            rows.append([])
    titles = [["Harrowgate Vale College"], ["Entries as of 4 January 2027"], []][: r["titles"]]
    rows = titles + [header] + rows
    kind = r["kind"]
    if kind == "xlsx":
        return write_xlsx(folder / "in.xlsx", {"Entries": rows})
    if kind == "ods":
        return write_ods(folder / "in.ods", {"Entries": rows})
    if kind == "tsv":
        return write_text(folder / "in.tsv", rows, "\t")
    encoding, bom = {"csv-utf8": ("utf-8", False), "csv-bom": ("utf-8", True), "csv-utf16": ("utf-16-le", True),
                     "csv-cp1252": ("cp1252", False)}[kind]
    return write_text(folder / "in.csv", rows, r["delimiter"], encoding, bom)


@settings(max_examples=40, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(tables(), renderings())
def test_messy_renderings_read_back_to_the_same_enrolments(pairs, rendering):
    with tempfile.TemporaryDirectory() as folder:
        path = render(pairs, rendering, Path(folder))
        reading = read_problem(path)
    got = {(a.casefold(), e.casefold()) for a, e in reading.problem.enrolments}
    assert got == {(a.casefold(), e.casefold()) for a, e in pairs}
    assert len(reading.problem.enrolments) == len(pairs)


@st.composite
def weighted_graphs(draw):
    codes = [f"HV{i:03d}" for i in range(draw(st.integers(2, 9)))]
    pairs = [(a, b) for i, a in enumerate(codes) for b in codes[i + 1:]]
    chosen = draw(st.lists(st.sampled_from(pairs), unique=True, max_size=len(pairs))) if pairs else []
    return codes, {p: draw(st.integers(1, 6)) for p in chosen}


@settings(max_examples=30, deadline=None)
@given(weighted_graphs(), st.sampled_from(["xlsx", "csv"]), st.booleans())
def test_clash_lists_give_the_listed_weighted_graph(graph, kind, reversed_order):
    """Reference: the weighted graph built directly with networkx from the same list."""
    import networkx as nx

    from timetabler.conflicts import conflict_graph

    codes, weights = graph
    rows = [["Exam", "Other exam", "Shared students"]]
    for (a, b), w in weights.items():
        rows.append([b, a, w] if reversed_order else [a, b, w])
    touched = {c for pair in weights for c in pair}
    rows += [[c, None, None] for c in codes if c not in touched]
    with tempfile.TemporaryDirectory() as folder:
        path = Path(folder) / f"clashes.{kind}"
        (write_xlsx(path, {"Clashes": rows}) if kind == "xlsx" else write_text(path, rows))
        reading = read_problem(path)
    got = conflict_graph(reading.problem)
    reference = nx.Graph()
    reference.add_nodes_from(codes)
    reference.add_weighted_edges_from(((a, b, w) for (a, b), w in weights.items()), weight="shared")
    assert reading.synthetic_attendees
    assert set(got.nodes) == set(reference.nodes)
    assert {frozenset(e): w for *e, w in got.edges(data="shared")} == {frozenset(e): w for *e, w in reference.edges(data="shared")}
