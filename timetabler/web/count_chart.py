"""The chart of clash-free timetables against slots, as inline SVG (no script, no fetch).

One bar per slot count, its height the number of digits of the count (log10), because
counts grow by many orders of magnitude from one slot count to the next. Exact counts are
solid bars; counts only bounded or estimated are outlined, dashed bars, so the difference
does not rest on colour. A slot count with no clash-free timetable gets a labelled gap.
The same figures are in the table beside the chart; the SVG carries a title and a
description for screen readers.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from html import escape

from ..counting.bounds import log10_int


@dataclass
class ChartBar:
    slots: int
    log10: float | None  # None: unknown; -inf: zero timetables
    exact: bool
    label: str


def bar_from_count(item) -> ChartBar:
    """A chart bar from a counting engine's ``SlotCount`` (fields per the agreed interface)."""
    timetables = getattr(item, "timetables", None)
    exact = bool(getattr(item, "exact", False))
    log10 = getattr(item, "log10", None)
    if timetables is not None and exact:
        log10 = -math.inf if timetables == 0 else log10_int(timetables)
    elif log10 is None:
        log10 = getattr(item, "estimate_log10", None)
        if log10 is None and getattr(item, "upper", None) == 0:
            log10 = -math.inf
    if log10 == -math.inf:
        label = "none"
    elif log10 is None:
        label = "unknown"
    else:
        label = ("" if exact else "≈ ") + f"10^{log10:.1f}"
    return ChartBar(int(item.slots), log10, exact and log10 is not None, label)


def count_chart_svg(bars: list[ChartBar], *, width: int = 560, height: int = 260) -> str:
    """The SVG markup of the chart (a string to place inside the page as it is)."""
    left, right, top, bottom = 72, 16, 28, 44
    plot_w, plot_h = width - left - right, height - top - bottom
    values = [b.log10 for b in bars if b.log10 is not None and b.log10 != -math.inf]
    top_value = max(values, default=1.0)
    top_value = max(1.0, math.ceil(top_value))
    step = _nice_step(top_value)
    n = max(len(bars), 1)
    slot_w = plot_w / n
    bar_w = min(56.0, slot_w * 0.6)
    desc = "; ".join(f"{b.slots} slots: {b.label}" for b in bars) or "no slot counts"
    out = [
        f'<svg xmlns="http://www.w3.org/2000/svg" class="count-chart" viewBox="0 0 {width} {height}" '
        f'width="{width}" height="{height}" role="img" aria-labelledby="chart-title chart-desc">',
        '<title id="chart-title">Clash-free timetables for each number of slots (digits, log scale)</title>',
        f'<desc id="chart-desc">{escape(desc)}</desc>',
    ]
    # Axes and grid lines: one per `step` powers of ten.
    y = top_value
    tick = 0
    while tick <= top_value:
        ty = top + plot_h - plot_h * tick / top_value
        out.append(f'<line x1="{left}" y1="{ty:.1f}" x2="{width - right}" y2="{ty:.1f}" class="grid" stroke="#ccc" stroke-width="1"/>')
        out.append(
            f'<text x="{left - 6}" y="{ty + 4:.1f}" text-anchor="end" class="tick" font-size="12">'
            f'10<tspan baseline-shift="super" font-size="9">{tick}</tspan></text>'
        )
        tick += step
    out.append(f'<line x1="{left}" y1="{top}" x2="{left}" y2="{top + plot_h}" stroke="#333" stroke-width="1"/>')
    out.append(f'<line x1="{left}" y1="{top + plot_h}" x2="{width - right}" y2="{top + plot_h}" stroke="#333" stroke-width="1"/>')
    for i, b in enumerate(bars):
        cx = left + slot_w * (i + 0.5)
        x = cx - bar_w / 2
        if b.log10 is not None and b.log10 != -math.inf:
            h = max(1.0, plot_h * max(b.log10, 0.0) / top_value)
            y = top + plot_h - h
            if b.exact:
                out.append(
                    f'<rect x="{x:.1f}" y="{y:.1f}" width="{bar_w:.1f}" height="{h:.1f}" class="bar exact" '
                    f'fill="#1f5f8b" stroke="#0d3550" stroke-width="1"/>'
                )
            else:
                out.append(
                    f'<rect x="{x:.1f}" y="{y:.1f}" width="{bar_w:.1f}" height="{h:.1f}" class="bar estimate" '
                    f'fill="none" stroke="#1f5f8b" stroke-width="2" stroke-dasharray="5 3"/>'
                )
            label_y = y - 6
        else:
            label_y = top + plot_h - 6
        out.append(f'<text x="{cx:.1f}" y="{label_y:.1f}" text-anchor="middle" class="value" font-size="12">{_label_markup(b.label)}</text>')
        out.append(f'<text x="{cx:.1f}" y="{top + plot_h + 18:.1f}" text-anchor="middle" class="slots" font-size="13">{b.slots}</text>')
    out.append(f'<text x="{left + plot_w / 2:.1f}" y="{height - 6}" text-anchor="middle" class="axis-label" '
               f'font-size="13">number of slots</text>')
    middle = top + plot_h / 2
    out.append(f'<text x="16" y="{middle:.1f}" transform="rotate(-90 16 {middle:.1f})" text-anchor="middle" '
               f'class="axis-label" font-size="13">clash-free timetables (log scale)</text>')
    out.append(
        f'<text x="{left}" y="{top - 12}" font-size="12">solid: exact count; dashed outline: estimate or bound</text>'
    )
    out.append("</svg>")
    return "\n".join(out)


def _label_markup(label: str) -> str:
    """``≈ 10^40.5`` as SVG text with the power raised."""
    if "10^" not in label:
        return escape(label)
    head, power = label.split("10^", 1)
    return f'{escape(head)}10<tspan baseline-shift="super" font-size="9">{escape(power)}</tspan>'


def _nice_step(top: float) -> int:
    for step in (1, 2, 5, 10, 20, 50, 100, 200, 500, 1000):
        if top / step <= 8:
            return step
    return int(top // 8) or 1
