"""Messages below the interfaces name settings neutrally; each interface gives them its own names.

Intake, the application layer and the exports write :func:`timetabler.errors.setting` where a
message points to a setting; the command line names it by its option and the page by its box,
and neither rewrites the other's words.
"""

from __future__ import annotations

import re
from pathlib import Path

import openpyxl

from timetabler.cli.common import OPTION_NAMES
from timetabler.errors import SETTINGS, Finding, setting
from timetabler.web.analysis import BOX_NAMES, finding_rows

PACKAGE = Path(__file__).resolve().parents[1] / "timetabler"


def test_every_setting_a_message_points_to_has_a_command_line_name_and_the_page_names_only_known_ones():
    used = set()
    for path in PACKAGE.rglob("*.py"):
        used |= set(re.findall(r"setting\('([a-z_]+)'\)", path.read_text(encoding="utf-8")))
    assert used, "no message names a setting"
    assert used <= set(SETTINGS)
    assert set(OPTION_NAMES) == set(SETTINGS)
    assert set(BOX_NAMES) <= set(SETTINGS)


def test_no_option_names_are_left_in_the_messages_of_intake_and_the_application_layer():
    # an option typed into a message's text would reach the page as a command-line flag
    for path in [*(PACKAGE / "intake").glob("*.py"), PACKAGE / "plan.py"]:
        for line in path.read_text(encoding="utf-8").splitlines():
            code = line.split("#")[0]
            for quoted in re.findall(r'"([^"]*)"', code):
                assert not re.search(r"(^|\s)--[a-z]", quoted), (path.name, line)


def test_a_finding_reads_in_each_interface_s_words_and_never_shows_the_marks():
    f = Finding("Two sheets look like enrolments.", suggestion=f"Name the sheet to read with {setting('sheet')}.")
    assert f.worded(OPTION_NAMES).suggestion == "Name the sheet to read with --sheet."
    assert "the box 'Sheet' below" in f.worded(BOX_NAMES).suggestion
    plain = str(f)
    assert "the sheet setting" in plain and "\ue000" not in plain and "--sheet" not in plain
    assert "\ue000" not in str(f.to_dict())
    row = finding_rows([f], Path("/tmp/private/enrolments.xlsx"), "week.xlsx")[0]
    assert "the box 'Sheet' below" in row["suggestion"] and "--" not in row["suggestion"]


def _two_enrolment_sheets(path: Path) -> Path:
    book = openpyxl.Workbook()
    first = book.active
    first.title = "Autumn"
    first.append(["Student", "Exam"])
    for i in range(12):
        first.append([f"Q{i:03d}", f"HIS10{i % 4}"])
    second = book.create_sheet("Spring")
    second.append(["Student", "Exam"])
    for i in range(6):
        second.append([f"Q{i:03d}", f"GEO20{i % 3}"])
    book.save(path)
    return path


def test_the_command_line_names_the_option_in_its_warnings_text_and_json(run_command, tmp_path):
    path = _two_enrolment_sheets(tmp_path / "Quillfield terms.xlsx")
    shown = run_command("inspect", path)
    assert shown.status == 0 and "with --sheet" in shown.stderr and "\ue000" not in shown.stderr
    as_json = run_command("inspect", path, "--json")
    warnings = as_json.json()["warnings"]
    assert any("with --sheet" in (w["suggestion"] or "") for w in warnings)
