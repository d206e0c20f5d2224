"""The pages of the store: stored work and published timetables, the changes between two, publishing.

====================================  =============================================================
``GET  /stored``                      what the store keeps (inputs, results, published timetables),
                                      where, and for how long; compare two versions; delete
``GET  /stored/changes?from=A&to=B``  what moved between two published timetables and who must be told
``GET  /stored/changes/{name}``       notices.xlsx, notices-csv.zip, calendars-ics.zip (same query)
``POST /stored/forget``               delete a published label (``label``) or an input (``input``)
``POST /files/{token}/solves/{solve}/publish``  record a finished timetable of a solve as published (``slots``, ``label``)
====================================  =============================================================

The store is the same SQLite file the command line uses (``timetabler serve --store PATH``,
``TIMETABLER_STORE``, else the user's data folder), so what was published survives a
restart of the page and is seen by ``timetabler history``. Each request opens it in a
worker thread, does its work in one transaction and closes it; inputs older than the
retention period are deleted when the stored-work page is shown. A finished solve is recorded
(input, settings, each result with its validator verdict) when its timetable page is first
shown; publishing then marks that recorded result.
"""

from __future__ import annotations

import logging
import shutil
import tempfile
from pathlib import Path
from typing import Any

from starlette.background import BackgroundTask
from starlette.concurrency import run_in_threadpool
from starlette.exceptions import HTTPException
from starlette.requests import Request
from starlette.responses import FileResponse, Response
from starlette.routing import Route

from ..errors import InputError
from ..store import Store, changes_between, store_path
from ..store.records import publication_problems
from . import routes

log = logging.getLogger("timetabler.web")

DOWNLOADS = {
    "notices.xlsx": "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet",
    "notices-csv.zip": "application/zip",
    "calendars-ics.zip": "application/zip",
}


def _path(request: Request) -> Path:
    return store_path(getattr(request.app.state.settings, "store_path", None))


def _retention(request: Request) -> int:
    return int(getattr(request.app.state.settings, "retention_days", 0) or 0)


def _open(request: Request) -> Store:
    return Store(_path(request))


async def stored(request: Request) -> Response:
    def read() -> dict:
        with _open(request) as store:
            gone = store.forget_older_than(_retention(request))
            return {"inputs": store.inputs(), "versions": [v.summary_json() for v in store.published_versions()],
                    "runs": store.runs(), "gone": gone, "path": store.path}

    try:
        found = await run_in_threadpool(read)
    except InputError as exc:
        return routes.message(request, 500, "The store cannot be opened", str(exc), back="/")
    return routes.render(request, "stored.html", {**found, "retention_days": _retention(request),
                                                  "done": request.query_params.get("done")})


def _labels(request: Request) -> tuple[str, str]:
    before, after = request.query_params.get("from"), request.query_params.get("to")
    if not before or not after:
        raise HTTPException(404, "Choose two published timetables to compare on the stored-work page.")
    return before, after


def _changes(request: Request, before_label: str, after_label: str):
    with _open(request) as store:
        before = store.published_version(before_label)
        after = store.published_version(after_label)
    return before, after, changes_between(before, after)


async def changes(request: Request) -> Response:
    before_label, after_label = _labels(request)
    try:
        before, after, found = await run_in_threadpool(_changes, request, before_label, after_label)
    except InputError as exc:
        return routes.message(request, 404, "No such published timetable", str(exc), back="/stored")
    items = [("moved", m) for m in found.moved] + [("added", m) for m in found.added] + \
            [("removed", m) for m in found.removed]
    dated = all(s.date is not None for s in before.slots + after.slots)
    return routes.render(request, "changes.html", {"before": before, "after": after, "changes": found, "items": items,
                                                   "dated": dated, "query": request.url.query})


async def change_download(request: Request) -> Response:
    name = request.path_params["name"]
    if name not in DOWNLOADS:
        raise HTTPException(404, "There is no such download.")
    before_label, after_label = _labels(request)

    def make() -> Path:
        before, after, found = _changes(request, before_label, after_label)
        titles = {**before.titles, **after.titles}
        folder = Path(tempfile.mkdtemp(prefix="timetabler-changes-"))
        try:
            if name == "notices.xlsx":
                from ..export.change_notices import write_change_workbook

                return write_change_workbook(folder / name, found, titles)
            inner = folder / "files"
            if name == "notices-csv.zip":
                from ..export.change_notices import write_change_csv

                write_change_csv(inner, found, titles)
            else:
                from ..export.change_calendars import write_change_calendars

                write_change_calendars(inner, before=before, after=after, changes=found)
            from .analysis import zip_folder

            return zip_folder(inner, folder / name)
        except BaseException:
            shutil.rmtree(folder, ignore_errors=True)
            raise

    try:
        path = await run_in_threadpool(make)
    except InputError as exc:
        return routes.message(request, 400, "This file cannot be made", str(exc), back=f"/stored/changes?{request.url.query}")
    return FileResponse(path, filename=name, media_type=DOWNLOADS[name],
                        background=BackgroundTask(shutil.rmtree, path.parent, True))


