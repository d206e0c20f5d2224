"""Rebuild the sample workbooks of Harrowgate Vale College (a fictional college) and the
committee round of the Quillmere Growers' Federation (a fictional federation).

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

``committee_round.xlsx``
    The Quillmere Growers' Federation's spring committee round: 40 committees, 150 members
    with invented names, a week of hourly slots (Monday to Friday, 09:00 to 17:00), 2-hour
    boards, quorums on four boards, optional advisers, an Attendees sheet of the slots and
    days members cannot make, and at most two meetings a day for any member. Five days are
    enough by construction (a planted timetable that every unavailability avoids, two a day
    at most); whether four will do is the question the sample asks.
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


# --- committee round ---------------------------------------------------------------------
# The Quillmere Growers' Federation (a fictional federation of market gardens and orchards)
# holds its spring committee round in one week of hourly slots. Names are made of invented
# syllables; the areas and committee kinds are invented too.
ROUND_AREAS = ["Orchards", "Seedbank", "Markets", "Waterways", "Soils", "Apiaries", "Tools", "Schools", "Ledger", "Festival"]
ROUND_KINDS = [("Board", 120), ("Panel", 60), ("Working group", 60), ("Review", 60)]
SYLLABLES = ["ka", "lo", "mi", "ren", "tua", "vel", "dor", "sa", "ni", "bex", "ul", "ara", "fen", "qui", "to", "zel", "mar",
             "eth", "wyn", "pol", "ri", "cai", "dun", "ova"]
ROUND_MONDAY = dt.date(2027, 5, 10)  # a Monday


def _invented_name(rng: random.Random, used: set[str]) -> str:
    while True:
        given = (rng.choice(SYLLABLES) + rng.choice(SYLLABLES)).capitalize()
        family = (rng.choice(SYLLABLES) + rng.choice(SYLLABLES) + rng.choice(["by", "ton", "well", "more", "wick", ""])).capitalize()
        name = f"{given} {family}"
        if name not in used:
            used.add(name)
            return name


def build_committee_round(rng: random.Random) -> dict[str, pd.DataFrame]:
    """40 committees, 150 members, a week of hourly slots (8 a day), some 2-hour boards, quorums,
    optional advisers and members' unavailability. A five-day timetable is planted first
    (each committee given a start in the week) and every unavailability avoids it, so five days
    are always enough; four days leave 32 slots and lose the Friday, when some members are free."""
    slots = []
    for day in range(5):
        date = ROUND_MONDAY + dt.timedelta(days=day)
        for hour in range(9, 17):
            slots.append((f"{date:%a %d %b} {hour:02d}:00", date, dt.time(hour), 60))
    per_day = 8
    committees = []
    for area in ROUND_AREAS:
        for kind, minutes in ROUND_KINDS:
            code = f"{area[:3].upper()}-{kind.split()[0][:3].upper()}"
            committees.append((code, f"{area} {kind.lower()}", minutes, area))
    used: set[str] = set()
    members = [_invented_name(rng, used) for _ in range(150)]
    home = {m: rng.sample(ROUND_AREAS, 2) for m in members}
    seats: dict[str, list[str]] = {c[0]: [] for c in committees}
    for m in members:
        mine = [c for c in committees if c[3] in home[m]]
        for c in rng.sample(mine, rng.randint(2, 4)):
            seats[c[0]].append(m)
        if rng.random() < 0.3:  # one committee outside their areas
            other = rng.choice([c for c in committees if c[3] not in home[m]])
            seats[other[0]].append(m)
    for code, _, _, area in committees:  # every committee at least five members
        pool = [m for m in members if area in home[m] and m not in seats[code]]
        while len(seats[code]) < 5 and pool:
            seats[code].append(pool.pop(rng.randrange(len(pool))))
    # Plant a five-day timetable: greedy, each committee at the first start (in a shuffled order of
    # the week) where none of its members is busy in a slot it takes, on one day, and none has
    # two meetings that day already.
    busy: dict[str, set[int]] = {m: set() for m in members}
    that_day = {m: [0] * 5 for m in members}  # planted meetings of each member on each day
    planted: dict[str, tuple[int, ...]] = {}
    starts = list(range(1, len(slots) + 1))
    length = {c[0]: c[2] // 60 for c in committees}
    for code, _, _, _ in sorted(committees, key=lambda c: (-len(seats[c[0]]) * c[2], c[0])):
        rng.shuffle(starts)
        for s in starts:
            taken = tuple(range(s, s + length[code]))
            if (taken[-1] - 1) // per_day != (s - 1) // per_day:
                continue
            day = (s - 1) // per_day
            if all(not busy[m] & set(taken) and that_day[m][day] < 2 for m in seats[code]):
                planted[code] = taken
                for m in seats[code]:
                    busy[m] |= set(taken)
                    that_day[m][day] += 1
                break
        else:  # pragma: no cover - the data are made so that this does not happen
            raise RuntimeError(f"no planted slot for {code}")
    optional: set[tuple[str, str]] = set()
    for code, members_of in seats.items():
        if len(members_of) >= 8:
            for m in rng.sample(members_of, 2):  # two advisers, welcome but not needed
                optional.add((m, code))
    # Availability: a fifth of the members cannot make a whole day (never a day of theirs in the
    # planted timetable), some cannot make a few hours.
    attendees = []
    label = [s[0] for s in slots]
    for m in members:
        mine_days = {(t - 1) // per_day for code, taken in planted.items() if m in seats[code] and (m, code) not in optional
                     for t in taken}
        away: list[str] = []
        if rng.random() < 0.2:
            free_days = [d for d in range(5) if d not in mine_days]
            if free_days:
                away.append((ROUND_MONDAY + dt.timedelta(days=rng.choice(free_days))).isoformat())
        if rng.random() < 0.3:
            free = [t for t in range(1, len(slots) + 1) if t not in busy[m]]
            away += [label[t - 1] for t in sorted(rng.sample(free, min(3, len(free))))]
        if away:
            attendees.append((m, "; ".join(away), None, ""))
    # Quorums on the boards: two thirds of the members, free in the planted timetable by construction.
    events = []
    for code, title, minutes, _ in committees:
        quorum = -(-2 * len(seats[code]) // 3) if code.endswith("-BOA") and code[:3] in ("ORC", "LED", "MAR", "WAT") else None
        events.append((code, title, minutes, quorum))
    events_frame = pd.DataFrame(events, columns=["Committee", "Title", "Duration (minutes)", "Quorum"])
    events_frame["Quorum"] = events_frame["Quorum"].astype("Int64")
    enrolments = [(m, code, "optional" if (m, code) in optional else "required")
                  for code, ms in seats.items() for m in ms]
    rng.shuffle(enrolments)
    return {
        "Enrolments": pd.DataFrame(enrolments, columns=["Member", "Committee", "Attendance"]),
        "Events": events_frame,
        "Slots": pd.DataFrame(slots, columns=["Slot", "Date", "Start", "Length (minutes)"]),
        "Attendees": pd.DataFrame(attendees, columns=["Attendee", "Unavailable slots", "Extra time", "Own room"]),
        # the federation's own rule: no member sits in more than two meetings a day
        "Weights": pd.DataFrame([("most events per day", 2)], columns=["Goal", "Weight"]),
    }


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
    write(HERE / "committee_round.xlsx", build_committee_round(random.Random(20270510)))


if __name__ == "__main__":
    main()
