"""Where the store lives: the user's data folder unless ``--store PATH`` or ``TIMETABLER_STORE`` says otherwise.

* Linux and other Unix: ``$XDG_DATA_HOME/timetabler/store.sqlite3``, or
  ``~/.local/share/timetabler/store.sqlite3`` when ``XDG_DATA_HOME`` is unset
  (the XDG Base Directory Specification);
* macOS: ``~/Library/Application Support/timetabler/store.sqlite3``;
* Windows: ``%LOCALAPPDATA%\\timetabler\\store.sqlite3``.
"""

from __future__ import annotations

import os
import sys
from pathlib import Path

STORE_ENV = "TIMETABLER_STORE"
RETENTION_ENV = "TIMETABLER_RETENTION_DAYS"
FILE_NAME = "store.sqlite3"
#: Days a stored input (its enrolments, results and labels) is kept after it was last used.
#: Common practice with no single source: an academic term and the following resit period.
DEFAULT_RETENTION_DAYS = 180


def default_store_path() -> Path:
    """The store in the user's data folder, as the platform names it."""
    home = Path.home()
    if sys.platform.startswith("win"):
        base = Path(os.environ.get("LOCALAPPDATA") or home / "AppData" / "Local")
    elif sys.platform == "darwin":
        base = home / "Library" / "Application Support"
    else:
        xdg = os.environ.get("XDG_DATA_HOME")
        base = Path(xdg) if xdg and os.path.isabs(xdg) else home / ".local" / "share"
    return base / "timetabler" / FILE_NAME


def store_path(given: str | os.PathLike | None = None) -> Path:
    """``given`` (``--store``), else ``$TIMETABLER_STORE``, else :func:`default_store_path`."""
    if given:
        return Path(given).expanduser()
    env = os.environ.get(STORE_ENV)
    if env:
        return Path(env).expanduser()
    return default_store_path()
