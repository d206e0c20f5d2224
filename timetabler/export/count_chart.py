"""A PNG chart of the number of clash-free timetables against the number of slots.

Drawn with matplotlib's Agg backend (no display needed). The y axis is log10 of the
count: counts grow so fast with slots that a linear axis shows nothing but the last point.
Exact counts are filled markers; estimates are hollow, with their 95 % interval as error
bars (their proven bounds where no interval was found).
"""

from __future__ import annotations

import math
from pathlib import Path
from typing import Any

from ..errors import Finding, InputError
from .safe_write import check_target, write_safely
from .tables import _big_log10, _count_log10


def chart_points(counts: Any) -> list[tuple[int, float, bool, float | None, float | None]]:
    """(slots, log10 count, exact, log10 low, log10 high) for every slot count with a positive count.

    ``low``/``high`` are the 95 % interval of an estimate, else the proven bounds.
    """
    points = []
    for c in getattr(counts, "counts", None) or []:
        lg = _count_log10(c)
        if lg is None or not math.isfinite(lg):
            continue
        lower, upper = getattr(c, "lower", None), getattr(c, "upper", None)
        interval = getattr(c, "estimate_interval_log10", None)
        if interval is not None and not getattr(c, "exact", False):
            low, high = interval  # the 95 % interval of the estimate
        else:
            low = _big_log10(int(lower)) if lower else None
            high = _big_log10(int(upper)) if upper else None
        points.append((int(c.slots), lg, bool(getattr(c, "exact", False)), low, high))
    return sorted(points)


def write_count_chart(path: str | Path, counts: Any, *, inputs: tuple = (), title: str | None = None) -> Path:
    """Draw the chart to a PNG file (1200 × 675 pixels) and return its path."""
    target = check_target(path, inputs=inputs, suffixes=(".png",))
    points = chart_points(counts)
    if not points:
        raise InputError(Finding("There is no positive count to draw: every slot count asked for allows no clash-free timetable.",
                                 suggestion="Ask for more slots (see the fewest slots in `timetabler inspect`)."))
    import matplotlib

    matplotlib.use("Agg", force=True)
    from matplotlib.figure import Figure

    fig = Figure(figsize=(8, 4.5), dpi=150)
    ax = fig.add_subplot()
    xs = [p[0] for p in points]
    ax.plot(xs, [p[1] for p in points], color="#1f5f8b", linewidth=1.5, zorder=1)
    exact = [p for p in points if p[2]]
    estimated = [p for p in points if not p[2]]
    if exact:
        ax.scatter([p[0] for p in exact], [p[1] for p in exact], color="#1f5f8b", s=40, zorder=2, label="exact")
    if estimated:
        ax.scatter([p[0] for p in estimated], [p[1] for p in estimated], facecolors="white", edgecolors="#1f5f8b", s=40,
                   zorder=2, label="estimated")
        for x, y, _, lo, hi in estimated:
            if lo is not None and hi is not None:
                ax.vlines(x, lo, hi, color="#1f5f8b", alpha=0.5, linewidth=1)
    for x, y, ex, _, _ in points:
        ax.annotate(f"$10^{{{y:.1f}}}$" if y >= 6 else f"{round(10 ** y):,}", (x, y), textcoords="offset points",
                    xytext=(0, 8), ha="center", fontsize=8)
    ax.set_xlabel("Slots")
    ax.set_ylabel("log10(number of clash-free timetables)")
    ax.set_title(title or "Clash-free timetables against slots")
    ax.set_xticks(xs)
    ax.margins(x=0.06, y=0.15)  # room for the labels above the points
    ax.grid(True, alpha=0.3)
    if exact and estimated:
        ax.legend()
    fig.tight_layout()
    return write_safely(target, lambda tmp: fig.savefig(tmp, format="png"))
