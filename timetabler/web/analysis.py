"""What the page works out from an upload, through the same public APIs the commands use.

Reading (intake's :func:`~timetabler.intake.read_problem`), the figures of ``inspect``
(:func:`~timetabler.conflicts.summarise`), the counts (:func:`timetabler.counting.count_timetables`),
solve plans for :func:`timetabler.scheduling.solve`, the independent validator, and the
files of :mod:`timetabler.export`. Nothing here is a second implementation of any of them;
this module only chooses arguments and shapes results for the templates.
"""

from __future__ import annotations

import dataclasses
import logging
import threading
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

import networkx as nx

from ..conflicts import ConflictSummary, conflict_graph, summarise
from ..errors import Finding, InputError
from ..intake import ReadOptions, Reading, read_problem
from ..model import Problem, Slot, Weights, days_of, weight_value
from ..plan import parse_counts
from ..export.tables import event_end

log = logging.getLogger("timetabler.web")

#: How many slot counts the first table shows, from the lower bound up.
DEFAULT_COUNT_SPAN = 6

#: Largest slot count the page accepts (a timetable of more slots than this is not an exam session).
MAX_SLOTS = 200


@dataclass
class Analysis:
    """An upload read and summarised: what the overview page shows before any solve."""

    reading: Reading
    graph: nx.Graph
    summary: ConflictSummary
    read_options: dict[str, str | None]
    counts: dict[tuple[int, ...], Any] = field(default_factory=dict)
    tasks: dict[tuple[int, ...], Any] = field(default_factory=dict)
    lock: threading.Lock = field(default_factory=threading.Lock)

    @property
    def problem(self) -> Problem:
        return self.reading.problem

    @property
    def lower_bound(self) -> int:
        """Fewest slots any timetable needs by the clique found (1 when there are events)."""
        if not self.summary.events:
            return 0
        return max(1, self.summary.max_clique)


def analyse(path: Path, options: dict[str, str | None]) -> Analysis:
    """Read the uploaded file and work out the inspect figures. Raises InputError on bad input."""
    read = ReadOptions()
    for key, value in options.items():
        if value and hasattr(read, key):
            setattr(read, key, value)
    reading = read_problem(path, read)
    graph = conflict_graph(reading.problem)
    return Analysis(reading=reading, graph=graph, summary=summarise(reading.problem, graph), read_options=dict(options))


#: The page's names of the settings a finding may point to (:data:`timetabler.errors.SETTINGS`).
BOX_NAMES = {
    "sheet": "the box 'Sheet' below",
    "attendee_column": "the box 'Header of the attendee column' below",
    "event_column": "the box 'Header of the event column' below",
    "wide_layout": "one row per attendee with the events listed across (the page finds the layout from the headers)",
    "slots": "the numbers of slots",
    "timetable_workbook": "a timetable workbook downloaded from this page",
}


def finding_rows(findings: list[Finding], private: Path, shown_name: str) -> list[dict]:
    """Findings as dicts for the page: the private upload path replaced by the user's file name,
    and the settings they point to named by the boxes of the page."""
    rows = []
    for finding in findings:
        row = finding.worded(BOX_NAMES).to_dict()
        row["file"] = shown_name
        for key in ("message", "found", "expected", "suggestion"):
            if isinstance(row.get(key), str):
                row[key] = row[key].replace(str(private), shown_name)
        rows.append(row)
    return rows


def named_as_uploaded(problem: Problem, reading: Reading | None, private: Path, shown_name: str) -> tuple[Problem, Reading | None]:
    """Copies of ``problem`` and ``reading`` that name the file as the user knows it.

    Intake read the upload at its private path (inside the server's temporary folder, under
    the upload's token, as ``enrolments.xlsx``); what is written for the user (the workbook's
    Overview and warning rows, the CSV tables, calendar ids) must name the file the user
    chose, as :func:`~timetabler.web.uploads.display_name` made it safe, and never the path
    or the token. The cached originals are left as they are.
    """
    private_text = str(private)

    def fix(text):
        return text.replace(private_text, shown_name) if isinstance(text, str) else text

    def finding(f: Finding) -> Finding:
        where = dataclasses.replace(f.where, file=shown_name) if f.where is not None else None
        return dataclasses.replace(f, where=where, message=fix(f.message), found=fix(f.found),
                                   expected=fix(f.expected), suggestion=fix(f.suggestion))

    shown = dataclasses.replace(problem, source=shown_name)
    if reading is None:
        return shown, None
    return shown, dataclasses.replace(reading, problem=shown, warnings=[finding(w) for w in reading.warnings])


