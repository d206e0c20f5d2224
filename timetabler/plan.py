"""The application layer: what a command or the web page asks for, checked once.

A *plan* is what to run on one problem: the numbers of slots (given as counts, or as a
number of days of the Slots sheet), the goal weights, the time limit and the earlier
timetable to repair. The command line and the web page parse their input into a plan; the
checks here are the only ones, so both refuse the same things with the same words.
"""

from __future__ import annotations

from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass

from .errors import Finding, InputError, setting
from .model import Location, Problem, Slot


# --------------------------------------------------------------------------- defaults
# The defaults of a plan: the command line's options, the page's form and the README take them
# from here (tests/test_readme_defaults.py holds the README to them).

#: Slots in a day when the file has no Slots sheet: common practice with no single source (a
#: morning and an afternoon session).
SESSIONS_PER_DAY = 2
MOST_SESSIONS_PER_DAY = 12
#: Seconds of search for each number of slots (``solve``, the page) and in ``compare``.
SOLVE_SECONDS = 30.0
COMPARE_SECONDS = 20.0
#: Seconds of counting: ``count``, ``compare --count-time``, and the counts of ``solve``'s workbook.
COUNT_SECONDS = 20.0
#: Search threads (a laptop's two cores).
WORKERS = 2
#: Seconds the page's counting may go on in the background: well over the command line's, since a
#: count cut short says "not exact" where the command is exact.
BACKGROUND_COUNT_SECONDS = 600.0


@dataclass(frozen=True)
class DayChoice:
    """The first ``days`` days of the Slots sheet: its first ``slots`` slots in time order."""

    days: int
    slots: int


def slots_sheet_days(slots: Sequence[Slot]) -> list[object] | None:
    """The day of each slot (its date, else its day number), or None when the slots do not all
    say which day they fall on (then a slot is no day's: the sheet has no days to count)."""
    if slots and all(s.date is not None for s in slots):
        return [s.date for s in slots]
    if slots and all(s.day is not None for s in slots):
        return [s.day for s in slots]
    return None


def day_choices(problem: Problem, days: Sequence[int]) -> list[DayChoice]:
    """The slot count of the first N days of the Slots sheet, for each N in ``days`` (in order).

    The slots are in time order (intake sorts them), so the first N days are a run of slots
    from the first. Raises :class:`InputError` (located at the file or its Slots sheet) when
    there is no Slots sheet, when its slots do not all carry a date or a day number, or when
    it holds fewer days than asked.

    >>> import datetime as dt
    >>> d = dt.date(2027, 1, 11)
    >>> week = [Slot(f"{n} {h}", date=d + dt.timedelta(days=n), start=dt.time(h)) for n in range(5)
    ...         for h in (9, 14)]
    >>> day_choices(Problem([], slots=week), [4, 5])
    [DayChoice(days=4, slots=8), DayChoice(days=5, slots=10)]
    """
    file = problem.source or "the input file"
    if not problem.slots:
        raise InputError(Finding(
            f"{setting('days')} counts the days of the Slots sheet, and this file has no Slots sheet.",
            where=Location(file),
            suggestion=f"Add a Slots sheet with a Date (or Day) column, or say how many slots to use with {setting('slots')}."))
    where = _sheet_of(problem.slots, file)
    of_slot = slots_sheet_days(problem.slots)
    if of_slot is None:
        raise InputError(Finding(
            f"{setting('days')} counts the days of the Slots sheet, but its slots do not all say which day they fall on.",
            where=where, expected="a date (or a day number in a Day column) on every slot",
            suggestion=f"Fill in the Date or Day column of every slot, or use {setting('slots')}."))
    ends: list[int] = []  # ends[n - 1]: how many slots the first n days hold
    for i, day in enumerate(of_slot):
        if i and day != of_slot[i - 1]:
            ends.append(i)
    ends.append(len(of_slot))
    wanted = [int(n) for n in days]
    if max(wanted) > len(ends):
        first, last = _day_words(problem.slots[0]), _day_words(problem.slots[-1])
        span = f" ({first} to {last})" if first and last and first != last else ""
        raise InputError(Finding(
            f"{setting('days')} asks for {max(wanted)} days but the Slots sheet's {len(of_slot)} slots fall on only "
            f"{len(ends)} {'day' if len(ends) == 1 else 'days'}{span}.",
            where=where, suggestion="Add the missing days to the Slots sheet, or ask for fewer."))
    return [DayChoice(n, ends[n - 1]) for n in wanted]


