"""The pages and their addresses.

==================================================  =============================================================
``GET  /``                                          upload a file; download the empty template workbook
``GET  /template.xlsx``                             the template workbook (intake's template writer; ?example=1 filled in)
``POST /upload``                                    receive a file (size cap, type by content), then its overview
``GET  /files/{token}``                             figures, findings, components, counts table and chart, solve form
``GET  /files/{token}/counts.json``                 progress of the count the overview started (for the page's script)
``POST /files/{token}/solve``                       start a solve job (one at a time per file; 409 while one runs)
``GET  /files/{token}/solves/{id}/solving``         live progress (best penalty, bound) with a Stop button
``GET  /files/{token}/solves/{id}/solving.json``    the same progress for the page's script
``POST /files/{token}/solves/{id}/stop``            stop it, keeping the best timetable found so far
``GET  /files/{token}/solves/{id}/timetable``       slot counts side by side and the timetable grid
``GET  /files/{token}/solves/{id}/download/...``    timetable.xlsx, tables-csv.zip, calendars-ics.zip
``GET  /files/{token}/solving``                     the newest solve's pages, for older links (also ``/timetable``,
                                                    ``/solving.json``, ``/download/...`` and ``POST /stop``)
``POST /files/{token}/delete``                      delete the upload and everything made from it
==================================================  =============================================================

Tokens are random; a token that is not one of this server's uploads is a 404. The file
names of downloads are fixed here, never taken from the request.
"""

from __future__ import annotations

import dataclasses
import logging
import secrets
import shutil
import tempfile
from pathlib import Path
from typing import Any

from starlette.concurrency import run_in_threadpool
from starlette.exceptions import HTTPException
from starlette.formparsers import MultiPartException, MultiPartParser
from starlette.requests import Request
from starlette.responses import FileResponse, JSONResponse, RedirectResponse, Response
from starlette.routing import Route

from ..conflicts import people_figures
from ..plan import MOST_SESSIONS_PER_DAY, SESSIONS_PER_DAY, check_slot_counts
from ..errors import Finding, InputError
from . import analysis as an
from .count_chart import bar_from_count, count_chart_svg
from .count_jobs import exact_share, start_count, stop_counts
from .jobs import SolveJob
from .solves import Solve, add_solve, is_solve_id, latest_solve, running_solve, solves_of
from .page_format import count_style, group_digits, table_count
from .uploads import StoredUpload, UploadRejected, UploadStore

log = logging.getLogger("timetabler.web")

GONE = (
    "This file is no longer here. Uploads are deleted when you press 'Delete this file', when they sit "
    "unused for a few hours, and when the page server stops. Upload it again from the first page."
)


# -- shared bits -----------------------------------------------------------------------------


def store_of(request: Request) -> UploadStore:
    return request.app.state.store


def upload_of(request: Request) -> StoredUpload:
    upload = store_of(request).get(request.path_params["token"])
    if upload is None:
        raise HTTPException(404, GONE)
    return upload


def render(request: Request, name: str, context: dict, status: int = 200) -> Response:
    return request.app.state.templates.TemplateResponse(request, name, context, status_code=status)


def message(request: Request, status: int, title: str, text: str, **extra: Any) -> Response:
    return render(request, "message.html", {"title": title, "text": text, **extra}, status)


def job_running(upload: StoredUpload) -> bool:
    return running_solve(upload.state) is not None


def stop_all_jobs(store: UploadStore) -> None:
    for upload in store.all():
        stop_upload_work(upload)


def stop_upload_work(upload: StoredUpload) -> None:
    """End every solve and background count of an upload (it is being deleted, or the server stops)."""
    stop_counts(upload.state.get("analyses", {}))
    for kept in solves_of(upload.state).values():
        if kept.job.running:
            kept.job.cancel()


def solve_of(request: Request, stored: StoredUpload) -> Solve | None:
    """The solve a URL names (``/solves/{solve}/...``; 404 when it is not one of this upload's),
    or, for the older addresses without one, the newest solve of the upload (None when none)."""
    wanted = request.path_params.get("solve")
    if wanted is None:
        return latest_solve(stored.state)
    found = solves_of(stored.state).get(wanted) if is_solve_id(wanted) else None
    if found is None:
        raise HTTPException(404, "This solve is no longer here (or never was). Start a solve from the file's page.")
    return found


def solve_base(stored: StoredUpload, solve: Solve) -> str:
    return f"/files/{stored.token}/solves/{solve.id}"


# -- first page and template -------------------------------------------------------------------


async def home(request: Request) -> Response:
    settings = request.app.state.settings
    return render(request, "home.html", {"max_mb": settings.max_upload_bytes / (1024 * 1024)})


