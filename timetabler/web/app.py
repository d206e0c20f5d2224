"""The ASGI application of the local web page: settings, safety middleware, error pages.

:func:`create_app` builds a Starlette application that ``timetabler serve`` hands to
uvicorn (and that the tests drive through the ASGI test client). Safety, in order:

* **Host check** — requests must name a host this server listens as (``127.0.0.1``,
  ``localhost``, ``[::1]`` or the address given to ``--host``), so a web site in another
  tab cannot reach the page by rebinding its own domain name to this machine.
* **Same origin for every POST** — the ``Origin`` header (or, failing that, ``Referer``)
  must be this page; a form on another site cannot upload to it or start a solve.
* **No downloads for other sites** — a file (the template, a timetable workbook, CSV or
  calendar files) is sent only to a request from this page or typed in by the user
  (``Sec-Fetch-Site`` ``same-origin`` or ``none``; without it, no ``Origin`` or ``Referer``
  of another site), so a page elsewhere cannot make the browser fetch one.
* **Headers** — a content security policy allowing only this page's own scripts, styles
  and images (nothing is fetched from anywhere else), no framing, no MIME sniffing, no
  referrer sent elsewhere.
* **Errors as messages** — a bug shows a plain page saying so; the traceback goes to the
  terminal that runs the server, never to the browser.

Uploads live in a private temporary folder (:class:`~timetabler.web.uploads.UploadStore`)
removed when the server stops.
"""

from __future__ import annotations

import contextlib
import logging
from dataclasses import dataclass, field
from pathlib import Path
from urllib.parse import urlsplit

from jinja2 import Environment, FileSystemLoader, select_autoescape
from starlette.applications import Starlette
from starlette.exceptions import HTTPException
from starlette.requests import Request
from starlette.responses import HTMLResponse, JSONResponse, Response
from starlette.routing import Mount
from starlette.staticfiles import StaticFiles
from starlette.templating import Jinja2Templates
from starlette.types import ASGIApp, Receive, Scope, Send

from ..plan import BACKGROUND_COUNT_SECONDS, MOST_SESSIONS_PER_DAY, SESSIONS_PER_DAY, SOLVE_SECONDS
from ..store.location import DEFAULT_RETENTION_DAYS
from .uploads import DEFAULT_MAX_UPLOAD_BYTES, UploadStore

log = logging.getLogger("timetabler.web")

HERE = Path(__file__).parent

LOOPBACK_HOSTS = ("127.0.0.1", "localhost", "::1")

#: Headers sent with every response.
SECURITY_HEADERS = {
    "content-security-policy": (
        "default-src 'none'; script-src 'self'; style-src 'self'; img-src 'self' data:; "
        "connect-src 'self'; form-action 'self'; base-uri 'none'; frame-ancestors 'none'"
    ),
    "x-content-type-options": "nosniff",
    "x-frame-options": "DENY",
    "referrer-policy": "same-origin",
    "cross-origin-opener-policy": "same-origin",
    "cross-origin-resource-policy": "same-origin",
    "cache-control": "no-store",
}


@dataclass
class WebSettings:
    """What ``timetabler serve`` can set; the defaults suit a laptop."""

    max_upload_bytes: int = DEFAULT_MAX_UPLOAD_BYTES
    #: Seconds the first look at the counts may take before the page shows bounds (web.count_jobs).
    count_first_seconds: float = 3.0
    #: Seconds the counting of one set of slot counts may go on in the background; at least the
    #: command line's 20 s, since a count cut short says "not exact" where the command is exact.
    count_budget_seconds: float = BACKGROUND_COUNT_SECONDS
    #: Default and largest time limit per slot count offered for a solve.
    default_time_limit: int = int(SOLVE_SECONDS)
    max_time_limit: int = 3600
    #: Most slot counts solved in one job.
    max_slot_counts: int = 8
    #: Hosts the page answers as (besides the loopback names).
    extra_hosts: tuple[str, ...] = ()
    #: Uploads kept at once, and how long an upload may sit unused.
    max_uploads: int = 12
    idle_seconds: float = 4 * 3600
    #: The store of published timetables (None: --store / TIMETABLER_STORE / the user's data folder),
    #: and the days an unused stored input is kept (0: until deleted).
    store_path: str | None = None
    retention_days: int = DEFAULT_RETENTION_DAYS
    #: Every host name the page answers as: the loopback names and extra_hosts.
    allowed_hosts: tuple[str, ...] = field(default=(), init=False)

    def __post_init__(self) -> None:
        self.allowed_hosts = tuple(h.strip("[]").lower() for h in (*LOOPBACK_HOSTS, *self.extra_hosts))


class GuardMiddleware:
    """Host check, same-origin check of POSTs, and the security headers (plain ASGI middleware)."""

    def __init__(self, app: ASGIApp, settings: WebSettings):
        self.app = app
        self.settings = settings

    async def __call__(self, scope: Scope, receive: Receive, send: Send) -> None:
        if scope["type"] != "http":
            await self.app(scope, receive, send)
            return
        request = Request(scope)
        host = _host_name(request.headers.get("host", ""))
        if host not in self.settings.allowed_hosts:
            response = _plain_refusal(
                400,
                "This page answers only at its own address on this computer "
                f"(for example http://127.0.0.1:{scope.get('server', ('', 8000))[1] or 8000}/).",
            )
            await response(scope, receive, _with_headers(send))
            return
        if _is_download(request.url.path) and not _not_from_elsewhere(request):
            response = _plain_refusal(
                403,
                "This download was asked for by another web site, so it was refused. "
                "Open the timetabler page at its own address and download the file from there.",
            )
            await response(scope, receive, _with_headers(send))
            return
        if request.method not in ("GET", "HEAD", "OPTIONS") and not _same_origin(request):
            response = _plain_refusal(
                403,
                "This request did not come from the timetabler page itself, so it was refused. "
                "Open the page at its own address and try again.",
            )
            await response(scope, receive, _with_headers(send))
            return
        await self.app(scope, receive, _with_headers(send))


