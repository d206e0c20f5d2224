"""Uploaded enrolment files: checked by content, kept in a private folder, deleted when done.

The web page never trusts what the browser says about a file. Its type is decided by
looking at the bytes (:func:`sniff_kind`): an ``.xlsx`` workbook is a zip archive holding
``[Content_Types].xml`` and ``xl/workbook.xml``; an ``.ods`` spreadsheet is a zip archive whose ``mimetype`` member says so; a CSV file is
text (UTF-16 with or without its byte-order mark, or any 8-bit text with no NUL or stray control
bytes — intake works out the encoding and the delimiter). The
name the browser sent is kept only to show it back to the user; on disk each upload lives
in a folder of its own, named by a random token, inside one private folder (mode 0700)
made when the server starts and removed when it stops. No path from the client ever
reaches the file system.
"""

from __future__ import annotations

import io
import os
import secrets
import shutil
import tempfile
import threading
import time
import unicodedata
import zipfile
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any

from ..intake.file_types import utf16_without_mark

#: Default cap on an upload, in bytes. Enrolment workbooks of a large university are a few MB.
DEFAULT_MAX_UPLOAD_BYTES = 20 * 1024 * 1024

#: Cap on the unpacked size of a workbook (a zip archive), against "zip bombs".
MAX_UNPACKED_BYTES = 400 * 1024 * 1024

#: Tokens are URL-safe random strings; anything else in a URL is not an upload.
_TOKEN_BYTES = 18


class UploadRejected(Exception):
    """An upload that is not kept: too large, empty, or not a workbook or CSV file."""

    def __init__(self, message: str, status: int = 400):
        super().__init__(message)
        self.status = status


def sniff_kind(head: bytes, path: Path | None = None) -> str:
    """Say what a file is from its bytes: ``"xlsx"``, ``"ods"`` or ``"csv"``; raise UploadRejected otherwise.

    ``head`` is the start of the file (a few KB is enough for text); for a zip archive the
    whole file at ``path`` is opened to list its members and their unpacked sizes.

    Examples
    --------
    >>> sniff_kind(b"Student,Exam\\nHV-S0001,MATH101\\n")
    'csv'
    >>> try:
    ...     sniff_kind(b"%PDF-1.7 ...")
    ... except UploadRejected as exc:
    ...     print(exc)
    This file is not a spreadsheet: it looks like a PDF document. Upload an .xlsx workbook or a .csv file.
    """
    if not head:
        raise UploadRejected("The file is empty.")
    if head.startswith(b"PK\x03\x04"):
        return _check_archive(path if path is not None else io.BytesIO(head))
    if head.startswith(b"\xd0\xcf\x11\xe0"):
        raise UploadRejected(
            "This file is an old-style Excel (.xls) or other Office 97 file. "
            "Open it in your spreadsheet program, save it as an .xlsx workbook, and upload that."
        )
    for magic, what in _OTHER_KINDS:
        if head.startswith(magic):
            raise UploadRejected(
                f"This file is not a spreadsheet: it looks like {what}. Upload an .xlsx workbook or a .csv file."
            )
    if head.startswith((b"\xff\xfe", b"\xfe\xff")) or utf16_without_mark(head):
        return "csv"  # UTF-16 text, with or without its byte-order mark, judged as intake judges it
    if b"\x00" in head or _control_share(head) > 0.01:
        raise UploadRejected("This file is not text and not a spreadsheet. Upload an .xlsx workbook or a .csv file.")
    return "csv"


def _control_share(data: bytes) -> float:
    """Share of bytes that never appear in a text file (C0 controls other than tab, CR, LF, FF)."""
    sample = data[:65536]
    bad = sum(1 for b in sample if b < 32 and b not in (9, 10, 12, 13))
    return bad / len(sample)


_OTHER_KINDS = (
    (b"%PDF", "a PDF document"),
    (b"\x89PNG", "a PNG picture"),
    (b"\xff\xd8\xff", "a JPEG picture"),
    (b"GIF8", "a GIF picture"),
    (b"\x1f\x8b", "a gzip archive"),
    (b"7z\xbc\xaf", "a 7-Zip archive"),
    (b"Rar!", "a RAR archive"),
    (b"MZ", "a Windows program"),
    (b"\x7fELF", "a program"),
)