async def template_workbook(request: Request) -> Response:
    try:
        from ..intake.template import write_template  # the same writer as `timetabler template`
    except ImportError:
        raise HTTPException(404, "The template workbook is not available in this version.") from None
    example = request.query_params.get("example") == "1"
    name = "timetabler-example.xlsx" if example else "timetabler-template.xlsx"
    folder = Path(tempfile.mkdtemp(dir=store_of(request).root))
    target = folder / name
    await run_in_threadpool(lambda: write_template(target, example=example))
    return FileResponse(
        target,
        filename=name,
        media_type="application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
        background=_remove_later(folder),
    )


def _remove_later(folder: Path):
    from starlette.background import BackgroundTask

    return BackgroundTask(shutil.rmtree, folder, ignore_errors=True)


# -- upload -----------------------------------------------------------------------------------------


class _TooLarge(Exception):
    pass


async def upload(request: Request) -> Response:
    store = store_of(request)
    cap = store.max_bytes
    length = request.headers.get("content-length")
    if length is not None and length.isdigit() and int(length) > cap + 64 * 1024:
        return message(request, 413, "File too large", store.too_large_message(), back="/")
    content_type = request.headers.get("content-type", "")
    if not content_type.startswith("multipart/form-data"):
        return message(request, 400, "No file received", "Choose a file with the button on the first page, then press Upload.", back="/")

    try:
        form = await _capped_form(request, cap, max_files=1, max_fields=8, max_part_size=64 * 1024)
    except _TooLarge:
        return message(request, 413, "File too large", store.too_large_message(), back="/")
    except MultiPartException as exc:
        return message(request, 400, "The upload could not be read", f"The browser's upload was not understood ({exc}). Try again.", back="/")
    try:
        sent = form.get("file")
        if sent is None or isinstance(sent, str) or not sent.filename:
            return message(request, 400, "No file received", "Choose a file with the button on the first page, then press Upload.", back="/")
        token, folder = store.new_folder()
        received = folder / "received"
        try:
            size = await run_in_threadpool(_copy_capped, sent.file, received, cap)
        except _TooLarge:
            shutil.rmtree(folder, ignore_errors=True)
            return message(request, 413, "File too large", store.too_large_message(), back="/")
        if size == 0:
            shutil.rmtree(folder, ignore_errors=True)
            return message(request, 400, "The file is empty", "The file you chose has nothing in it.", back="/")
        try:
            stored = await run_in_threadpool(store.keep, token, folder, received, sent.filename)
        except UploadRejected as exc:
            return message(request, exc.status, "This file cannot be used", str(exc), back="/")
    finally:
        await form.close()
    if request.headers.get("x-timetabler-upload") == "progress":
        # The page's script sent the file (to show its progress): it opens the overview itself.
        return JSONResponse({"next": f"/files/{stored.token}"})
    return RedirectResponse(f"/files/{stored.token}", status_code=303)


async def _capped_form(request: Request, cap: int, *, max_files: int, max_fields: int, max_part_size: int):
    """Parse a multipart form, stopping (``_TooLarge``) as soon as the body passes ``cap`` and a margin."""

    async def limited():
        received = 0
        async for chunk in request.stream():
            received += len(chunk)
            if received > cap + 64 * 1024:
                raise _TooLarge
            yield chunk

    parser = MultiPartParser(request.headers, limited(), max_files=max_files, max_fields=max_fields,
                             max_part_size=max_part_size)
    return await parser.parse()


def _copy_capped(source, target: Path, cap: int) -> int:
    size = 0
    source.seek(0)
    with open(target, "xb") as out:
        while True:
            chunk = source.read(1024 * 1024)
            if not chunk:
                break
            size += len(chunk)
            if size > cap:
                raise _TooLarge
            out.write(chunk)
    target.chmod(0o600)
    return size


# -- overview ----------------------------------------------------------------------------------------

READ_OPTION_KEYS = ("sheet", "attendee_column", "event_column")

#: Seconds the overview waits for a count before showing the page without it.
FIRST_COUNT_WAIT = 1.5


async def counts_json(request: Request) -> Response:
    """Progress of the count the overview started (polled by the page's script)."""
    stored = upload_of(request)
    analysis = _current_analysis(stored)
    if analysis is None:
        return JSONResponse({"state": "none"})
    try:
        ks = an.parse_slot_counts(request.query_params.get("slots", ""), limit=12)
    except ValueError as exc:
        return JSONResponse({"state": "none", "error": str(exc)}, status_code=400)
    task = analysis.tasks.get(tuple(ks))
    if task is None:
        return JSONResponse({"state": "none"})
    doc = task.to_json()
    if request.query_params.get("html") == "1" and task.first.is_set():
        # The counts part of the overview, for the page's script to put in place (no reload: the
        # solve form below keeps what the user has typed).
        context = _counts_context(stored, analysis, ks, task)
        doc["html"] = request.app.state.templates.get_template("counts_table.html").render(context)
        doc["suggested"] = context["suggested"]
    return JSONResponse(doc)