def input_error_rows(exc: InputError, private: Path, shown_name: str) -> list[dict]:
    return finding_rows(exc.findings, private, shown_name)


def components(graph: nx.Graph, shown: int = 12, report: Any = None) -> list[dict]:
    """The groups of events linked by clashes, largest first: size, clashes, a few events, and
    (with the counting engine's ``report``) the fewest slots each group needs on its own."""
    counted = {frozenset(map(str, c.events)): c for c in getattr(report, "components", None) or []}
    rows = []
    for comp in sorted(nx.connected_components(graph), key=lambda c: (-len(c), min(map(str, c)))):
        if len(comp) == 1:
            continue
        sub = graph.subgraph(comp)
        events = sorted(comp, key=lambda v: (-graph.nodes[v].get("size", 0), str(v)))
        rows.append(
            {
                "events": len(comp),
                "clashes": sub.number_of_edges(),
                "largest": [str(v) for v in events[:6]],
                "more": max(0, len(comp) - 6),
                "fewest": getattr(counted.get(frozenset(map(str, comp))), "chromatic_number", None),
            }
        )
        if len(rows) >= shown:
            break
    return rows


def default_slot_counts(analysis: Analysis) -> list[int]:
    """The slot counts the first table shows: from the lower bound, a few up."""
    problem = analysis.problem
    if problem.slots:
        n = len(problem.slots)
        low = max(1, min(analysis.lower_bound, n))
        return list(range(max(low, n - DEFAULT_COUNT_SPAN + 1), n + 1))
    low = max(1, analysis.lower_bound)
    return list(range(low, low + DEFAULT_COUNT_SPAN))


def parse_slot_counts(text: str | list[str], *, limit: int) -> list[int]:
    """Slot counts typed or ticked by the user: '5 6 7', '5-8', '5,6'. Raises ValueError in plain words."""
    if isinstance(text, list):
        text = " ".join(text)
    try:
        found = sorted(parse_counts(text, "slots"))  # the command line's reading; the page lists them in order
    except ValueError as exc:
        raise ValueError(f"{str(exc)[0].upper()}{str(exc)[1:]}.") from None
    if not found:
        raise ValueError("Choose at least one number of slots.")
    if found[0] < 1 or found[-1] > MAX_SLOTS:
        raise ValueError(f"A number of slots must be between 1 and {MAX_SLOTS}.")
    if len(found) > limit:
        raise ValueError(f"Choose at most {limit} numbers of slots at once.")
    return found


def slot_list(problem: Problem, k: int, sessions_per_day: int) -> list[Slot]:
    """The slots of a K-slot timetable: the first K of the slots sheet, or K generic slots."""
    return problem.slots_for(k, sessions_per_day)


def count(analysis: Analysis, ks: list[int], budget_seconds: float, progress: Any = None) -> Any:
    """The counting engine's report for these slot counts (cached per upload).

    Fixed and barred slots are honoured as the ``count`` command honours them: resolved
    against the first K slots for each K, a fixed slot outside them making the count 0.
    """
    key = tuple(ks)
    if key in analysis.counts:
        return analysis.counts[key]
    from ..counting.problem_counts import count_problem

    report, _notes = count_problem(analysis.problem, ks, graph=analysis.graph, budget_seconds=budget_seconds,
                                   progress=progress)
    analysis.counts[key] = report
    return report


WEIGHT_LABELS = {
    "back_to_back": "Back-to-back events on one day",
    "overnight": "Last of one day, then first of the next",
    "same_day": "Two events on one day",
    "proximity": "Spread (Carter proximity cost)",
    "large_late": "Large event late in the session",
    "preferred_slot": "Event outside its preferred slots",
    "penalised_slot": "Event in a slot marked Avoid",
    "room_split": "Event split over rooms",
    "moved": "Event moved from the earlier timetable (repair)",
    "preferred_room": "Event outside its preferred rooms",
    "penalised_room": "Event in a room marked Avoid",
    "optional_missed": "Optional attendee who cannot come",
}


def weight_fields(weights: Weights) -> list[dict]:
    return [
        {"name": f.name, "label": WEIGHT_LABELS[f.name], "value": getattr(weights, f.name)}
        for f in dataclasses.fields(weights)
        if f.name in WEIGHT_LABELS
    ]


