"""`count`: the time limit holds for the whole command, and short figures are rounded."""

from __future__ import annotations

import itertools
import json
import subprocess
import sys
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent


def _clash_free_partitions(events: list[str], clashes: set[frozenset]) -> int:
    """Brute force: the ways to split ``events`` into non-empty groups with no clash inside a group."""
    def splits(items):
        if not items:
            yield []
            return
        first, rest = items[0], items[1:]
        for part in splits(rest):
            for i in range(len(part)):
                yield part[:i] + [[first] + part[i]] + part[i + 1:]
            yield [[first]] + part

    return sum(all(frozenset(p) not in clashes for group in split for p in itertools.combinations(group, 2))
               for split in splits(events))


def test_a_huge_number_of_slots_finishes_within_the_time_limit(tmp_path):
    """--slots 100000 used to run for minutes past --time-limit (a k × k difference table)."""
    path = tmp_path / "committees.csv"
    # Harrowgate Vale College committees: a path of clashes A–B–C–D, and E alone
    rows = [("m1", "A"), ("m1", "B"), ("m2", "B"), ("m2", "C"), ("m3", "C"), ("m3", "D"), ("m4", "E")]
    path.write_text("Member,Committee\n" + "".join(f"{a},{e}\n" for a, e in rows))
    started = time.monotonic()
    # a subprocess, so that a regression fails on the timeout instead of hanging the suite
    done = subprocess.run([sys.executable, "-m", "timetabler", "count", str(path), "--slots", "100000",
                           "--time-limit", "1", "--json"], capture_output=True, text=True, timeout=120,
                          cwd=ROOT, env={"PYTHONPATH": str(ROOT), "PATH": "/usr/bin:/bin"})
    assert done.returncode == 0, done.stderr
    assert time.monotonic() - started < 120
    count = json.loads(done.stdout)["counts"][0]
    k = 100000
    # closed form: a path on 4 vertices has k (k-1)^3 colourings, an isolated vertex k
    assert int(count["timetables"]) == k * (k - 1) ** 3 * k
    # with k above the number of events every clash-free split counts (brute force over set partitions)
    clashes = {frozenset(p) for p in (("A", "B"), ("B", "C"), ("C", "D"))}
    assert int(count["groupings"]) == _clash_free_partitions(list("ABCDE"), clashes)


def test_short_counts_are_rounded_not_truncated(run_command, tmp_path):
    """30 events with no clash and 3 slots: 3^30 = 205,891,132,094,649 timetables (closed form),
    shown as 2.059 × 10^14 (rounded; truncating gives 2.058)."""
    path = tmp_path / "free.csv"
    path.write_text("Student,Exam\n" + "".join(f"s{i},E{i:02d}\n" for i in range(30)))
    result = run_command("count", path, "--slots", "3")
    assert result.status == 0, result.stderr
    assert 3 ** 30 == 205891132094649
    assert "2.059 × 10^14" in result.stdout and "2.058" not in result.stdout


def test_readme_count_example_is_what_the_command_prints(run_command, exam_week_xlsx):
    """The README's table for the sample week is the command's output, row for row."""
    readme = (ROOT / "README.md").read_text(encoding="utf-8")
    block = readme.split("$ timetabler count sample_data/exam_week.xlsx --slots 4 5 6 7\n", 1)[1].split("```", 1)[0]
    shown = [line for line in block.splitlines() if line.startswith("│")]
    result = run_command("count", exam_week_xlsx, "--slots", "4", "5", "6", "7")
    assert result.status == 0
    printed = [" ".join(line.split()) for line in result.stdout.splitlines() if line.startswith("│")]
    for line in shown:
        assert " ".join(line.split()) in printed, line