def _counts_context(stored: StoredUpload, analysis: an.Analysis, ks: list[int], task: Any) -> dict:
    """What the counts part of the overview shows for this count task (see count_jobs)."""
    counts = count_error = counting = None
    if task is not None:
        if task.error:
            count_error = task.error.replace(str(stored.path), stored.name)
        elif task.first.is_set():
            counts = analysis.counts.get(tuple(ks))
        if not task.finished.is_set():
            counting = task.to_json()
    rows = list(getattr(counts, "counts", []) or [])
    return {
        "counts": rows,
        "count_report": counts,
        "count_error": count_error,
        "counting": counting,
        "counts_source": f"/files/{stored.token}/counts.json?slots={'+'.join(map(str, ks))}",
        "chart": count_chart_svg([bar_from_count(c) for c in rows]) if rows else None,
        "suggested": _suggested(rows, analysis),
    }


async def overview(request: Request) -> Response:
    stored = upload_of(request)
    settings = request.app.state.settings
    options = {key: (request.query_params.get(key) or "").strip() or None for key in READ_OPTION_KEYS}
    result = await _analysis(stored, options)
    if isinstance(result, InputError):
        return render(
            request,
            "unreadable.html",
            {"upload": stored, "findings": an.input_error_rows(result, stored.path, stored.name), "options": options},
            status=422,
        )
    analysis = result
    ks_text = request.query_params.get("slots")
    try:
        ks = an.parse_slot_counts(ks_text, limit=12) if ks_text else an.default_slot_counts(analysis)
        ks_error = None
    except ValueError as exc:
        ks, ks_error = an.default_slot_counts(analysis), str(exc)
    task = None
    if analysis.summary.events:
        task = start_count(analysis, ks, settings.count_first_seconds, settings.count_budget_seconds)
        # Small files count in a blink: wait a moment so the page comes complete; else show it now
        # and let the page's script (or a refresh) fill in the counts, and later the exact ones.
        await run_in_threadpool(task.first.wait, FIRST_COUNT_WAIT)
    shown = _counts_context(stored, analysis, ks, task)
    problem = analysis.problem
    return render(
        request,
        "overview.html",
        {
            "upload": stored,
            "analysis": analysis,
            "summary": analysis.summary,
            "reading": analysis.reading,
            "warnings": an.finding_rows(analysis.reading.warnings, stored.path, stored.name),
            "components": an.components(analysis.graph, report=shown["count_report"]),
            **shown,
            "ks": ks,
            "ks_text": " ".join(map(str, ks)),
            "ks_error": ks_error,
            "weights": an.weight_fields(problem.weights),
            "rules": [rule.describe() for rule in problem.rules],
            "has_slots_sheet": bool(problem.slots),
            "has_rooms": bool(problem.rooms),
            "people_figures": people_figures(problem),
            "settings": settings,
            "solves": [(kept, solve_base(stored, kept)) for kept in solves_of(stored.state).values()],
            "options": options,
            "published_labels": await _published_labels(request),
        },
    )


async def _analysis(stored: StoredUpload, options: dict[str, str | None]):
    """The cached analysis for these read options, or the InputError that reading raised."""
    cache: dict = stored.state.setdefault("analyses", {})
    key = tuple(sorted(options.items(), key=lambda kv: kv[0]))
    if key not in cache:
        try:
            cache[key] = await run_in_threadpool(an.analyse, stored.path, options)
        except InputError as exc:
            return exc
    stored.state["current"] = key
    return cache[key]


def _current_analysis(stored: StoredUpload) -> an.Analysis | None:
    key = stored.state.get("current")
    value = stored.state.get("analyses", {}).get(key)
    return value if isinstance(value, an.Analysis) else None


def _suggested(rows: list, analysis: an.Analysis) -> list[int]:
    """Slot counts to tick by default: every slot of the slots sheet when there is one; else the
    fewest slots with a clash-free timetable counted, and one more."""
    if analysis.problem.slots:
        return [len(analysis.problem.slots)]
    possible = [
        int(r.slots)
        for r in rows
        if (getattr(r, "timetables", None) or 0) > 0 or (getattr(r, "lower", None) or 0) > 0
    ]
    if possible:
        first = possible[0]
        return [first, first + 1]
    return [analysis.lower_bound, analysis.lower_bound + 1] if analysis.lower_bound else []


# -- solving ------------------------------------------------------------------------------------------


