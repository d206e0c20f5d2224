"""The inline SVG chart of counts and the number formats of the page."""

from __future__ import annotations

import math
import xml.etree.ElementTree as ET
from types import SimpleNamespace

from timetabler.web.count_chart import bar_from_count, count_chart_svg
from timetabler.web.page_format import group_digits, short_count

SVG = "{http://www.w3.org/2000/svg}"


def _count(slots, timetables=None, exact=True, log10=None, estimate_log10=None, upper=None):
    return SimpleNamespace(slots=slots, timetables=timetables, exact=exact, log10=log10,
                           estimate_log10=estimate_log10, upper=upper, lower=None)


def test_bars_follow_the_digits_of_exact_counts_and_mark_estimates_apart():
    # P(K3, k) * k for a triangle plus one free event: k(k-1)(k-2)*k (falling factorial of the
    # complete graph, times k per isolated vertex; any graph-theory text, e.g. Read 1968).
    counts = [_count(k, k * (k - 1) * (k - 2) * k) for k in (2, 3, 4, 5)]
    counts.append(_count(6, None, exact=False, estimate_log10=40.5))
    bars = [bar_from_count(c) for c in counts]
    assert bars[0].log10 == -math.inf and bars[0].label == "none"
    assert math.isclose(bars[2].log10, math.log10(96))
    assert not bars[4].exact and bars[4].label.startswith("≈")

    root = ET.fromstring(count_chart_svg(bars))
    assert root.tag == f"{SVG}svg" and root.get("role") == "img"
    rects = root.findall(f"{SVG}rect")
    assert [r.get("class") for r in rects] == ["bar exact"] * 3 + ["bar estimate"]
    heights = [float(r.get("height")) for r in rects]
    # Heights are proportional to log10 of the count (the bar for 0 timetables is absent).
    for (h, c) in zip(heights[:3], counts[1:4]):
        assert math.isclose(h / heights[3], math.log10(c.timetables) / 40.5, rel_tol=0.02)
    desc = root.find(f"{SVG}desc").text
    assert "2 slots: none" in desc and "6 slots: ≈ 10^40.5" in desc


def test_huge_exact_counts_do_not_overflow():
    # 5^400: an edgeless graph on 400 events has P(G, k) = k^400 (closed form).
    bar = bar_from_count(_count(5, 5**400))
    assert math.isclose(bar.log10, 400 * math.log10(5), rel_tol=1e-12)


def test_number_formats_keep_every_digit_or_say_the_power():
    n = 5**30
    assert group_digits(n).replace("\u2009", "") == str(n)
    assert short_count(n) == "9.31 × 10^20"
    assert short_count(999) == "999"
    assert short_count(None) == "—"


def test_both_axes_are_labelled():
    """Issue 15, item 14: the vertical axis had tick marks but no words."""
    bars = [bar_from_count(_count(k, k ** 3)) for k in (2, 3, 4)]
    root = ET.fromstring(count_chart_svg(bars))
    labels = {"".join(t.itertext()): t for t in root.iter(f"{SVG}text") if t.get("class") == "axis-label"}
    assert set(labels) == {"number of slots", "clash-free timetables (log scale)"}
    upright = labels["clash-free timetables (log scale)"]
    assert upright.get("transform", "").startswith("rotate(-90")
    # The vertical label sits left of every tick label (no overlap with the powers of ten).
    ticks = [float(t.get("x")) for t in root.iter(f"{SVG}text") if t.get("class") == "tick"]
    assert float(upright.get("x")) + 8 < min(ticks) - 30


def test_powers_of_ten_are_rounded_not_cut():
    from timetabler.web.page_format import scientific

    # 13 972 305 600 000 (the sample week's 5-slot count) is 1.397... × 10^13, so 1.40 × 10^13.
    assert scientific(13_972_305_600_000) == "1.40 × 10^13"
    assert scientific(19_999) == "2.00 × 10^4" and scientific(10**20) == "1.00 × 10^20"