def check_slot_counts(problem: Problem, counts: Sequence[int]) -> None:
    """Refuse a number of slots beyond the Slots sheet (a timetable uses its first K slots), in the one
    wording of the commands and the page. Raises :class:`InputError`."""
    if problem.slots and counts and max(counts) > len(problem.slots):
        raise InputError(Finding(
            f"{max(counts)} slots were asked for ({setting('slots')}), but the Slots sheet lists only "
            f"{len(problem.slots)}: a timetable cannot use more than that.",
            where=_sheet_of(problem.slots, problem.source or "the input file"),
            suggestion="Add slots to the Slots sheet, or ask for fewer."))


def days_by_slot_count(choices: Sequence[DayChoice]) -> dict[int, int]:
    """``{slot count: days}`` of the day choices (distinct day counts have distinct slot counts)."""
    return {c.slots: c.days for c in choices}


def _sheet_of(slots: Sequence[Slot], file: str) -> Location:
    w = next((s.where for s in slots if s.where is not None), None)
    return Location(w.file, w.sheet) if w is not None else Location(file, "Slots")


def _day_words(slot: Slot) -> str:
    if slot.date is not None:
        return slot.date.strftime("%a %d %b %Y")
    return f"day {slot.day}" if slot.day is not None else ""


def solve_checked(problem: Problem, slots: list[Slot], options, *, previous: dict[str, int] | None = None,
                  graph=None, progress=None):
    """One timetable with these ``slots`` (:func:`timetabler.scheduling.solve`), checked by the
    independent validator when one was found (``run.validation``, with the run's rooms, own rooms and
    the room rules of ``options``): the one step of every command and of the web page's solves."""
    from .scheduling import SolveOptions, solve

    options = options if options is not None else SolveOptions()
    run = solve(problem, slots, options, previous=previous, graph=graph, progress=progress)
    return checked(problem, run, previous=previous, options=options)


#: The step key of the fewest-slots search: 0, which no number of slots can be (the solves are
#: keyed by their number of slots).
FEWEST = 0


@dataclass(frozen=True)
class StepStarted:
    """A step begins: the fewest-slots search (``step == FEWEST``) or the solve with ``step`` slots.
    ``index`` is its place in the order of steps (0 for the first), as a shared clock counts them."""

    step: int
    index: int


@dataclass(frozen=True)
class FewestFound:
    """The fewest-slots search ended (a :class:`~timetabler.scheduling.FewestSlots`); ``to_solve``
    the numbers of slots the steps solve next, in order."""

    result: object
    to_solve: tuple[int, ...] = ()


@dataclass(frozen=True)
class Solved:
    """The solve with ``slots`` slots ended: its run, checked by the validator when it found a timetable."""

    slots: int
    run: object