async def start_solve(request: Request) -> Response:
    stored = upload_of(request)
    if job_running(stored):
        return _busy(request, stored)
    analysis = _current_analysis(stored)
    if analysis is None:
        return RedirectResponse(f"/files/{stored.token}", status_code=303)
    back = f"/files/{stored.token}"
    if request.headers.get("content-type", "").startswith("multipart/form-data"):
        # The form carries the optional earlier timetable: the same caps as the main upload.
        cap = store_of(request).max_bytes
        length = request.headers.get("content-length")
        if length is not None and length.isdigit() and int(length) > cap + 64 * 1024:
            return message(request, 413, "File too large", store_of(request).too_large_message(), back=back)
        try:
            form = await _capped_form(request, cap, max_files=1, max_fields=200, max_part_size=16 * 1024)
        except _TooLarge:
            return message(request, 413, "File too large", store_of(request).too_large_message(), back=back)
        except MultiPartException as exc:
            return message(request, 400, "The form could not be read", f"The browser's form was not understood ({exc}). Try again.", back=back)
    else:
        form = await request.form(max_files=0, max_fields=200, max_part_size=16 * 1024)
    try:
        return await _start_solve(request, stored, analysis, form)
    finally:
        await form.close()


async def _start_solve(request: Request, stored: StoredUpload, analysis: an.Analysis, form) -> Response:
    settings = request.app.state.settings
    fields = {key: value for key, value in form.items() if isinstance(value, str)}
    problem = analysis.problem
    try:
        ks = an.parse_slot_counts(form.getlist("slots") + [fields.get("more_slots", "")], limit=settings.max_slot_counts)
        try:
            check_slot_counts(problem, ks)
        except InputError as exc:
            raise ValueError(exc.findings[0].worded(an.BOX_NAMES).message) from None
        per_day = _whole(fields.get("sessions_per_day", str(SESSIONS_PER_DAY)), "Sessions per day", 1, MOST_SESSIONS_PER_DAY)
        limit = _whole(fields.get("time_limit", str(settings.default_time_limit)), "Time limit", 1, settings.max_time_limit)
        weights = an.weights_from_form(fields, problem.weights)
        if fields.get("rules_listed") == "yes":  # the form listed the rules: keep the ticked ones
            keep = {int(i) for i in form.getlist("rule") if str(i).isdigit()}
            rules = [rule for i, rule in enumerate(problem.rules) if i in keep]
        else:
            rules = list(problem.rules)
    except ValueError as exc:
        return message(request, 400, "Please check the choices", str(exc), back=f"/files/{stored.token}")
    chosen = dataclasses.replace(problem, weights=weights, rules=rules)
    plan = [(k, an.slot_list(chosen, k, per_day)) for k in ks]
    earlier = await _earlier_timetable(request, stored, form.get("earlier"), chosen, plan,
                                       label=str(form.get("earlier_label") or "").strip() or None)
    if isinstance(earlier, Response):
        return earlier
    from ..scheduling import SolveOptions

    # rooms are shared by default (within their seats; a room marked Shared: no holds one event)
    rooms_shared = fields.get("one_event_per_room") != "on"
    rooms_split = bool(problem.rooms) and fields.get("room_splitting") == "on"
    options = SolveOptions(time_limit=float(limit), room_sharing=rooms_shared, room_splitting=rooms_split)
    find_fewest = fields.get("find_fewest") == "on"
    job = SolveJob(chosen, plan, options, time_limit=float(limit), fewest_per_day=per_day if find_fewest else None,
                   previous_by_slots=earlier.by_slots if earlier is not None else None)
    # Checked again after the form's await; from here to job.start() nothing awaits, so on the one
    # event loop no other request can start a job for this file in between.
    if job_running(stored):
        return _busy(request, stored)
    settings_used = {
        "slot counts": " ".join(map(str, ks)),
        "sessions per day": per_day,
        "time limit per slot count (s)": limit,
        "rooms shared by events of equal length": "yes" if rooms_shared else "no",
        "large events split over rooms": "yes" if rooms_split else "no",
        "fewest slots searched": "yes" if find_fewest else "no",
        "rules kept": len(rules),
        "rules switched off": len(problem.rules) - len(rules),
        "earlier timetable kept": earlier.name if earlier is not None else "none",
        **{f"weight: {w['label']}": getattr(weights, w["name"]) for w in an.weight_fields(weights)},
    }
    kept = add_solve(stored.state, job, chosen, settings_used, earlier)
    job.start()
    return RedirectResponse(f"{solve_base(stored, kept)}/solving", status_code=303)


