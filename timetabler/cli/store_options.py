"""The store on the command line: ``--store``, the retention period, ``--publish``, ``--keep LABEL``.

The commands that keep or read records (``solve``, ``changes``, ``history``, ``forget``)
share :func:`store_options`; :func:`open_store` opens the store and first deletes what is
older than the retention period. ``solve`` uses :func:`check_publish_request` before it
solves, :func:`earlier_timetable` to read ``--keep`` (a file, else a published label) and
:func:`record_solve` after it (one transaction; a refused publication records nothing).
"""

from __future__ import annotations

import os
import sqlite3
from pathlib import Path
from typing import Any, Callable, Sequence

import click

from ..errors import Finding, InputError
from ..intake.previous_timetable import PreviousTimetable, read_previous_timetable
from ..store import Store, store_path
from ..store.location import DEFAULT_RETENTION_DAYS, RETENTION_ENV
from ..store.records import publication_problems
from .common import err_console, warn



def store_options(func: Callable) -> Callable:
    """Add ``--store PATH`` and ``--retention-days N``; the command receives them as ``store_at`` and ``retention_days``."""
    func = click.option(
        "--retention-days", type=click.IntRange(0, 36500), envvar=RETENTION_ENV, show_envvar=True,
        default=DEFAULT_RETENTION_DAYS, show_default=True, metavar="DAYS",
        help="Delete stored inputs (enrolments, results, labels) not used for this many days; 0 keeps them until "
             "you delete them with 'timetabler forget'.")(func)
    func = click.option(
        "--store", "store_at", metavar="PATH", type=click.Path(dir_okay=False), envvar="TIMETABLER_STORE",
        show_envvar=True,
        help=f"The store file (SQLite) that keeps inputs, results and published timetables (default: "
             f"{_shown(store_path())}).")(func)
    return func


def _shown(path: Path) -> str:
    home = str(Path.home())
    text = str(path)
    return "~" + text[len(home):] if text.startswith(home + os.sep) else text


def open_store(store_at: str | None, retention_days: int | None, *, quiet: bool = False) -> Store:
    """Open (create, upgrade) the store and delete the inputs older than the retention period."""
    store = Store(store_path(store_at))
    try:
        gone = store.forget_older_than(retention_days or 0)
    except BaseException:
        store.close()
        raise
    if gone and not quiet:
        names = ", ".join(f"#{s.id} {s.source_name}" for s in gone[:5]) + (" …" if len(gone) > 5 else "")
        err_console.print(f"Deleted {len(gone)} stored input(s) not used for {retention_days} days: {names}",
                          soft_wrap=True)
    return store


def check_publish_request(label: str | None, slot_counts: Sequence[int], fewest: bool, problem: Any,
                          store: Store | None) -> None:
    """Refuse ``--publish`` before solving when it cannot be honoured: which K is unclear, or the label is taken."""
    if label is None:
        return
    if store is None:
        raise click.UsageError("--publish records the timetable in the store, so it cannot go with --no-record.")
    if fewest and slot_counts:
        raise click.UsageError("--publish records one timetable; with --fewest and --slots there may be two. Give "
                               "either --fewest (publish the fewest-slots timetable) or one --slots K.")
    counted = list(slot_counts) or ([len(problem.slots)] if problem.slots and not fewest else [])
    if len(set(counted)) > 1:
        raise click.UsageError(f"--publish records one timetable, but --slots asks for {len(set(counted))} "
                               f"({', '.join(map(str, sorted(set(counted))))}). Choose one: --slots K --publish LABEL.")
    from ..store.records import check_label

    text = check_label(label)
    if text in store.labels():
        raise InputError(Finding(f"The label '{text}' is already published; nothing was solved or recorded.",
                                 suggestion="Choose a new label, or delete the old one first: "
                                            f"timetabler forget '{text}'."))


def earlier_timetable(keep: str, store: Callable[[], Store]) -> tuple[PreviousTimetable, str]:
    """``--keep VALUE``: an existing file is read as a file; anything else is a published label.

    Returns the earlier timetable and how to name it in the records. An unknown label is an
    :class:`InputError` listing the labels that exist.
    """
    if Path(keep).expanduser().is_file():
        return read_previous_timetable(keep), f"file {Path(keep).name}"
    opened = store()
    if keep not in opened.labels():
        known = opened.labels()
        listed = ", ".join(f"'{k}'" for k in known) if known else "none yet (publish one with solve --publish LABEL)"
        raise InputError(Finding(f"The earlier timetable {keep} does not exist as a file, and no published timetable "
                                 f"is labelled '{keep}'.", found=keep,
                                 expected=f"an existing .xlsx or .csv file, or one of the published labels: {listed}"))
    version = opened.published_version(keep)
    return PreviousTimetable(slots=version.slot_references(), sheet=f"published '{version.label}'",
                             reference="label"), \
        f"label {version.label}"


def record_solve(opened: Callable[[], Store], problem: Any, runs: Sequence[Any], settings: dict, *,
                 publish_label: str | None, kept_from: str | None, quiet: bool) -> None:
    """Record the solve (input, runs, and the label), or refuse the publication and record nothing.

    Without ``--publish`` a store that cannot be opened or written costs only the record: a warning,
    and the results already shown and written stand.
    """
    if publish_label is None:
        try:
            store = opened()
        except InputError as exc:
            warn(f"this run was not recorded: {exc}")
            return
    else:
        store = opened()
    target = None
    if publish_label is not None:
        solved = [r for r in runs if r.assignment]
        run = solved[0] if len(solved) == 1 else (runs[0] if len(runs) == 1 else None)
        if run is None:
            raise InputError(f"--publish: {len(runs)} timetables were solved; nothing was recorded.")
        problems = publication_problems(problem, run)
        if problems:
            raise InputError(Finding(
                f"The timetable for {run.slots} slots was not published under '{publish_label}' and nothing was "
                f"recorded: {problems}", suggestion="Publish only a clash-free timetable that the validator passed: "
                "give more slots, more time (--time-limit) or fix the rules the reason names."))
        target = (int(run.slots), publish_label)
    try:
        saved = store.record_solve(problem, runs, settings, kept_from=kept_from, publish=target)
    except sqlite3.Error as exc:  # a full disc, a read-only file: the record is lost, not the results
        if target is not None:
            raise InputError(f"The timetable was not published: the store {store.path} cannot be written ({exc}).")
        warn(f"this run was not recorded in {store.path}: {exc}")
        return
    if not quiet:
        where = _shown(store.path)
        if saved.published:
            err_console.print(f"Published the {target[0]}-slot timetable as '{saved.published}' in {where} "
                              f"(input #{saved.input_id}).", soft_wrap=True)
        else:
            err_console.print(f"Recorded in {where} (input #{saved.input_id}; 'timetabler history' lists "
                              "what is kept).", soft_wrap=True, style="dim")