def weights_from_form(form: dict[str, str], base: Weights) -> Weights:
    """Weights as typed in the form; each must be a whole number from 0 to 1000."""
    values = {}
    for f in dataclasses.fields(base):
        raw = form.get(f"weight_{f.name}")
        if raw is None or raw.strip() == "":
            continue
        try:
            values[f.name] = weight_value(raw)
        except ValueError as exc:
            raise ValueError(f"The weight for '{WEIGHT_LABELS.get(f.name, f.name)}': {exc}.") from None
    return dataclasses.replace(base, **values)


#: How many attendees the timetable page lists (the workbook's People sheet has them all).
PEOPLE_SHOWN = 100


def people_rows(problem: Problem, run: Any) -> dict | None:
    """The People sheet's content for the page: its figures, and the attendees with something to
    say (a slot they cannot make, extra time, an optional event), those who miss something first."""
    from ..export.tables import people_matter, people_table, timetable_people

    if not problem.has_people or not getattr(run, "assignment", None) or not people_matter(problem, run.slot_list):
        return None
    found = timetable_people(problem, run)
    table = people_table(problem, run, people=found)
    rows = [dict(zip(table.headers, r)) for r in table.rows]
    worth = [r for r in rows if r["Cannot make"] or r["Extra time (%)"] or r["Optional events"] or r["Own room"]]
    worth.sort(key=lambda r: (r["Unavailability honoured"], -r["Optional events missed"], r["Attendee"]))
    return {
        "attendees": len(rows),
        "with_details": len(worth),
        "not_honoured": sum(1 for r in rows if not r["Unavailability honoured"]),
        "missed": sum(r["Optional events missed"] for r in rows),
        "optional": sum(r["Optional events"] for r in rows),
        "rows": worth[:PEOPLE_SHOWN],
        "more": max(0, len(worth) - PEOPLE_SHOWN),
    }


def grid(problem: Problem, run: Any) -> dict:
    """The timetable as a grid: one row per day, one column per session of the day."""
    slots: list[Slot] = list(getattr(run, "slot_list", []) or [])
    days = days_of(slots) if slots else []
    from ..export.tables import people_matter, timetable_people

    taken = timetable_people(problem, run).taken if slots and people_matter(problem, slots) else {}
    by_slot: dict[int, list[str]] = {i: [] for i in range(1, len(slots) + 1)}
    later: dict[int, set[str]] = {}
    for code, n in sorted((getattr(run, "assignment", {}) or {}).items(), key=lambda kv: str(kv[0])):
        by_slot.setdefault(n, []).append(code)
        for t in taken.get(code, (n,))[1:]:  # a long event shows in every slot it takes
            by_slot.setdefault(t, []).append(code)
            later.setdefault(t, set()).add(code)
    sizes = problem.event_sizes()
    rows: dict[int, list[dict]] = {}

    def until(code: str, slot: Slot) -> str | None:
        """The event's own end time when it differs from the slot's (export.tables.event_end)."""
        end = event_end(problem, code, slot)
        return end.strftime("%H:%M") if end is not None and end != slot.end else None

    for i, slot in enumerate(slots, start=1):
        rows.setdefault(days[i - 1], []).append(
            {
                "number": i,
                "label": slot.label,
                "when": _when(slot),
                "events": [{"code": c, "size": sizes.get(c, 0), "title": problem.events[c].title if c in problem.events else None,
                            "until": until(c, slots[run.assignment[c] - 1]),
                            "continued": c in later.get(i, ())} for c in by_slot.get(i, [])],
                "seats": sum(sizes.get(c, 0) for c in by_slot.get(i, [])),
            }
        )
    width = max((len(r) for r in rows.values()), default=0)
    return {"days": [{"day": d, "cells": cells + [None] * (width - len(cells))} for d, cells in sorted(rows.items())], "width": width}


def _when(slot: Slot) -> str:
    parts = []
    if slot.date is not None:
        parts.append(slot.date.strftime("%a %d %b %Y"))
    if slot.start is not None:
        text = slot.start.strftime("%H:%M")
        if slot.end is not None:
            text += "–" + slot.end.strftime("%H:%M")
        parts.append(text)
    return " ".join(parts)


def zip_folder(folder: Path, target: Path) -> Path:
    """Zip every file under ``folder`` (flat names relative to it) into ``target``."""
    with zipfile.ZipFile(target, "w", compression=zipfile.ZIP_DEFLATED) as archive:
        for path in sorted(folder.rglob("*")):
            if path.is_file():
                archive.write(path, path.relative_to(folder).as_posix())
    return target
