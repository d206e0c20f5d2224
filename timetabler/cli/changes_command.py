"""``timetabler changes OLD NEW``: what moved between two published timetables, and who must be told."""

from __future__ import annotations

import click
from rich.table import Table

from ..store import changes_between
from .common import console, err_console, print_json
from .store_options import open_store, store_options


@click.command("changes")
@click.argument("old_label", metavar="OLD")
@click.argument("new_label", metavar="NEW")
@click.option("--json", "as_json", is_flag=True, help="Print one JSON document instead of tables.")
@click.option("--out", metavar="FILE.xlsx", type=click.Path(dir_okay=False),
              help="Write the notification list as a workbook: Notices (one row per attendee, for a mail merge), "
                   "Changes by attendee, Events changed.")
@click.option("--csv", metavar="DIR", type=click.Path(file_okay=False),
              help="Write the same lists as notices.csv, changes_by_attendee.csv and events_changed.csv in DIR.")
@click.option("--ics", metavar="DIR", type=click.Path(file_okay=False),
              help="Write DIR/attendees/ID.ics for each attendee whose timetable changed (and nobody else), with the "
                   "identifiers of OLD's calendars and a higher revision, so calendar programs replace the old times. "
                   "Needs slots with dates.")
@click.option("--ics-time-zone", metavar="NAME",
              help="Time zone of the slot times in the calendars, e.g. Europe/London (default: local times).")
@store_options
def command(old_label, new_label, as_json, out, csv, ics, ics_time_zone, store_at, retention_days):
    """List what changed between two published timetables OLD and NEW, and who must be told.

    \b
    OLD and NEW are labels given with 'timetabler solve ... --publish LABEL' (see
    'timetabler history'). For every event in both whose slot differs (slots are compared
    by label, date and start, not by number) it gives the old and new slot with dates and
    the attendees enrolled on it in NEW. Events only in NEW are listed as added, events only
    in OLD as removed. Then, for every attendee whose own timetable differs (an event of
    theirs moved, they enrolled on or withdrew from an event, an event was added or
    removed), each changed event with its old and new time: a notification list ready
    for a mail merge.

    \b
    Examples:
      timetabler changes "week 1" "week 2"
      timetabler changes "week 1" "week 2" --out notices.xlsx --ics calendars
      timetabler changes "week 1" "week 2" --json
    """
    with open_store(store_at, retention_days, quiet=as_json) as store:
        before = store.published_version(old_label)
        after = store.published_version(new_label)
    changes = changes_between(before, after)
    titles = {**before.titles, **after.titles}
    written = []
    if out:
        from ..export.change_notices import write_change_workbook

        written.append(write_change_workbook(out, changes, titles))
    if csv:
        from ..export.change_notices import write_change_csv

        written.extend(write_change_csv(csv, changes, titles))
    if ics:
        from ..export.change_calendars import write_change_calendars

        calendars = write_change_calendars(ics, before=before, after=after, changes=changes, timezone=ics_time_zone)
        written.extend(calendars)
        if not as_json:
            err_console.print(f"Wrote {len(calendars)} iCalendar file(s) in {ics} (affected attendees only)")
    if as_json:
        doc = changes.to_json()
        doc["from_version"] = before.summary_json()
        doc["to_version"] = after.summary_json()
        doc["written"] = [str(p) for p in written]
        print_json(doc)
        return
    for path in written:
        if path.suffix != ".ics":
            err_console.print(f"Wrote {path}")
    _print(changes, before, after, wrote=bool(out or csv or ics))


def _print(changes, before, after, wrote: bool = False) -> None:
    console.print(f"From '{before.label}' ({before.slot_count} slots, published {before.published_at:%Y-%m-%d %H:%M} "
                  f"UTC) to '{after.label}' ({after.slot_count} slots, published {after.published_at:%Y-%m-%d %H:%M} UTC)",
                  soft_wrap=True)
    items = [("moved", m) for m in changes.moved] + [("added", m) for m in changes.added] + \
            [("removed", m) for m in changes.removed]
    if not items:
        console.print("No event moved, and no event was added or removed.")
    else:
        table = Table(title="Events changed", title_justify="left")
        for name in ("Change", "Event", "From", "To", "Attendees"):
            table.add_column(name, justify="right" if name == "Attendees" else "left")
        for kind, m in items[:200]:
            table.add_row(kind, m.event, str(m.before) if m.before else "—", str(m.after) if m.after else "—",
                          str(len(m.attendees)))
        console.print(table)
        if len(items) > 200:
            console.print(f"… and {len(items) - 200} more (see --out or --json).")
    n = len(changes.attendees)
    console.print(f"{n} attendee(s) to tell; {changes.unchanged_events} event(s) kept their slot."
                  + (" Write the notification list with --out notices.xlsx or --csv DIR, calendars with --ics DIR."
                     if n and not wrote else ""), soft_wrap=True)