async def forget(request: Request) -> Response:
    form = await request.form()
    label, input_id = form.get("label"), form.get("input")

    def work() -> str:
        with _open(request) as store:
            if label:
                store.forget_label(str(label))
                return f"Deleted the published timetable '{label}'."
            if input_id and str(input_id).isdigit():
                gone = store.forget_input(int(str(input_id)))
                return f"Deleted input #{gone.id} ({gone.source_name}) with its enrolments, results and labels."
            raise InputError("Say what to delete: a published label or an input number.")

    try:
        done = await run_in_threadpool(work)
    except InputError as exc:
        return routes.message(request, 400, "Nothing deleted", str(exc), back="/stored")
    return routes.message(request, 200, "Deleted", done, link=("/stored", "Back to the stored work"))


def published_labels(request: Request) -> list[str]:
    """The published labels, for the solve form's choice of an earlier timetable (none when the store cannot be read)."""
    try:
        with _open(request) as store:
            return store.labels()
    except InputError:
        log.exception("the store %s cannot be read", _path(request))
        return []


def published_refs(request: Request, label: str):
    """The earlier timetable of a repair from a published version (as ``solve --keep LABEL``)."""
    from ..intake.previous_timetable import PreviousTimetable

    with _open(request) as store:
        version = store.published_version(label)
    return PreviousTimetable(slots=version.slot_references(), sheet=f"published '{version.label}'",
                             reference="label")


def _recorded(upload: Any) -> dict:
    """Solve id -> {slot count: stored run id}, for the solves of this upload already in the store."""
    return upload.state.setdefault("recorded_solves", {})


async def remember_solve(request: Request, upload: Any, kept: Any, runs: list) -> None:
    """Record a finished solve of the page in the store (input, settings, each result), once per solve.

    A store that cannot be written is reported in the server's terminal; the page goes on without it.
    """
    if kept.id in _recorded(upload) or not runs:
        return
    settings = {"input file": upload.name, **(kept.settings or {})}

    def work() -> dict:
        with _open(request) as store:
            return store.record_solve(kept.problem, runs, settings).run_ids

    try:
        _recorded(upload)[kept.id] = await run_in_threadpool(work)
    except Exception:  # noqa: BLE001 - the timetable is still shown; the terminal says why it was not kept
        log.exception("the solve could not be recorded in the store %s", _path(request))


async def publish(request: Request) -> Response:
    upload = routes.upload_of(request)
    kept = routes.solve_of(request, upload)
    if kept is None:
        return routes.message(request, 404, "Nothing to publish", "Solve first.", back=f"/files/{upload.token}")
    back = f"{routes.solve_base(upload, kept)}/timetable"
    if kept.job.running:
        return routes.message(request, 409, "Still solving", "Publish once the solve has finished.", back=back)
    form = await request.form()
    label = str(form.get("label") or "").strip()
    wanted = str(form.get("slots") or "")
    runs = [r for r in routes._finished_runs(kept) if r.assignment and str(r.slots) == wanted]
    if not runs:
        return routes.message(request, 400, "Nothing to publish",
                              f"There is no finished timetable for {wanted or 'that number of'} slots.", back=back)
    problem = kept.problem
    settings = {"input file": upload.name, **(kept.settings or {})}

    def work() -> Any:
        from ..plan import checked

        run = checked(problem, runs[0])
        problems = publication_problems(problem, run)
        if problems:
            raise InputError(f"The timetable for {run.slots} slots was not published: {problems}")
        with _open(request) as store:
            run_id = _recorded(upload).get(kept.id, {}).get(int(run.slots))
            if run_id is not None and run_id in {r.id for r in store.runs()}:
                store.publish(run_id, label)  # the result recorded when the timetable was shown
                return label
            return store.record_solve(problem, [run], settings, publish=(int(run.slots), label)).published

    try:
        saved = await run_in_threadpool(work)
    except InputError as exc:
        return routes.message(request, 400, "Not published", str(exc), back=back)
    return routes.message(request, 200, "Published",
                          f"The {wanted}-slot timetable is published as '{saved}' and kept in the store. "
                          "Compare it with an earlier version on the stored-work page to see who must be told.",
                          link=("/stored", "Stored work and published timetables"), back=back)


ROUTES = [
    Route("/stored", stored, methods=["GET"]),
    Route("/stored/changes", changes, methods=["GET"]),
    Route("/stored/changes/{name}", change_download, methods=["GET"]),
    Route("/stored/forget", forget, methods=["POST"]),
    Route("/files/{token}/solves/{solve}/publish", publish, methods=["POST"]),
]
