"""Publishing: write every output a person asked for (workbook, CSV folder, iCalendar files,
chart), checked first, counted where needed, pseudonymised on request.

The ``solve`` and ``compare`` commands (through ``timetabler/cli/output_options.py``) and
the web page write their files through :func:`publish`, so a download from the page is
the same file as the command writes.
"""

from __future__ import annotations

import contextlib
from pathlib import Path
from typing import Any, Callable, Mapping, Sequence

from ..errors import Finding, InputError


@contextlib.contextmanager
def _no_status(text: str):
    yield lambda message: None


def wants_output(outputs: Mapping[str, Any] | None) -> bool:
    return bool(outputs) and any(outputs.get(k) for k in ("out", "csv", "ics", "plot"))


def publish(
    outputs: Mapping[str, Any] | None,
    *,
    problem: Any,
    runs: Sequence[Any],
    counts: Any = None,
    reading: Any = None,
    settings: Mapping[str, Any] | None = None,
    validations: Mapping[int, Any] | None = None,
    fewest: Any = None,
    quiet: bool = False,
    notify: Callable[[str], None] | None = None,
    status: Callable[[str], Any] | None = None,
    written: list[Path] | None = None,
) -> list[Path]:
    """Write every output asked for in ``outputs``; return the paths written.

    The outputs show what they are given: counts (``counts``; the workbook says the numbers were
    not counted when it is None) and the validator's verdicts (``validations``, and each run's own
    ``run.validation``); nothing is counted or checked here (:func:`timetabler.plan.counts_for_runs`
    and :func:`timetabler.plan.checked` do that).

    Every output asked for is checked before anything is written. ``notify(text)`` receives
    messages for the person (a created key, an output that could not be made) and
    ``status(text)`` is a context manager factory yielding a ``show(text)`` function for
    long writes; both are optional (the web page passes neither). ``quiet`` silences both.
    ``written``, when given, receives each path as soon as it is complete (so a caller knows
    what was written when a later output fails or the run is interrupted).
    """
    notify = (lambda text: None) if (quiet or notify is None) else notify
    status = _no_status if (quiet or status is None) else status
    from .tables import has_timetable, validations_for
    from .workbook import write_workbook

    outputs = dict(outputs or {})
    if not wants_output(outputs):
        return []
    settings = dict(settings or {})
    runs = list(runs)
    solved = [r for r in runs if has_timetable(r)]
    # check what each output needs before writing anything
    if outputs.get("plot") and counts is None:
        raise InputError(Finding("The chart (--plot) needs the numbers of timetables, and counting is not available "
                                 "in this installation. Nothing was written."))
    if outputs.get("ics"):
        from .icalendar_files import check_dated

        for run in solved:
            check_dated(run, problem)
    validations = validations_for(runs, validations)
    if outputs.get("pseudonyms"):
        from .pseudonyms import Pseudonyms, load_or_create_key, pseudonymise, pseudonymise_counts

        key, key_file, created = load_or_create_key(outputs.get("pseudonym_key"))
        if created:
            notify(f"Created the pseudonym key {key_file}; keep it private and keep it to get the same pseudonyms next time.")
        counts = pseudonymise_counts(counts, problem, Pseudonyms(key))  # the what-if figures name attendees
        problem, runs, reading = pseudonymise(problem, runs, Pseudonyms(key), reading)
        settings["attendees shown as"] = "pseudonyms"
    written = [] if written is None else written
    if outputs.get("out"):
        kept = [settings[k] for k in ("kept from",) if settings.get(k)]
        with status(f"Writing {outputs['out']}") as show:
            written.append(write_workbook(outputs["out"], problem=problem, runs=runs, counts=counts, reading=reading,
                                          settings=settings, validations=validations, fewest=fewest, inputs=kept,
                                          progress=lambda sheet: show(f"Writing {outputs['out']}: sheet {sheet}")))
    if outputs.get("csv"):
        from .csv_folder import write_csv_folder

        written.extend(write_csv_folder(outputs["csv"], problem=problem, runs=runs, counts=counts, validations=validations,
                                        fewest=fewest))
    if outputs.get("ics"):
        from .icalendar_files import write_calendars

        if not solved:
            notify("warning: no timetable was found, so no iCalendar files were written.")
        for run in solved:
            folder = Path(outputs["ics"])
            if len(solved) > 1:
                folder = folder / f"{int(run.slots)} slots"
            written.extend(write_calendars(folder, problem=problem, run=run, timezone=outputs.get("ics_time_zone")))
    if outputs.get("plot"):
        from .count_chart import write_count_chart

        written.append(write_count_chart(outputs["plot"], counts, inputs=(problem.source,)))
    return written


def check_outputs(outputs: Mapping[str, Any] | None, *, inputs: Sequence[Any] = (), slots: Sequence[Any] | None = None,
                  problem: Any = None) -> None:
    """Check every output asked for before any work is done: each file's extension, that no
    output is an input file, that each folder can be written (or created), the time zone,
    that iCalendar files have dated ``slots`` (None: not known yet) and, with ``problem``, an end
    time for every event in any slot it may take, and the pseudonym key.

    Raises :class:`InputError` naming the option and the place.
    """
    from .icalendar_files import calendar_end_findings, check_dated_slots, time_zone
    from .safe_write import check_target, check_writable_folder

    outputs = dict(outputs or {})
    inputs = [i for i in inputs if i]
    for key, option, suffix in (("out", "--out", ".xlsx"), ("plot", "--plot", ".png")):
        if outputs.get(key):
            target = Path(outputs[key]).expanduser()
            check_target(target, inputs=inputs, suffixes=(suffix,))
            check_writable_folder(target.parent, f"{target.name} ({option})")
    for key, option in (("csv", "--csv"), ("ics", "--ics")):
        if outputs.get(key):
            folder = Path(outputs[key]).expanduser()
            for source in inputs:
                if Path(source).expanduser().resolve() == folder.resolve():
                    raise InputError(Finding(f"The output folder {folder} ({option}) is an input file.",
                                             suggestion="Give a folder name for the output files."))
            if folder.exists() and not folder.is_dir():
                raise InputError(Finding(f"{folder} ({option}) is a file, not a folder.",
                                         suggestion="Give a folder name for the output files."))
            check_writable_folder(folder, f"the files of {option}")
    if outputs.get("ics_time_zone") and not outputs.get("ics"):
        raise InputError(Finding("--ics-time-zone is the time zone of the iCalendar files, and no --ics folder "
                                 "was given.", suggestion="Add --ics FOLDER, or leave out --ics-time-zone."))
    time_zone(outputs.get("ics_time_zone"))
    if outputs.get("ics") and slots is not None:
        check_dated_slots(slots)
        endless = calendar_end_findings(problem, list(slots)) if problem is not None else []
        if endless:
            raise InputError(endless)
    key_file = outputs.get("pseudonym_key")
    if key_file and not outputs.get("pseudonyms"):
        raise InputError(Finding("--pseudonym-key is the key of --pseudonyms, which was not given.",
                                 suggestion="Add --pseudonyms, or leave out --pseudonym-key."))
    if outputs.get("pseudonyms"):
        from .pseudonyms import default_key_file

        file = Path(key_file).expanduser() if key_file else default_key_file()
        if file.exists():
            if not file.is_file():
                raise InputError(Finding(f"The pseudonym key {file} is a folder, not a key file."))
        else:
            check_writable_folder(file.parent, f"the pseudonym key {file.name}")