@dataclasses.dataclass
class EarlierTimetable:
    """The earlier timetable a solve keeps: its file name as the user knows it, and its slots
    resolved for each slot count (with the events whose earlier slot is not among those slots)."""

    name: str
    by_slots: dict[int, dict[str, int]]
    unplaced: dict[int, list[dict]]
    dropped: list[str] = dataclasses.field(default_factory=list)  # events no longer in the enrolments


#: Slots a reference without a slots sheet may name (``Slot 1`` .. or 1 ..): any sensible number.
_GENERIC_REACH = 10_000


async def _published_labels(request: Request) -> list[str]:
    from .records_pages import published_labels

    return await run_in_threadpool(published_labels, request)


async def _earlier_timetable(request: Request, stored: StoredUpload, sent: Any, problem, plan, *,
                             label: str | None = None) -> "EarlierTimetable | Response | None":
    """Keep, read and check the earlier timetable sent with the solve form (None when none was sent).

    The file goes through the checks of the main upload and is kept in the upload's folder as
    ``earlier.xlsx`` or ``earlier.csv``. An event that is not in the enrolments, or a slot that
    names no slot of this file at all, stops the solve with the findings page; a slot beyond the
    number of slots of one run only means that event is placed afresh in that run. An event no
    longer in the enrolments (a cancelled exam, say) is left out and named on the timetable page,
    as ``solve --keep`` does on the command line.
    """
    back = f"/files/{stored.token}"
    if sent is None or isinstance(sent, str) or not sent.filename:
        if not label:
            return None
        from .records_pages import published_refs  # a timetable published before, from the store

        try:
            refs = await run_in_threadpool(published_refs, request, label)
        except InputError as exc:
            return message(request, 400, "The earlier timetable cannot be used", str(exc), back=back)
        return _earlier_from(request, stored, refs, f"published timetable '{label}'", None, problem, plan)
    store = store_of(request)
    received = stored.folder / f"earlier-received-{secrets.token_hex(6)}"
    try:
        size = await run_in_threadpool(_copy_capped, sent.file, received, store.max_bytes)
    except _TooLarge:
        received.unlink(missing_ok=True)
        return message(request, 413, "File too large", store.too_large_message(), back=back)
    if size == 0:
        received.unlink(missing_ok=True)
        return message(request, 400, "The earlier timetable is empty", "The file chosen as the earlier timetable has nothing in it.", back=back)
    try:
        kept = await run_in_threadpool(store.keep_beside, stored, received, sent.filename, "earlier")
    except UploadRejected as exc:
        return message(request, exc.status, "The earlier timetable cannot be used", str(exc), back=back)
    from ..intake.previous_timetable import read_previous_timetable

    try:
        refs = await run_in_threadpool(read_previous_timetable, kept.path)
    except InputError as exc:
        return _earlier_findings(request, stored, kept.name, kept.path, exc.findings)
    return _earlier_from(request, stored, refs, kept.name, kept.path, problem, plan)


def _earlier_from(request: Request, stored: StoredUpload, refs, name: str, path: Path | None, problem,
                  plan) -> "EarlierTimetable | Response":
    """Check an earlier timetable (read from a file at ``path``, or from the store when ``path`` is None)."""
    from ..intake.previous_timetable import resolve_previous

    def findings(found: list) -> Response:
        if path is None:
            return message(request, 400, "The earlier timetable cannot be used", " ".join(str(f.worded(an.BOX_NAMES)) for f in found),
                           back=f"/files/{stored.token}")
        return _earlier_findings(request, stored, name, path, found)

    if not refs.slots:
        return findings([Finding(
            "No event of the earlier timetable has a slot.", expected="a slot number or label beside each event")])
    reach = list(problem.slots) if problem.slots else an.slot_list(problem, _GENERIC_REACH, 1)
    check = resolve_previous(problem, refs, reach)
    bad = [dataclasses.replace(f, severity="error", message=f.message.split(", which")[0] + ", which names no slot of this file.",
                                expected=f"a slot label of the slots sheet or a number from 1 to {len(reach)}"
                                if problem.slots else "a slot number (1, 2, ...) or a label 'Slot N'") for f in check.unplaced]
    if bad:
        return findings(bad)
    by_slots: dict[int, dict[str, int]] = {}
    unplaced: dict[int, list[dict]] = {}
    for k, slots in plan:
        resolved = resolve_previous(problem, refs, slots)
        by_slots[k] = resolved.slots
        unplaced[k] = [{"event": code, "slot": ref} for code, ref in refs.slots.items()
                       if code in problem.events and code not in resolved.slots]
    dropped = sorted(code for code in refs.slots if code not in problem.events)
    return EarlierTimetable(name=name, by_slots=by_slots, unplaced=unplaced, dropped=dropped)


