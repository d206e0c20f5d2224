"""``timetabler serve``: the local web page, for registrars who would rather not use a terminal."""

from __future__ import annotations

import ipaddress
import socket
import threading
import webbrowser

import click

from ..plan import BACKGROUND_COUNT_SECONDS
from .common import err_console, styled
from .store_options import open_store, store_options


def _is_loopback(host: str) -> bool:
    if host == "localhost":
        return True
    try:
        return ipaddress.ip_address(host.strip("[]")).is_loopback
    except ValueError:
        return False


def _port_free(host: str, port: int) -> bool:
    family = socket.AF_INET6 if ":" in host else socket.AF_INET
    with socket.socket(family, socket.SOCK_STREAM) as sock:
        try:
            sock.bind((host.strip("[]"), port))
        except OSError:
            return False
    return True


@click.command("serve")
@click.option("--port", type=click.IntRange(0, 65535), default=8765, show_default=True,
              help="Port of the page (0: any free port).")
@click.option("--open", "open_browser", is_flag=True, help="Open the page in your web browser once it is ready.")
@click.option("--host", default="127.0.0.1", show_default=True, metavar="ADDRESS",
              help="Address to listen on. Keep the default: other addresses let other computers reach the page.")
@click.option("--max-upload-mb", type=click.IntRange(1, 1024), default=20, show_default=True,
              help="Largest file the page accepts, in MB.")
@click.option("--count-seconds", type=click.FloatRange(1, 3600), default=BACKGROUND_COUNT_SECONDS, show_default=True,
              help="Time the counting of clash-free timetables may go on in the background for the overview page "
                   "(the page shows bounds after a few seconds and the exact figures when they are ready).")
@store_options
def command(port: int, open_browser: bool, host: str, max_upload_mb: int, count_seconds: float, store_at: str | None,
            retention_days: int) -> None:
    """Start the timetabler web page on this computer.

    \b
    Open the address it prints in a web browser, upload an enrolment file, and do the
    whole job there: see the figures and warnings, how many clash-free timetables each
    number of slots allows, solve, compare, and download the workbook, CSV files and
    calendar files. Stop the page with Ctrl+C.

    \b
    Everything stays on this computer: the page fetches nothing from the internet, and
    uploaded files sit in a private temporary folder that is deleted when you delete the
    file on the page, after a few hours unused, or when the page stops. Timetables you
    publish on the page are kept in the store (--store) until you delete them or until
    they sit unused for --retention-days; the page's "stored work" lists them.
    """
    import uvicorn

    from ..web.app import WebSettings, create_app

    if not _is_loopback(host):
        err_console.print(styled(
            ("careful:", "bold yellow"), f" listening on {host} lets other computers on the network reach the page, "
            "which has no login. Enrolments are personal data; prefer the default address 127.0.0.1."))
    if port and not _port_free(host, port):
        raise click.UsageError(
            f"Port {port} is already in use on {host} — perhaps the page is already running. "
            "Open it in the browser, or choose another port with --port."
        )
    extra = () if _is_loopback(host) else (host,)
    with open_store(store_at, retention_days) as records:  # created or upgraded now; old inputs deleted
        kept = str(records.path)
    settings = WebSettings(max_upload_bytes=max_upload_mb * 1024 * 1024, count_budget_seconds=count_seconds, extra_hosts=extra,
                           store_path=kept, retention_days=retention_days)
    app = create_app(settings)
    config = uvicorn.Config(app, host=host, port=port, log_level="warning", access_log=False, lifespan="on")
    server = uvicorn.Server(config)

    def announce() -> None:
        while not server.started:
            if server.should_exit:
                return
            threading.Event().wait(0.05)
        bound = port
        for srv in getattr(server, "servers", []) or []:
            for sock in getattr(srv, "sockets", []) or []:
                bound = sock.getsockname()[1]
        shown = f"[{host}]" if ":" in host else host
        url = f"http://{shown}:{bound}/"
        err_console.print(styled("timetabler page ready at ", (url, "bold"),
                                 "  (Ctrl+C stops it and deletes the uploads)"), soft_wrap=True)
        if open_browser:
            webbrowser.open(url)

    threading.Thread(target=announce, daemon=True).start()
    try:
        server.run()
    except KeyboardInterrupt:
        pass  # uvicorn has already shut down cleanly (uploads deleted); Ctrl+C is the normal way to stop
    err_console.print("Page stopped; uploaded files deleted.", soft_wrap=True)