def _check_archive(source: Any) -> str:
    try:
        with zipfile.ZipFile(source) as archive:
            infos = archive.infolist()
    except (zipfile.BadZipFile, OSError, ValueError):
        raise UploadRejected("This file starts like a workbook but is damaged or cut short. Save it again and upload it.") from None
    names = {info.filename for info in infos}
    unpacked = sum(info.file_size for info in infos)
    if unpacked > MAX_UNPACKED_BYTES:
        raise UploadRejected(
            f"This file unpacks to {unpacked // (1024 * 1024)} MB, more than the "
            f"{MAX_UNPACKED_BYTES // (1024 * 1024)} MB this page accepts.",
            status=413,
        )
    if "mimetype" in names and "content.xml" in names:
        with zipfile.ZipFile(source) as archive:
            mimetype = archive.read("mimetype")[:100]
        if mimetype.strip() == b"application/vnd.oasis.opendocument.spreadsheet":
            return "ods"
        raise UploadRejected("This OpenDocument file is not a spreadsheet. Upload an .xlsx, .ods or .csv file.")
    if "[Content_Types].xml" not in names:
        raise UploadRejected("This zip archive is not a workbook. Upload an .xlsx workbook or a .csv file.")
    if "xl/workbook.xml" not in names:
        if "word/document.xml" in names:
            raise UploadRejected("This is a Word document, not a workbook. Upload an .xlsx workbook or a .csv file.")
        if "ppt/presentation.xml" in names:
            raise UploadRejected("This is a presentation, not a workbook. Upload an .xlsx workbook or a .csv file.")
        raise UploadRejected("This Office file is not an .xlsx workbook. Upload an .xlsx workbook or a .csv file.")
    return "xlsx"


def display_name(client_name: str | None) -> str:
    """The browser's file name made safe to show: no folders, no control characters, not too long."""
    name = (client_name or "").replace("\\", "/").rsplit("/", 1)[-1]
    name = "".join(ch for ch in name if unicodedata.category(ch)[0] != "C").strip()
    if len(name) > 120:
        name = name[:80] + "…" + name[-30:]
    return name or "uploaded file"


def is_token(text: str) -> bool:
    """True when ``text`` has the shape of an upload token (so it can name a folder safely)."""
    return 16 <= len(text) <= 64 and all(ch.isascii() and (ch.isalnum() or ch in "-_") for ch in text)


@dataclass
class StoredUpload:
    """One uploaded file and everything the page worked out from it."""

    token: str
    folder: Path
    path: Path
    kind: str
    name: str
    size: int
    created: float = field(default_factory=time.monotonic)
    touched: float = field(default_factory=time.monotonic)
    #: Free-form cache of results for this upload (reading, summary, counts, runs, ...).
    state: dict[str, Any] = field(default_factory=dict)
    lock: threading.Lock = field(default_factory=threading.Lock)


@dataclass
class CompanionFile:
    """A second file kept beside an upload (in its folder, under a name of our choosing)."""

    path: Path
    kind: str
    name: str
    size: int