def _earlier_findings(request: Request, stored: StoredUpload, name: str, path: Path, findings: list) -> Response:
    rows = an.finding_rows(findings, path, name)
    return render(request, "earlier_findings.html", {"upload": stored, "name": name, "findings": rows}, status=422)


def _busy(request: Request, stored: StoredUpload) -> Response:
    running = running_solve(stored.state)
    return message(
        request,
        409,
        "A solve is already running for this file",
        "Only one solve runs per file at a time. Watch it, or stop it and start again with other choices; "
        "the solves already finished stay on their own pages.",
        link=(f"{solve_base(stored, running)}/solving" if running else f"/files/{stored.token}", "See the running solve"),
    )


def _whole(text: str, label: str, low: int, high: int) -> int:
    text = (text or "").strip()
    if not text.isdigit() or not low <= int(text) <= high:
        raise ValueError(f"{label} must be a whole number from {low} to {high}; it was '{text}'.")
    return int(text)


def _legacy(request: Request, stored: StoredUpload, page: str) -> Response:
    """An address without a solve id (bookmarks, older links): the newest solve's own page."""
    kept = latest_solve(stored.state)
    if kept is None:
        return RedirectResponse(f"/files/{stored.token}", status_code=303)
    query = f"?{request.url.query}" if request.url.query else ""
    return RedirectResponse(f"{solve_base(stored, kept)}/{page}{query}", status_code=303)


async def solving(request: Request) -> Response:
    stored = upload_of(request)
    if "solve" not in request.path_params:
        return _legacy(request, stored, "solving")
    kept = solve_of(request, stored)
    job = kept.job
    base = solve_base(stored, kept)
    if not job.running and job.state == "finished":
        return RedirectResponse(f"{base}/timetable", status_code=303)
    return render(request, "solving.html", {"upload": stored, "job": job, "solve": kept, "base": base,
                                            "progress": job.to_json()})


async def solving_json(request: Request) -> Response:
    stored = upload_of(request)
    kept = solve_of(request, stored)
    if kept is None:
        return JSONResponse({"state": "none"})
    doc = kept.job.to_json()
    doc["next"] = f"{solve_base(stored, kept)}/timetable"
    return JSONResponse(doc)


async def stop(request: Request) -> Response:
    """Stop a solve, keeping the best timetable found for the slot count in hand; then its timetables."""
    stored = upload_of(request)
    kept = solve_of(request, stored) if "solve" in request.path_params else running_solve(stored.state)
    if kept is None:
        return RedirectResponse(f"/files/{stored.token}", status_code=303)
    await run_in_threadpool(kept.job.stop)
    return RedirectResponse(f"{solve_base(stored, kept)}/timetable", status_code=303)


# -- results ----------------------------------------------------------------------------------------


def _finished_runs(kept: Solve) -> list:
    job = kept.job
    return [job.runs[k] for k, _ in job.plan if k in job.runs]


async def timetable(request: Request) -> Response:
    stored = upload_of(request)
    if "solve" not in request.path_params:
        return _legacy(request, stored, "timetable")
    kept = solve_of(request, stored)
    job = kept.job
    base = solve_base(stored, kept)
    if job.running:
        return RedirectResponse(f"{base}/solving", status_code=303)
    runs = _finished_runs(kept)
    problem = kept.problem
    from .records_pages import remember_solve  # the store keeps every finished solve (once)

    await remember_solve(request, stored, kept, runs)
    analysis = _current_analysis(stored)
    counts = _cached_counts(analysis, [r.slots for r in runs])
    table = await run_in_threadpool(_comparison, problem, runs, counts, job.fewest)
    for row in table["rows"]:
        if row["label"] == "Status":  # a run that came back because of Stop says so beside its status
            for k, cell in zip(table["slots"], row["values"]):
                if int(k) in job.stopped:
                    cell["text"] = f"{cell['text']} (stopped)"
    shown_k = request.query_params.get("slots")
    with_timetable = [r for r in runs if r.assignment]
    shown = next((r for r in with_timetable if str(r.slots) == shown_k), with_timetable[0] if with_timetable else None)
    return render(
        request,
        "timetable.html",
        {
            "upload": stored,
            "job": job,
            "solve": kept,
            "base": base,
            "others": [(other, solve_base(stored, other)) for other in solves_of(stored.state).values() if other is not kept],
            "runs": runs,
            "stopped": sorted(job.stopped),
            "comparison": table,
            "fewest": job.fewest,
            "fewest_short": _short_sheet(job.fewest),
            "shown": shown,
            "grid": an.grid(problem, shown) if shown is not None else None,
            "people": an.people_rows(problem, shown) if shown is not None else None,
            "with_timetable": with_timetable,
            "settings_used": kept.settings,
            "dated": bool(with_timetable) and all(s.date is not None for s in with_timetable[0].slot_list),
            "earlier": kept.earlier,
            "moves": _moves(problem, shown) if shown is not None else [],
            "moves_by_slots": [(r.slots, len(r.moves or [])) for r in with_timetable],
        },
    )


