"""``timetabler forget``: delete a published label, one input with everything made from it, or everything."""

from __future__ import annotations

import click

from ..errors import InputError
from .common import console, print_json
from .store_options import open_store, store_options


@click.command("forget")
@click.argument("labels", nargs=-1, metavar="[LABEL ...]")
@click.option("--input", "input_ids", type=int, multiple=True, metavar="N",
              help="Delete input number N (see 'timetabler history') with its enrolments, every result solved from "
                   "it and every label on them. Give it more than once for several.")
@click.option("--everything", is_flag=True, help="Delete every input, result and label in the store.")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document saying what was deleted.")
@store_options
def command(labels, input_ids, everything, as_json, store_at, retention_days):
    """Delete records from the store: published labels, inputs (personal data), or everything.

    \b
    forget LABEL        deletes that published timetable (the label and its result); the
                        input it came from stays until you forget it too
    forget --input N    deletes input N: its attendees and enrolments, every result and
                        every label made from it (what to do when personal data must go)
    forget --everything empties the store

    Deleted rows are overwritten in the file (SQLite secure delete), not only unlinked.

    \b
    Examples:
      timetabler forget "draft 2"
      timetabler forget --input 3
    """
    if not labels and not input_ids and not everything:
        raise click.UsageError("Say what to delete: a LABEL, --input N (see 'timetabler history') or --everything.")
    done: dict = {"labels": [], "inputs": [], "everything": None}
    with open_store(store_at, retention_days, quiet=as_json) as store:
        for label in labels:  # checked first: an unknown label deletes nothing
            if label not in store.labels():
                raise store.unknown_label(label)
        known = {i.id for i in store.inputs()}
        for n in input_ids:
            if n not in known:
                raise InputError(f"There is no stored input number {n} (see timetabler history); nothing was deleted.")
        for label in labels:
            run = store.forget_label(label)
            done["labels"].append({"label": label, "run": run.id, "input": run.input_id})
        for n in input_ids:
            gone = store.forget_input(n)
            done["inputs"].append(gone.to_json())
        if everything:
            done["everything"] = store.forget_everything()
    if as_json:
        print_json(done)
        return
    for item in done["labels"]:
        console.print(f"Deleted the published timetable '{item['label']}'. Its input #{item['input']} is still "
                      f"stored (timetabler forget --input {item['input']} deletes it).", soft_wrap=True)
    for item in done["inputs"]:
        console.print(f"Deleted input #{item['input']} ({item['file']}: {item['attendees']} attendees, "
                      f"{item['enrolments']} enrolments) with {item['runs']} result(s)"
                      + (f" and the labels {', '.join(item['published'])}" if item["published"] else "") + ".",
                      soft_wrap=True)
    if everything:
        console.print(f"Deleted everything: {done['everything']} input(s) with their results and labels.")
