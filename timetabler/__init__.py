"""timetabler: exam and meeting timetables from enrolment spreadsheets."""

__version__ = "0.1.0"