def _moves(problem, run) -> list[dict]:
    """The events a repair moved, with the slots by label: from the earlier timetable, to this one."""
    labels = [slot.label for slot in run.slot_list]

    def label(number: int) -> str:
        return labels[number - 1] if 1 <= number <= len(labels) else str(number)

    moves = getattr(run, "moves", None) or []
    sizes = problem.event_sizes() if moves else {}
    rows = []
    for move in moves:
        event = problem.events.get(move["event"])
        rows.append({"event": move["event"], "title": getattr(event, "title", None) or "",
                     "from": label(move["from"]), "to": label(move["to"]), "attendees": sizes.get(move["event"], 0)})
    return rows


def _short_sheet(fewest: Any) -> str | None:
    """The plain sentence when the slots sheet is shorter than the fewest slots needed (else None)."""
    from ..export.tables import short_sheet_words

    return short_sheet_words(fewest)


def _comparison(problem, runs: list, counts: Any, fewest: Any) -> dict:
    """The side-by-side of the ``compare`` command and the workbook (export.tables), turned for the page:
    one row per figure, one column per slot count."""
    from ..export.tables import comparison_table, value_text

    validations = {r.slots: r.validation for r in runs if getattr(r, "validation", None) is not None}
    table = comparison_table(problem, runs, counts, validations, None, fewest)
    skip = {"Slots"}
    rows = []
    for i, column in enumerate(table.columns):
        if column.header in skip:
            continue
        values = [row[i] for row in table.rows]
        if all(v in (None, "") for v in values):
            continue
        whole = [int(v) for v in values if (isinstance(v, int) and not isinstance(v, bool)) or (isinstance(v, str) and v.isdigit())]
        style = count_style(whole)  # one format for the whole row, as in the counts table
        rows.append({"label": column.header, "kind": column.kind,
                     "values": [_cell(v, column.kind, value_text, style) for v in values]})
    return {"slots": [row[0] for row in table.rows], "rows": rows}


def _cell(value: Any, kind: str, value_text, style: str = "digits") -> dict:
    """One value of the side-by-side, shaped for the page: numbers grouped, or every whole number of
    the row as a power of ten when one of them is too long (all the digits in the title)."""
    if isinstance(value, bool) or value is None:
        return {"text": value_text(value, kind), "numeric": False}
    if isinstance(value, str) and value.isdigit():
        value = int(value)  # counts travel as decimal text
    if isinstance(value, int):
        return {"text": table_count(value, style), "all": group_digits(value), "numeric": True}
    if isinstance(value, float):
        if value.is_integer() and abs(value) < 1e15:
            return {"text": group_digits(int(value)), "numeric": True}
        return {"text": f"{value:.1f}" if abs(value) >= 10 else f"{value:.2f}", "numeric": True}
    return {"text": value_text(value, kind), "numeric": False}


def _cached_counts(analysis: an.Analysis | None, ks: list[int]) -> Any:
    """A count report the overview already made that covers these slot counts, or None."""
    if analysis is None:
        return None
    covering = [report for key, report in list(analysis.counts.items()) if set(ks) <= set(key)]
    return max(covering, key=exact_share, default=None)


# -- downloads --------------------------------------------------------------------------------------

DOWNLOADS = {
    "timetable.xlsx": ("xlsx", "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet"),
    "tables-csv.zip": ("csv", "application/zip"),
    "calendars-ics.zip": ("ics", "application/zip"),
}


async def download(request: Request) -> Response:
    stored = upload_of(request)
    name = request.path_params["name"]
    if name not in DOWNLOADS:
        raise HTTPException(404, "There is no such download.")
    kept = solve_of(request, stored)
    runs = _finished_runs(kept) if kept is not None else []
    if kept is None or not runs or kept.job.running:
        return message(request, 409, "Nothing to download yet", "Solve first; the files are made from the finished timetables.",
                       back=f"/files/{stored.token}")
    kind, media_type = DOWNLOADS[name]
    pseudonyms = request.query_params.get("pseudonyms") == "1"
    counts = await run_in_threadpool(_counts_report, _current_analysis(stored), [r.slots for r in runs],
                                     request.app.state.settings)
    made = kept.outputs.get((kind, pseudonyms))
    if made is None or made[1] is not counts:  # made again once better counts have arrived
        try:
            path = await run_in_threadpool(_make_output, stored, kept, kind, runs, counts, pseudonyms)
            kept.outputs[(kind, pseudonyms)] = (path, counts)
        except InputError as exc:
            return message(request, 400, "This file cannot be made", str(exc).replace(str(stored.folder), "the private folder"),
                           back=f"{solve_base(stored, kept)}/timetable")
    shown = name.replace(".", "-pseudonyms.", 1) if pseudonyms else name
    return FileResponse(kept.outputs[(kind, pseudonyms)][0], filename=shown, media_type=media_type)