def solve_steps(problem: Problem, slot_counts: Sequence[int], slots_for: Callable[[int], list[Slot]], *,
                options: Callable[[int], object], fewest_per_day: int | None = None, solve_fewest: bool = False,
                previous: Callable[[int, list[Slot]], dict[str, int] | None] | None = None, graph=None,
                progress: Callable[[int], Callable | None] | None = None,
                stop: Callable[[], bool] | None = None) -> Iterator[StepStarted | FewestFound | Solved]:
    """The one order of steps of every command and of the web page: the fewest-slots search first
    (when ``fewest_per_day`` is given: sessions per day of its generic slots), then a checked solve
    (:func:`solve_checked`) for each number of slots in turn.

    ``options(index)`` gives the solver options of step ``index`` (a shared clock's deadlines);
    ``previous(k, slots)`` the earlier timetable to keep close to, resolved against these slots;
    ``progress(step)`` the progress callback of a step; ``stop()`` ends the steps before the next
    solve. With ``solve_fewest``, the fewest slots the search found is solved too when it is not
    among ``slot_counts`` (first), so its timetable is checked and published like the others.
    Yields a :class:`StepStarted` before each step and a :class:`FewestFound` or :class:`Solved` after it.
    """
    from .conflicts import conflict_graph
    from .scheduling import fewest_slots

    graph = conflict_graph(problem) if graph is None else graph
    counts = list(slot_counts)
    index = 0
    if fewest_per_day is not None:
        yield StepStarted(FEWEST, index)
        result = fewest_slots(problem, per_day=fewest_per_day, options=options(index), graph=graph,
                              progress=progress(FEWEST) if progress else None)
        if solve_fewest and result.upper is not None and result.upper not in counts:
            counts.insert(0, result.upper)
        yield FewestFound(result, tuple(counts))
        index += 1
    for k in counts:
        if stop is not None and stop():
            return
        slots = slots_for(k)
        yield StepStarted(k, index)
        run = solve_checked(problem, slots, options(index), previous=previous(k, slots) if previous else None,
                            graph=graph, progress=progress(k) if progress else None)
        yield Solved(k, run)
        index += 1


def checked(problem: Problem, run, *, previous: dict[str, int] | None = None, options=None):
    """``run`` with the independent validator's verdict attached (``run.validation``), when it holds a
    timetable and has none yet (a run read back from elsewhere); the run itself is returned."""
    from .scheduling import validate_timetable

    if run.validation is None and run.assignment:
        run.validation = validate_timetable(
            problem, run.timetable, previous=previous,
            room_sharing=options.room_sharing if options is not None else True,
            room_splitting=options.room_splitting if options is not None else False)
    return run


def counts_for_runs(problem: Problem, runs: Sequence, budget: float, *, graph=None) -> tuple[object, str | None]:
    """Count clash-free timetables for the slot counts of ``runs``, or (None, why not).

    Fixed and barred slots are respected, resolved against each run's own slots; without
    any, all slot counts are counted in one call (the polynomial is shared).
    """
    from .conflicts import conflict_graph
    from .counting.problem_counts import count_problem

    graph = conflict_graph(problem) if graph is None else graph
    runs = sorted({int(r.slots): r for r in runs}.values(), key=lambda r: int(r.slots))
    if not runs:
        return None, None
    slot_lists = {int(r.slots): list(r.slot_list) for r in runs}
    report, notes = count_problem(problem, list(slot_lists), graph=graph, slots_for=slot_lists.__getitem__,
                                  budget_seconds=budget)
    left_out = report.not_counted
    if left_out:
        notes = [*notes, f"Counts leave out {left_out}; the solver keeps to them too, so fewer timetables may keep every rule."]
    if not report.constrained:
        return report, " ".join(notes) if left_out else None
    return report, " ".join(["Counts respect fixed and barred slots."] + notes)


def looks_like_count(token: str) -> bool:
    """Whether ``token`` is a whole number or a range of them (``6``, ``5-8``, ``5..8``)."""
    parts = token.replace("..", "-").split("-")
    return 1 <= len(parts) <= 2 and all(p.strip().isdigit() for p in parts)


def parse_counts(text: str, noun: str = "slots") -> list[int]:
    """'5 6', '5,6', '5-8', '5..8' -> distinct whole numbers of ``noun`` (slots, days), in the order
    given: the one reading of slot and day counts for the command line and the web page. Raises
    ValueError in plain words (a token that is no number, a range that runs backwards, a 0).

    >>> parse_counts("6, 5-7 9")
    [6, 5, 7, 9]
    """
    counts: list[int] = []
    for token in str(text).replace(",", " ").split():
        if not looks_like_count(token):
            raise ValueError(f"'{token}' is not a number of {noun} (give whole numbers like 6, or a range like 5-8)")
        parts = [int(p) for p in token.replace("..", "-").split("-")]
        lo, hi = parts[0], parts[-1]
        if lo > hi:
            raise ValueError(f"the range '{token}' runs backwards (write it {hi}-{lo})")
        counts.extend(range(lo, hi + 1))
    if any(k < 1 for k in counts):
        raise ValueError(f"the number of {noun} must be at least 1")
    return list(dict.fromkeys(counts))