def _with_headers(send: Send) -> Send:
    async def wrapped(message: dict) -> None:
        if message["type"] == "http.response.start":
            headers = list(message.get("headers", []))
            present = {k.lower() for k, _ in headers}
            for key, value in SECURITY_HEADERS.items():
                if key.encode() not in present:
                    headers.append((key.encode(), value.encode()))
            message = {**message, "headers": headers}
        await send(message)

    return wrapped


def _host_name(host_header: str) -> str:
    host = host_header.strip().lower()
    if host.startswith("["):
        return host[1 : host.find("]")] if "]" in host else host
    return host.rsplit(":", 1)[0] if host.count(":") == 1 else host


def _same_origin(request: Request) -> bool:
    """True when the request's Origin (or Referer) is this page's own scheme, host and port."""
    own_host = request.headers.get("host", "").lower()
    site = request.headers.get("sec-fetch-site")
    if site is not None and site not in ("same-origin", "none"):
        return False
    origin = request.headers.get("origin")
    if origin is None or origin == "null":
        origin = request.headers.get("referer")
        if origin is None:
            return False
    parts = urlsplit(origin)
    return parts.scheme in ("http", "https") and parts.netloc.lower() == own_host


def _is_download(path: str) -> bool:
    return path == "/template.xlsx" or "/download/" in path


def _not_from_elsewhere(request: Request) -> bool:
    """True for a request from this page itself or typed in by the user (a bookmark, the address
    bar); False when another site asked for it (a link, an image or a script on that site)."""
    own_host = request.headers.get("host", "").lower()
    site = request.headers.get("sec-fetch-site")
    if site is not None and site not in ("same-origin", "none"):
        return False
    for header in ("origin", "referer"):
        value = request.headers.get(header)
        if value and value != "null":
            parts = urlsplit(value)
            if parts.netloc.lower() != own_host:
                return False
    return True


def _plain_refusal(status: int, message: str) -> Response:
    body = (
        "<!doctype html><html lang='en'><head><meta charset='utf-8'><title>Refused — timetabler</title></head>"
        f"<body><h1>Refused</h1><p>{message}</p></body></html>"
    )
    return HTMLResponse(body, status_code=status)


def make_templates() -> Jinja2Templates:
    env = Environment(
        loader=FileSystemLoader(str(HERE / "templates")),
        autoescape=select_autoescape(["html", "svg"]),
        trim_blocks=True,
        lstrip_blocks=True,
    )
    from . import page_format

    env.filters.update(page_format.FILTERS)
    env.globals.update(sessions_per_day=SESSIONS_PER_DAY, most_sessions_per_day=MOST_SESSIONS_PER_DAY)
    return Jinja2Templates(env=env)


def create_app(settings: WebSettings | None = None) -> Starlette:
    """The web page as an ASGI application.

    Examples
    --------
    >>> from starlette.testclient import TestClient
    >>> with TestClient(create_app(), base_url="http://127.0.0.1") as client:
    ...     client.get("/").status_code
    200
    """
    from . import records_pages, routes

    settings = settings or WebSettings()
    templates = make_templates()

    @contextlib.asynccontextmanager
    async def lifespan(app: Starlette):
        store = UploadStore(max_bytes=settings.max_upload_bytes, max_uploads=settings.max_uploads, idle_seconds=settings.idle_seconds)
        store.busy = lambda upload: routes.job_running(upload)
        store.before_delete = routes.stop_upload_work
        app.state.store = store
        log.info("uploads are kept in %s until the server stops", store.root)
        try:
            yield
        finally:
            routes.stop_all_jobs(store)
            store.close()

    async def not_found(request: Request, exc: HTTPException) -> Response:
        return _message(request, templates, exc.status_code, _http_title(exc.status_code), str(exc.detail))

    async def server_error(request: Request, exc: Exception) -> Response:
        log.exception("internal error while answering %s %s", request.method, request.url.path)
        return _message(
            request,
            templates,
            500,
            "Something went wrong inside timetabler",
            "This is a bug in timetabler, not a problem with your file. The details are in the "
            "window where the page server runs; please report them. Your uploaded file is still here: "
            "go back and try again, or start over.",
        )

    app = Starlette(
        routes=[*routes.ROUTES, *records_pages.ROUTES, Mount("/static", app=StaticFiles(directory=str(HERE / "static")), name="static")],
        lifespan=lifespan,
        exception_handlers={HTTPException: not_found, Exception: server_error},
    )
    app.state.settings = settings
    app.state.templates = templates
    app.state.jobs = {}
    app.add_middleware(GuardMiddleware, settings=settings)
    return app


def _http_title(status: int) -> str:
    return {
        404: "Not here",
        405: "Not like that",
        409: "Busy",
        413: "File too large",
    }.get(status, "Cannot do that")


def _message(request: Request, templates: Jinja2Templates, status: int, title: str, text: str, **extra) -> Response:
    if request.url.path.endswith(".json"):
        return JSONResponse({"error": text}, status_code=status)
    context = {"title": title, "text": text, **extra}
    return templates.TemplateResponse(request, "message.html", context, status_code=status)
