"""Writing output files without losing anything.

Every exporter writes through :func:`write_safely`: the content goes to a temporary file
in the target's folder, and only a complete file is renamed over the target
(``os.replace``, atomic on one file system). A failed or interrupted export therefore
leaves the previous file as it was. :func:`check_target` refuses to write over an input
file and turns "permission denied" (on Windows: the file is open in Excel) into a clear
:class:`~timetabler.errors.InputError`.
"""

from __future__ import annotations

import errno
import os
import secrets
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


def _create_part_file(folder: Path, stem: str, suffix: str) -> Path:
    """A new, empty ``.part`` file in ``folder``, created with the usual mode of new files
    (0666 less the umask, as the kernel applies it: 0644 under the common umask 022)."""
    for _ in range(100):
        candidate = folder / f".{stem}-{secrets.token_hex(4)}{suffix}.part"
        try:
            fd = os.open(candidate, os.O_WRONLY | os.O_CREAT | os.O_EXCL, 0o666)
        except FileExistsError:
            continue
        os.close(fd)
        return candidate
    raise FileExistsError(f"no free temporary name in {folder}")


def _reason(exc: OSError) -> str:
    if isinstance(exc, PermissionError):
        return "permission denied"
    if exc.errno == errno.EROFS:
        return "it is on a read-only disk"
    if exc.errno == errno.ENOSPC:
        return "the disk is full"
    return (exc.strerror or str(exc)).lower()


def _cannot_write(target: Path, exc: OSError) -> InputError:
    if isinstance(exc, PermissionError):
        return InputError(Finding(
            f"Cannot write {target}: permission denied. It may be open in another program "
            "(a spreadsheet or calendar), or the file or folder may be read-only.",
            suggestion="Close it there and run the command again, or choose another output name."))
    return InputError(Finding(f"Cannot write {target}: {_reason(exc)}.", suggestion="Choose another folder for the output."))


def check_writable_folder(folder: str | Path, what: str) -> None:
    """Check that files can be created in ``folder`` (or, when it does not exist yet, in the
    nearest folder above it that does) by creating and removing a probe file.

    ``what`` names the output for the message (e.g. "the workbook (--out)"). Raises
    :class:`InputError` when the place is a file, read-only, full or forbidden.
    """
    place = Path(folder).expanduser()
    place = place if str(place) else Path(".")
    while not place.exists():
        if place.parent == place:
            break
        place = place.parent
    if place.exists() and not place.is_dir():
        raise InputError(Finding(f"Cannot write {what} in {folder}: {place} is a file, not a folder.",
                                 suggestion="Choose another place for the output."))
    try:
        probe = _create_part_file(place, "timetabler-check", "")
        probe.unlink()
    except OSError as exc:
        raise InputError(Finding(f"Cannot write {what} in the folder {place}: {_reason(exc)}.",
                                 suggestion="Choose another folder for the output.")) from exc


def write_safely(path: str | Path, write: Callable[[Path], None]) -> Path:
    """Call ``write(temporary_path)`` and move the finished file to ``path``.

    The temporary file lives in the target's folder so the final rename is atomic. On any
    failure, and on an interruption (Ctrl-C, or SIGTERM turned into an exception by the
    command line), the temporary file is removed and the target is left untouched. A new
    file gets the usual mode of new files (the umask applies); a replaced one keeps its mode.
    """
    target = Path(path).expanduser()
    folder = target.parent if str(target.parent) else Path(".")
    try:
        tmp = _create_part_file(folder, target.stem, target.suffix)
    except FileNotFoundError as exc:
        raise InputError(Finding(f"Cannot write {target}: the folder {folder} does not exist.")) from exc
    except OSError as exc:
        raise _cannot_write(target, exc) from exc
    try:
        write(tmp)
        if target.exists():
            try:  # keep the old file's permission bits where we can
                os.chmod(tmp, target.stat().st_mode & 0o777)
            except OSError:
                pass
        os.replace(tmp, target)
    except OSError as exc:
        raise _cannot_write(target, exc) from exc
    finally:
        if tmp.exists():
            try:
                tmp.unlink()
            except OSError:
                pass
    return target
