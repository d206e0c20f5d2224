"""``timetabler inspect``: what is in an enrolment file, and the fewest slots it could need."""

from __future__ import annotations

import click
from rich.table import Table

from ..conflicts import conflict_graph, people_figures, summarise
from .common import console, finding_json, input_options, print_json, read_input, show_warnings, styled


@click.command("inspect")
@click.argument("file", type=click.Path(dir_okay=False))
@input_options
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document instead of tables.")
def command(file: str, sheet, attendee_column, event_column, as_json: bool) -> None:
    """Show the figures of an enrolment FILE (.xlsx, .xlsm, .ods, .csv or .tsv).

    \b
    Reports the events, attendees and enrolments read; the pairs of events that clash
    (share at least one attendee); the groups of events linked by clashes (components);
    the largest set of mutually clashing events found — no timetable can use fewer slots
    than its size — and the attendees with the most events.
    """
    reading = read_input(file, sheet, attendee_column, event_column)
    show_warnings(reading, as_json)
    graph = conflict_graph(reading.problem)
    summary = summarise(reading.problem, graph)
    if as_json:
        doc = summary.to_dict()
        doc["file"] = file
        doc["sheet"] = reading.sheet
        doc["attendee_column"] = reading.attendee_column
        doc["event_column"] = reading.event_column
        doc["duplicates_dropped"] = reading.duplicates_dropped
        doc["reading"] = reading.to_dict()
        doc["warnings"] = [finding_json(w) for w in reading.warnings]
        doc["people"] = dict(people_figures(reading.problem))
        print_json(doc)
        return
    console.print(styled((file, "bold"), f": {reading.describe()}"), soft_wrap=True)
    table = Table(show_header=False, box=None, pad_edge=False)
    table.add_column(style="bold")
    table.add_column(justify="right")
    rows = [
        ("Events", summary.events),
        ("Attendees", summary.attendees),
        ("Enrolments", summary.enrolments),
        ("Duplicate rows dropped", reading.duplicates_dropped),
        ("Clashing pairs of events", summary.conflict_pairs),
        ("Clash density", f"{summary.density:.1%}"),
        ("Components", f"{summary.components} (sizes {_sizes(summary.component_sizes)})"),
        ("Events with no clash", summary.isolated_events),
        ("Largest set of mutually clashing events", summary.max_clique),
        ("Most events for one attendee", summary.max_events_per_attendee),
    ]
    rows += people_figures(reading.problem)
    for label, value in rows:
        table.add_row(label, str(value))
    console.print(table)
    if not summary.events:
        console.print("\nNo events yet, so there is nothing to timetable.")
    elif summary.max_clique <= 1:
        console.print(styled("\nAt least ", ("1", "bold"), " slot is needed: no two events share an attendee."))
    else:
        console.print(styled(
            "\nAt least ", (str(summary.max_clique), "bold"),
            f" slots are needed: these events pairwise share attendees: {', '.join(summary.clique_events)}."))
    if summary.busiest_attendees:
        console.print("Busiest attendees: " + ", ".join(f"{a} ({n})" for a, n in summary.busiest_attendees))


def _sizes(sizes: list[int], shown: int = 8) -> str:
    text = ", ".join(str(s) for s in sizes[:shown])
    return text + (f", … {len(sizes) - shown} more" if len(sizes) > shown else "")
