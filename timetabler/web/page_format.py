"""How figures read on the page: big counts, seconds, shares. Jinja filters, nothing else."""

from __future__ import annotations

import math
import re

from markupsafe import Markup


def group_digits(n: int) -> str:
    """A whole number with thin spaces between groups of three digits (readable, copyable).

    >>> group_digits(1234567) == "1\u2009234\u2009567"
    True
    """
    text = str(abs(int(n)))
    groups = []
    while text:
        groups.append(text[-3:])
        text = text[:-3]
    return ("-" if n < 0 else "") + "\u2009".join(reversed(groups))


def short_count(n: int | None) -> str:
    """A count short enough for a table cell: grouped digits up to 15 digits, else a power of ten.

    >>> short_count(10**20 * 3)
    '3.00 × 10^20'
    """
    if n is None:
        return "—"
    n = int(n)
    digits = len(str(abs(n)))
    if digits <= 15:
        return group_digits(n)
    head = str(abs(n))[:3]
    return f"{head[0]}.{head[1:]} × 10^{digits - 1}"


#: Largest number of digits a counts table shows in full; beyond, every count of it is a power of ten.
DIGITS_IN_FULL = 12


def scientific(n: int) -> str:
    """A whole number as three significant figures times a power of ten, rounded (not cut).

    >>> scientific(13_972_305_600_000)
    '1.40 × 10^13'
    >>> scientific(99_960)    # rounds up into the next power
    '1.00 × 10^5'
    """
    n = int(n)
    sign = "-" if n < 0 else ""
    n = abs(n)
    exponent = len(str(n)) - 1
    if exponent < 2:
        return f"{sign}{n}"
    head = (n + 5 * 10 ** (exponent - 3)) // 10 ** (exponent - 2)  # three figures, rounded half up
    if head >= 1000:
        head, exponent = head // 10, exponent + 1
    text = str(head)
    return f"{sign}{text[0]}.{text[1:]} × 10^{exponent}"


def count_style(values) -> str:
    """One format for a whole column of counts: ``"digits"`` when every count fits in
    :data:`DIGITS_IN_FULL` digits, else ``"powers"`` for all of them (so rows compare at a glance)."""
    widest = max((len(str(abs(int(v)))) for v in values if v is not None), default=0)
    return "digits" if widest <= DIGITS_IN_FULL else "powers"


def table_count(n: int | None, style: str = "digits") -> str:
    """A count in the column's format (see :func:`count_style`); 0 stays 0.

    >>> table_count(5**30, "powers"), table_count(24, "powers"), table_count(1234, "digits") == "1\u2009234"
    ('9.31 × 10^20', '24', True)
    """
    if n is None:
        return "—"
    n = int(n)
    if style == "powers" and abs(n) >= 1000:
        return scientific(n)
    return group_digits(n)


def power_of_ten(log10: float | None) -> str:
    if log10 is None:
        return "—"
    if log10 == -math.inf:
        return "0"
    return f"10^{log10:.1f}"


def superscripts(text: str) -> Markup:
    """Write the powers of ten of a formatted figure as superscripts, for the page.

    >>> str(superscripts("9.31 × 10^20"))
    '9.31 × 10<sup>20</sup>'
    """
    escaped = Markup.escape(text)
    return Markup(re.sub(r"10\^(-?[0-9.]+)", r"10<sup>\1</sup>", str(escaped)))


def seconds(value: float | None) -> str:
    if value is None:
        return "—"
    if value < 60:
        return f"{value:.1f} s"
    minutes, secs = divmod(int(round(value)), 60)
    return f"{minutes} min {secs:02d} s"


def number(value) -> str:
    if value is None:
        return "—"
    if isinstance(value, float):
        if value.is_integer():
            return group_digits(int(value))
        return f"{value:.2f}"
    if isinstance(value, int):
        return group_digits(value)
    return str(value)


def ratio(value: float | None) -> str:
    """A ratio between counts: grouped whole numbers when large, two decimals when small."""
    if value is None:
        return "—"
    if value >= 100:
        return "×\u2009" + group_digits(int(round(value)))
    return f"×\u2009{value:.2f}"


def interval(log10_interval) -> str:
    """A count's 95 % interval in words: 'between 3.56 × 10^51 and 4.58 × 10^51, 95 % confidence'."""
    from ..export.tables import interval_words

    return interval_words(log10_interval) if log10_interval else ""


def ratio_interval(count) -> str:
    """The 95 % interval of a count's ratio to one slot fewer, in words (empty when unknown)."""
    from ..export.tables import ratio_words

    return ratio_words(count)


def digits(n: int | None) -> int:
    return 0 if n is None else len(str(abs(int(n))))


FILTERS = {
    "group_digits": group_digits,
    "short_count": short_count,
    "table_count": table_count,
    "count_style_of": count_style,
    "power_of_ten": power_of_ten,
    "seconds": seconds,
    "number": number,
    "digits": digits,
    "ratio": ratio,
    "interval": interval,
    "ratio_interval": ratio_interval,
    "sup": superscripts,
}
