"""Writing output files without losing anything.

Every exporter writes through :func:`write_safely`: the content goes to a temporary file
in the target's folder, and only a complete file is renamed over the target
(``os.replace``, atomic on one file system). A failed or interrupted export therefore
leaves the previous file as it was. :func:`check_target` refuses to write over an input
file and turns "permission denied" (on Windows: the file is open in Excel) into a clear
:class:`~timetabler.errors.InputError`.
"""

from __future__ import annotations

import os
import tempfile
from pathlib import Path
from typing import Callable, Iterable

from ..errors import Finding, InputError


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.exists() and b.exists() and os.path.samefile(a, b)
    except OSError:
        return False


def check_target(path: str | Path, *, inputs: Iterable[str | Path] = (), suffixes: tuple[str, ...] = ()) -> Path:
    """Check that ``path`` may be written: not an input file, right suffix, folder exists.

    Raises :class:`InputError` with a message naming the file and what to do.
    """
    target = Path(path).expanduser()
    if suffixes and target.suffix.lower() not in suffixes:
        raise InputError(
            Finding(
                f"The output file {target} should end in {' or '.join(suffixes)}.",
                found=target.suffix or "(no suffix)",
                suggestion=f"Give a name like timetable{suffixes[0]}.",
            )
        )
    for source in inputs:
        if not source:
            continue
        src = Path(source).expanduser()
        if _same_file(target, src) or target.resolve() == src.resolve():
            raise InputError(
                Finding(
                    f"The output file {target} is the input file; timetabler never writes over its input.",
                    suggestion="Choose another name for the output, for example timetable.xlsx.",
                )
            )
    folder = target.parent if str(target.parent) else Path(".")
    if not folder.exists():
        raise InputError(
            Finding(f"Cannot write {target}: the folder {folder} does not exist.", suggestion="Create the folder first or choose another place.")
        )
    if target.exists() and target.is_dir():
        raise InputError(Finding(f"Cannot write {target}: it is a folder, not a file."))
    for lock in (folder / f"~${target.name}", folder / f".~lock.{target.name}#"):
        if lock.exists():
            raise InputError(
                Finding(
                    f"{target} seems to be open in a spreadsheet program (its lock file {lock.name} exists).",
                    suggestion="Close it there and run the command again, or choose another output name.",
                )
            )
    return target


def write_safely(path: str | Path, write: Callable[[Path], None]) -> Path:
    """Call ``write(temporary_path)`` and move the finished file to ``path``.

    The temporary file lives in the target's folder so the final rename is atomic. On any
    failure the temporary file is removed and the target is left untouched.
    """
    target = Path(path).expanduser()
    folder = target.parent if str(target.parent) else Path(".")
    try:
        fd, tmp_name = tempfile.mkstemp(prefix=f".{target.stem}-", suffix=target.suffix + ".part", dir=folder)
    except PermissionError as exc:
        raise InputError(
            Finding(f"Cannot write in the folder {folder}: permission denied.", suggestion="Choose a folder you can write to.")
        ) from exc
    except FileNotFoundError as exc:
        raise InputError(Finding(f"Cannot write {target}: the folder {folder} does not exist.")) from exc
    os.close(fd)
    tmp = Path(tmp_name)
    try:
        write(tmp)
        if target.exists():
            try:  # keep the old file's permission bits where we can
                os.chmod(tmp, target.stat().st_mode & 0o777)
            except OSError:
                pass
        else:
            umask = os.umask(0)
            os.umask(umask)
            os.chmod(tmp, 0o666 & ~umask)
        os.replace(tmp, target)
    except PermissionError as exc:
        raise InputError(
            Finding(
                f"Cannot write {target}: permission denied. It may be open in another program "
                "(a spreadsheet or calendar), or the file or folder may be read-only.",
                suggestion="Close it there and run the command again, or choose another output name.",
            )
        ) from exc
    finally:
        if tmp.exists():
            try:
                tmp.unlink()
            except OSError:
                pass
    return target
