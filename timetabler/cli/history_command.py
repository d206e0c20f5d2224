"""``timetabler history``: what the store keeps — inputs, results, published timetables — and where."""

from __future__ import annotations

import click
from rich.table import Table

from .common import console, print_json
from .store_options import open_store, store_options


@click.command("history")
@click.option("--runs", "show_runs", is_flag=True, help="Also list every stored result, not only the published ones.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document instead of tables.")
@store_options
def command(show_runs, as_json, store_at, retention_days):
    """List what is stored: each input, the results solved from it, the published timetables.

    \b
    Every 'timetabler solve' records (unless --no-record) the input as read — events,
    attendees, enrolments, slots with labels and dates, rooms, rules and weights, never
    the file itself — with the settings and each result with the validator's verdict.
    'solve ... --publish LABEL' marks one result as published. Delete with
    'timetabler forget'; inputs not used for --retention-days days are deleted by themselves.

    \b
    Examples:
      timetabler history
      timetabler history --runs --json
    """
    with open_store(store_at, retention_days, quiet=as_json) as store:
        inputs = store.inputs()
        runs = store.runs() if show_runs or as_json else []
        versions = [v.summary_json() for v in store.published_versions()]
        path = store.path
        version = store.version
    if as_json:
        print_json({"store": str(path), "schema_version": version, "retention_days": retention_days or None,
                    "inputs": [i.to_json() for i in inputs], "published": versions,
                    "runs": [r.to_json() for r in runs]})
        return
    console.print(f"Store: {path}", soft_wrap=True)
    if not inputs:
        console.print("Nothing is stored yet: 'timetabler solve FILE --slots K' records its input and results.")
        return
    table = Table(title="Inputs", title_justify="left")
    for name in ("Input", "File", "Stored (UTC)", "Last used", "Events", "Attendees", "Enrolments", "Results",
                 "Published"):
        table.add_column(name, justify="right" if name in ("Input", "Events", "Attendees", "Enrolments",
                                                           "Results") else "left")
    for i in inputs:
        table.add_row(str(i.id), i.source_name, f"{i.created_at:%Y-%m-%d %H:%M}",
                      f"{i.last_used_at:%Y-%m-%d}" if i.last_used_at else "", str(i.events), str(i.attendees),
                      str(i.enrolments), str(i.runs), ", ".join(i.labels))
    console.print(table)
    if versions:
        table = Table(title="Published timetables", title_justify="left")
        for name in ("Label", "Published (UTC)", "Input", "Slots", "Events", "Result", "Penalty"):
            table.add_column(name)
        for v in versions:
            table.add_row(v["label"], v["published_at"].replace("T", " ").rstrip("Z"), str(v["input"]),
                          str(v["slots"]), str(v["events"]), v["status"], "" if v["penalty"] is None else str(v["penalty"]))
        console.print(table)
    if runs:
        table = Table(title="Results", title_justify="left")
        for name in ("Result", "Input", "Solved (UTC)", "Slots", "Status", "Penalty", "Check", "Kept from", "Published"):
            table.add_column(name)
        for r in runs:
            check = "" if r.valid is None else ("passed" if r.valid else "FAILED")
            table.add_row(str(r.id), str(r.input_id), f"{r.created_at:%Y-%m-%d %H:%M}", str(r.slot_count), r.status,
                          "" if r.penalty is None else str(r.penalty), check, r.kept_from or "", ", ".join(r.labels))
        console.print(table)
    if retention_days:
        console.print(f"Inputs not used for {retention_days} days are deleted with their results and labels.",
                      style="dim")
