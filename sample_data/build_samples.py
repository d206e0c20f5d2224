"""Rebuild the sample workbooks of Harrowgate Vale College (a fictional college).

Run from the repository root::

    python sample_data/build_samples.py

Everything here is invented for demonstrations: the college, its programmes, exam codes
and student numbers. The generator is seeded, so the files come out the same each time.

``exam_week.xlsx``
    A small college's winter exam week: a few dozen exams, a few hundred students, one
    enrolment sheet. Each student sits three papers: the core of their programme and
    perhaps an option, so clashes cluster by faculty. Five slots are just enough (four
    joint law, business and economics programmes make five papers that pairwise share
    students); six give far more room and fewer papers back to back. The faculty
    clusters are small, so the counts of clash-free timetables come out exact.

``term_exams.xlsx``
    A whole college's end-of-term session: hundreds of exams, thousands of students,
    rooms with capacities and types, dated slots over two weeks, and a few rules and
    fixed or barred slots. The deeper features (rooms, seats, rules) are exercised on it.
"""

from __future__ import annotations

import datetime as dt
import random
from pathlib import Path

import pandas as pd

HERE = Path(__file__).resolve().parent

# --- exam week -------------------------------------------------------------------------
# Programme: (faculty, core papers, option papers, number of options taken, students)
EXAM_WEEK_PROGRAMMES = {
    "BSc Biology": (["BIO101", "CHM101"], ["STA120", "ENV130"], 1, 40),
    "BSc Chemistry": (["CHM101", "CHM140"], ["MTH110", "PHY101"], 1, 30),
    "BSc Physics": (["PHY101", "MTH110"], ["MTH150", "CMP101"], 1, 30),
    "BSc Computing": (["CMP101", "CMP120"], ["MTH150", "STA120"], 1, 40),
    "BA History": (["HIS101", "HIS130"], ["LIT101", "PHL110"], 1, 35),
    "BA Literature": (["LIT101", "LIT120"], ["PHL110", "LAN101"], 1, 30),
    "BA Geography": (["GEO101", "GEO140"], ["ENV130", "HIS101"], 1, 30),
    "BA Business": (["BUS101", "ACC110"], ["MKT130", "ECO150"], 1, 40),
    "BA Economics": (["ECO150", "STA120"], ["ACC110", "ECO101"], 1, 30),
    # Four joint programmes whose papers pairwise meet: five papers that need five slots.
    "LLB Law": (["LAW101", "LAW120", "PHL110"], [], 0, 30),
    "LLB Law with Business": (["LAW101", "BUS101", "ECO101"], [], 0, 15),
    "BA Business Law": (["LAW120", "BUS101", "ECO101"], [], 0, 12),
    "BA Philosophy and Economics": (["PHL110", "BUS101", "ECO101"], [], 0, 10),
}
# Papers sat by a handful of students from across the college, clashing with nothing else.
EXAM_WEEK_STANDALONE = {"LAN201": 6, "MUS101": 8, "ART110": 5}


def build_exam_week(rng: random.Random) -> pd.DataFrame:
    rows = []
    number = 1000
    for programme, (core, options, take, students) in EXAM_WEEK_PROGRAMMES.items():
        for _ in range(students):
            number += 1
            student = f"HV{number:05d}"
            papers = core + rng.sample(options, take)
            for paper in papers:
                rows.append((student, programme, paper))
    for paper, students in EXAM_WEEK_STANDALONE.items():
        for _ in range(students):
            number += 1
            rows.append((f"HV{number:05d}", "Visiting", paper))
    rng.shuffle(rows)
    return pd.DataFrame(rows, columns=["Student", "Programme", "Exam"])


# --- term exams ------------------------------------------------------------------------
FACULTIES = ["ART", "BUS", "EDU", "ENG", "HLT", "HUM", "LAW", "SCI", "SOC", "TEC"]