class UploadStore:
    """The private folder of uploads of one server run.

    Parameters
    ----------
    max_bytes
        Largest upload accepted.
    max_uploads
        Uploads kept at once; the least recently used idle one is deleted to make room.
    idle_seconds
        An upload not looked at for this long is deleted.
    """

    def __init__(self, *, max_bytes: int = DEFAULT_MAX_UPLOAD_BYTES, max_uploads: int = 12, idle_seconds: float = 4 * 3600):
        self.max_bytes = max_bytes
        self.max_uploads = max_uploads
        self.idle_seconds = idle_seconds
        self.root = Path(tempfile.mkdtemp(prefix="timetabler-web-"))  # mode 0700
        self._uploads: dict[str, StoredUpload] = {}
        self._lock = threading.Lock()
        self.busy = lambda upload: False  # replaced by the app: True while a job runs on an upload
        self.before_delete = lambda upload: None  # replaced by the app: ends the upload's solves and counts

    # -- life cycle -------------------------------------------------------------------------

    def new_folder(self) -> tuple[str, Path]:
        """A fresh token and its private folder, for an upload being received."""
        token = secrets.token_urlsafe(_TOKEN_BYTES)
        folder = self.root / token
        folder.mkdir(mode=0o700)
        return token, folder

    def keep(self, token: str, folder: Path, data_path: Path, client_name: str | None) -> StoredUpload:
        """Check a received file by content and keep it under a name of our choosing.

        Raises UploadRejected (and deletes the folder) when the file is not acceptable.
        """
        try:
            size, kind = self._size_and_kind(data_path)
            final = folder / f"enrolments.{kind}"
            os.replace(data_path, final)
        except BaseException:
            shutil.rmtree(folder, ignore_errors=True)
            raise
        upload = StoredUpload(token=token, folder=folder, path=final, kind=kind, name=display_name(client_name), size=size)
        with self._lock:
            self._uploads[token] = upload
        self.tidy(keep=token)
        return upload

    def keep_beside(self, upload: StoredUpload, data_path: Path, client_name: str | None, stem: str,
                    kinds: tuple[str, ...] = ("xlsx", "csv")) -> "CompanionFile":
        """Check a second file sent with ``upload`` (an earlier timetable, say) as the main one is
        checked — size cap, type by content, unpacked size — and keep it in the upload's folder as
        ``{stem}.{kind}``, replacing an earlier one of that stem. It is deleted with the upload.

        Raises UploadRejected (and deletes ``data_path``) when the file is not acceptable.
        """
        try:
            size, kind = self._size_and_kind(data_path)
            if kind not in kinds:
                raise UploadRejected(
                    f"This file is a .{kind} file; here only {' or '.join('.' + k for k in kinds)} files are read. "
                    "Save it in one of those forms from your spreadsheet program and choose it again."
                )
            for old in upload.folder.glob(f"{stem}.*"):
                old.unlink()
            final = upload.folder / f"{stem}.{kind}"
            os.replace(data_path, final)
        except BaseException:
            data_path.unlink(missing_ok=True)
            raise
        return CompanionFile(path=final, kind=kind, name=display_name(client_name), size=size)

    def _size_and_kind(self, data_path: Path) -> tuple[int, str]:
        """The size of a received file and its type judged by content; UploadRejected when too large
        or not a file timetabler reads."""
        size = data_path.stat().st_size
        if size > self.max_bytes:
            raise UploadRejected(self.too_large_message(), status=413)
        with open(data_path, "rb") as handle:
            head = handle.read(65536)
        return size, sniff_kind(head, data_path)

    def too_large_message(self) -> str:
        return (
            f"The file is larger than {self.max_bytes / (1024 * 1024):.0f} MB, the most this page accepts. "
            "Remove sheets or columns that are not needed, or use the command line."
        )

    def get(self, token: str) -> StoredUpload | None:
        if not is_token(token):
            return None
        with self._lock:
            upload = self._uploads.get(token)
        if upload is not None:
            upload.touched = time.monotonic()
        return upload

    def delete(self, token: str) -> bool:
        with self._lock:
            upload = self._uploads.pop(token, None)
        if upload is None:
            return False
        self.before_delete(upload)
        shutil.rmtree(upload.folder, ignore_errors=True)
        return True

    def tidy(self, keep: str | None = None) -> list[str]:
        """Delete idle uploads past their time, and the oldest idle ones beyond ``max_uploads``."""
        now = time.monotonic()
        gone: list[str] = []
        with self._lock:
            uploads = sorted(self._uploads.values(), key=lambda u: u.touched)
        for upload in uploads:
            if upload.token != keep and now - upload.touched > self.idle_seconds and not self.busy(upload):
                gone.append(upload.token)
        extra = len(uploads) - len(gone) - self.max_uploads
        for upload in uploads:
            if extra <= 0:
                break
            if upload.token in gone or upload.token == keep or self.busy(upload):
                continue
            gone.append(upload.token)
            extra -= 1
        for token in gone:
            self.delete(token)
        return gone

    def close(self) -> None:
        """Delete every upload and the private folder itself (on shutdown)."""
        with self._lock:
            self._uploads.clear()
        shutil.rmtree(self.root, ignore_errors=True)

    def all(self) -> list[StoredUpload]:
        """Every upload kept now."""
        with self._lock:
            return list(self._uploads.values())

    def __len__(self) -> int:
        return len(self._uploads)

    def __contains__(self, token: object) -> bool:
        return token in self._uploads
