"""Uploads of the web page: type decided by content, names made safe, the private folder kept tidy."""

from __future__ import annotations

import io
import os
import stat
import time
import zipfile

import pytest

from timetabler.web.uploads import UploadRejected, UploadStore, display_name, is_token, sniff_kind


def _zip(members: dict[str, bytes]) -> bytes:
    buffer = io.BytesIO()
    with zipfile.ZipFile(buffer, "w") as archive:
        for name, data in members.items():
            archive.writestr(name, data)
    return buffer.getvalue()


def test_text_files_are_csv_whatever_their_encoding():
    assert sniff_kind(b"Student,Exam\nHV-S0001,MATH101\n") == "csv"
    # Windows-1252 text (intake works out the encoding): bytes above 127 are fine.
    assert sniff_kind("Student;Exam\nHV-S0002;Géographie\n".encode("cp1252")) == "csv"
    # UTF-16 with its byte-order mark has NUL bytes but is text.
    assert sniff_kind("Student\tExam\n".encode("utf-16")) == "csv"


@pytest.mark.parametrize(
    "data, words",
    [
        (b"%PDF-1.7\n...", "PDF"),
        (b"\x89PNG\r\n\x1a\n....", "PNG"),
        (b"\xd0\xcf\x11\xe0\xa1\xb1\x1a\xe1" + b"\x00" * 100, ".xls"),
        (b"MZ\x90\x00\x03", "program"),
        (b"\x00\x01\x02\x03binary", "not text"),
        (b"", "empty"),
    ],
)
def test_non_spreadsheets_are_refused_by_content(data, words):
    with pytest.raises(UploadRejected) as caught:
        sniff_kind(data)
    assert words in str(caught.value)


def test_zip_archives_are_opened_and_named_for_what_they_hold(tmp_path):
    cases = {
        "workbook": (_zip({"[Content_Types].xml": b"<x/>", "xl/workbook.xml": b"<x/>"}), None),
        "word": (_zip({"[Content_Types].xml": b"<x/>", "word/document.xml": b"<x/>"}), "Word document"),
        "plain zip": (_zip({"notes.txt": b"hello"}), "not a workbook"),
        "ods": (_zip({"mimetype": b"application/vnd.oasis.opendocument.spreadsheet", "content.xml": b"<x/>"}), None),
        "odt": (_zip({"mimetype": b"application/vnd.oasis.opendocument.text", "content.xml": b"<x/>"}), "not a spreadsheet"),
    }
    for label, (data, refusal) in cases.items():
        path = tmp_path / label
        path.write_bytes(data)
        if refusal is None:
            assert sniff_kind(data[:10], path) in ("xlsx", "ods"), label
        else:
            with pytest.raises(UploadRejected, match=refusal):
                sniff_kind(data[:10], path)
    # A cut-off archive is damaged, not something else.
    broken = tmp_path / "broken"
    broken.write_bytes(cases["workbook"][0][:40])
    with pytest.raises(UploadRejected, match="damaged"):
        sniff_kind(broken.read_bytes(), broken)


def test_zip_bombs_are_refused_before_reading(tmp_path, monkeypatch):
    import timetabler.web.uploads as uploads

    monkeypatch.setattr(uploads, "MAX_UNPACKED_BYTES", 1000)
    data = _zip({"[Content_Types].xml": b"<x/>", "xl/workbook.xml": b"0" * 5000})
    path = tmp_path / "bomb"
    path.write_bytes(data)
    with pytest.raises(UploadRejected) as caught:
        sniff_kind(data[:10], path)
    assert caught.value.status == 413


def test_display_names_never_carry_folders_or_control_characters():
    assert display_name("../../etc/passwd") == "passwd"
    assert display_name("C:\\Users\\clerk\\exams.xlsx") == "exams.xlsx"
    assert display_name("exam\x00s\n.csv") == "exams.csv"
    assert display_name("") == "uploaded file"
    assert len(display_name("x" * 500 + ".csv")) <= 120


def test_tokens_are_checked_before_they_name_anything():
    assert is_token("AbCdEfGhIjKlMnOpQrStUvWx")
    assert not is_token("../../etc")
    assert not is_token("short")
    assert not is_token("a" * 20 + "/")


def test_store_keeps_files_under_its_own_names_in_a_private_folder(tmp_path):
    store = UploadStore(max_bytes=1000)
    try:
        assert stat.S_IMODE(os.stat(store.root).st_mode) == 0o700
        token, folder = store.new_folder()
        received = folder / "received"
        received.write_bytes(b"Student,Exam\nHV-S0001,MATH101\n")
        upload = store.keep(token, folder, received, "../../secret/enrolments.csv")
        assert upload.path.parent == folder and folder.parent == store.root
        assert upload.path.name == "enrolments.csv" and upload.name == "enrolments.csv"
        assert store.get(token) is upload

        # Refused files leave nothing behind.
        token2, folder2 = store.new_folder()
        (folder2 / "received").write_bytes(b"%PDF-1.4")
        with pytest.raises(UploadRejected):
            store.keep(token2, folder2, folder2 / "received", "a.csv")
        assert not folder2.exists() and store.get(token2) is None

        token3, folder3 = store.new_folder()
        (folder3 / "received").write_bytes(b"x" * 2000)
        with pytest.raises(UploadRejected) as caught:
            store.keep(token3, folder3, folder3 / "received", "big.csv")
        assert caught.value.status == 413 and not folder3.exists()

        assert store.delete(token) and not folder.exists()
        assert not store.delete(token)
    finally:
        store.close()
    assert not store.root.exists()


def test_store_evicts_the_least_recently_used_idle_upload_and_spares_busy_ones():
    store = UploadStore(max_bytes=1000, max_uploads=2, idle_seconds=3600)
    try:
        tokens = []
        for i in range(2):
            token, folder = store.new_folder()
            (folder / "received").write_bytes(b"Student,Exam\nA,B\n")
            store.keep(token, folder, folder / "received", f"f{i}.csv")
            tokens.append(token)
            time.sleep(0.01)
        store.busy = lambda upload: upload.token == tokens[0]  # the oldest has a solve running
        token, folder = store.new_folder()
        (folder / "received").write_bytes(b"Student,Exam\nA,B\n")
        store.keep(token, folder, folder / "received", "f2.csv")
        assert tokens[0] in store and tokens[1] not in store and token in store

        store.idle_seconds = 0.0
        store.busy = lambda upload: False
        time.sleep(0.01)
        gone = store.tidy()
        assert set(gone) == {tokens[0], token} and len(store) == 0
    finally:
        store.close()