def build_term(rng: random.Random) -> dict[str, pd.DataFrame]:
    exams_per_faculty = 36
    exams = []
    for faculty in FACULTIES:
        for i in range(exams_per_faculty):
            level = 1 + i // 12
            exams.append(f"{faculty}{level}{i % 12:02d}")
    by_faculty = {f: [e for e in exams if e.startswith(f)] for f in FACULTIES}

    rows = []
    for n in range(1, 4001):
        student = f"HV{20000 + n:05d}"
        home = rng.choice(FACULTIES)
        level = rng.choice("123")
        pool = [e for e in by_faculty[home] if e[3] == level]
        papers = set(rng.sample(pool, rng.randint(3, 5)))
        if rng.random() < 0.25:  # an elective from another faculty
            other = rng.choice([f for f in FACULTIES if f != home])
            papers.add(rng.choice(by_faculty[other]))
        rows.extend((student, e) for e in sorted(papers))
    enrolments = pd.DataFrame(rows, columns=["Student", "Exam"])
    sizes = enrolments["Exam"].value_counts()

    durations = {e: rng.choice([90, 120, 120, 180]) for e in exams}
    events = pd.DataFrame(
        {
            "Exam": exams,
            "Title": [f"{e[:3].title()} paper {e[3:]}" for e in exams],
            "Duration (minutes)": [durations[e] for e in exams],
            "Room type": ["Lab" if e.startswith(("SCI", "TEC")) and e.endswith("00") else "Hall" for e in exams],
            "Fixed slot": ["" for _ in exams],
            "Barred slots": ["" for _ in exams],
        }
    )

    first_day = dt.date(2027, 1, 11)  # a Monday
    slot_rows = []
    for day in range(10):
        date = first_day + dt.timedelta(days=day + 2 * (day // 5))  # weekdays of two weeks
        for session, (start, length) in enumerate([(dt.time(9, 0), 180), (dt.time(14, 0), 180)]):
            label = f"{date:%a %d %b} {'AM' if session == 0 else 'PM'}"
            slot_rows.append((label, date, start, length, 1500))
    slots = pd.DataFrame(slot_rows, columns=["Slot", "Date", "Start", "Length (minutes)", "Seats"])

    # A few rules of the kind registrars receive.
    events.loc[events["Exam"] == "LAW100", "Fixed slot"] = slot_rows[0][0]
    events.loc[events["Exam"] == "EDU300", "Barred slots"] = f"{slot_rows[0][0]}; {slot_rows[1][0]}"
    # Room wishes (soft goals): a paper with a practical part wants a particular lab, and the
    # fixed law paper wants the hall next to the law school.
    events["Preferred rooms"] = ""
    events.loc[events["Exam"] == "SCI100", "Preferred rooms"] = "Lab 2; Lab 3"
    events.loc[events["Exam"] == "LAW100", "Preferred rooms"] = "Main Hall 1"
    # Two papers set together (say, sharing an external examiner) must share no student.
    takers = enrolments.groupby("Exam")["Student"].apply(set)
    together = next(
        (a, b)
        for a in by_faculty["ART"]
        for b in by_faculty["LAW"]
        if not takers.get(a, set()) & takers.get(b, set())
    )
    rules = pd.DataFrame(
        [
            ("before", "SCI100", "SCI101"),
            ("same slot", *together),
            ("different days", "BUS100", "BUS101"),
        ],
        columns=["Rule", "First exam", "Second exam"],
    )

    rooms = []
    for i in range(1, 7):
        rooms.append((f"Main Hall {i}", rng.choice([100, 120]), "Hall", ""))
    for i in range(1, 17):
        rooms.append((f"Room {100 + i}", rng.choice([60, 70, 80]), "Hall", ""))
    for i in range(1, 5):
        rooms.append((f"Lab {i}", 70, "Lab", slot_rows[-1][0] if i == 1 else ""))
    rooms = pd.DataFrame(rooms, columns=["Room", "Capacity", "Room type", "Unavailable slots"])
    # two rooms across the road in the annexe: used only when the others do not suffice
    rooms["Avoid"] = ["yes" if name in ("Room 115", "Room 116") else "" for name in rooms["Room"]]
    del sizes
    return {"Enrolments": enrolments, "Exams": events, "Slots": slots, "Rooms": rooms, "Rules": rules}


def write(path: Path, sheets: dict[str, pd.DataFrame]) -> None:
    with pd.ExcelWriter(path, engine="openpyxl") as writer:
        for name, frame in sheets.items():
            frame.to_excel(writer, sheet_name=name, index=False)
    print(f"wrote {path.relative_to(HERE.parent)}")


def main() -> None:
    rng = random.Random(20270111)
    week = build_exam_week(rng)
    write(HERE / "exam_week.xlsx", {"Enrolments": week})
    week[["Student", "Exam"]].to_csv(HERE / "exam_week.csv", index=False)
    print(f"wrote {(HERE / 'exam_week.csv').relative_to(HERE.parent)}")
    write(HERE / "term_exams.xlsx", build_term(rng))


if __name__ == "__main__":
    main()