def _make_output(stored: StoredUpload, kept: Solve, kind: str, runs: list, counts: Any, pseudonyms: bool = False) -> Path:
    """Write one download with the export layer's publish(), as ``solve --out/--csv/--ics`` do."""
    from ..export.publishing import publish

    analysis = _current_analysis(stored)
    # Named as the user knows the file: never the private path, the token or the stored name.
    problem, reading = an.named_as_uploaded(kept.problem, analysis.reading if analysis is not None else None,
                                            stored.path, stored.name)
    settings = {"input file": stored.name, **kept.settings}
    extra = {
        "validations": {r.slots: r.validation for r in runs if getattr(r, "validation", None) is not None},
        "fewest": kept.job.fewest,
    }
    wanted = {"pseudonyms": True} if pseudonyms else {}
    out = stored.folder / f"out-{kept.id}" / ("pseudonyms" if pseudonyms else "plain")
    out.mkdir(parents=True, exist_ok=True)
    if kind == "xlsx":
        target = out / "timetable.xlsx"
        publish({"out": str(target), **wanted}, problem=problem, runs=runs, counts=counts, reading=reading, settings=settings,
                quiet=True, **extra)
        return target
    folder = out / kind
    if folder.exists():
        shutil.rmtree(folder)
    key = "csv" if kind == "csv" else "ics"
    publish({key: str(folder), **wanted}, problem=problem, runs=runs, counts=counts, reading=reading, settings=settings,
            quiet=True, **extra)
    return an.zip_folder(folder, out / f"{kind}.zip")


#: Seconds a download waits for the counts of its slot counts: what ``solve --out`` gives counting.
DOWNLOAD_COUNT_WAIT = 20.0


def _counts_report(analysis: an.Analysis | None, ks: list[int], settings: Any):
    """The best count report covering the solved slot counts, waiting up to DOWNLOAD_COUNT_WAIT
    seconds for a count still running (started here if the page has none for them)."""
    if analysis is None or not analysis.summary.events:
        return None
    wanted = set(ks)
    cached = _cached_counts(analysis, ks)
    if cached is not None and exact_share(cached) == len(cached.counts):
        return cached
    task = next((t for key, t in list(analysis.tasks.items()) if wanted <= set(key) and t.state in ("counting", "refining")),
                None)
    if task is None:
        task = start_count(analysis, sorted(wanted), settings.count_first_seconds, settings.count_budget_seconds)
    task.finished.wait(DOWNLOAD_COUNT_WAIT)
    return _cached_counts(analysis, ks)


# -- delete -------------------------------------------------------------------------------------------


async def delete(request: Request) -> Response:
    stored = upload_of(request)
    await run_in_threadpool(stop_upload_work, stored)
    store_of(request).delete(stored.token)
    return message(request, 200, "Deleted", f"'{stored.name}' and everything made from it have been deleted from this computer's temporary folder.",
                   back="/")


async def favicon(request: Request) -> Response:
    return Response(status_code=204)


ROUTES = [
    Route("/", home, methods=["GET"]),
    Route("/favicon.ico", favicon, methods=["GET"]),
    Route("/template.xlsx", template_workbook, methods=["GET"]),
    Route("/upload", upload, methods=["POST"]),
    Route("/files/{token}", overview, methods=["GET"]),
    Route("/files/{token}/counts.json", counts_json, methods=["GET"]),
    Route("/files/{token}/solve", start_solve, methods=["POST"]),
    Route("/files/{token}/solving", solving, methods=["GET"]),
    Route("/files/{token}/solving.json", solving_json, methods=["GET"]),
    Route("/files/{token}/stop", stop, methods=["POST"]),
    Route("/files/{token}/timetable", timetable, methods=["GET"]),
    Route("/files/{token}/download/{name}", download, methods=["GET"]),
    Route("/files/{token}/solves/{solve}/solving", solving, methods=["GET"]),
    Route("/files/{token}/solves/{solve}/solving.json", solving_json, methods=["GET"]),
    Route("/files/{token}/solves/{solve}/stop", stop, methods=["POST"]),
    Route("/files/{token}/solves/{solve}/timetable", timetable, methods=["GET"]),
    Route("/files/{token}/solves/{solve}/download/{name}", download, methods=["GET"]),
    Route("/files/{token}/delete", delete, methods=["POST"]),
]
