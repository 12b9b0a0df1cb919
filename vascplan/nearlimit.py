"""Printing a figure beside its verdict: never on the wrong side of the limit.

A verdict compares unrounded values (``value >= limit`` is "at or over"). Rounded to
two decimals, a SAR of 1.048 would print as ``1.05`` beside a "within the limit"
verdict against a limit of 1.05, and the page would contradict itself.
:func:`format_near_limit` adds digits until the printed figure, read back as a number,
lies on the same side of the limit as the unrounded value. Shared by every output that
prints a ratio or a diameter beside a limit (route table, case report, sheath flow).
"""

from __future__ import annotations

import math

MIN_DECIMALS = 2
"""Decimals printed when the figure is far enough from its limit (common practice for SAR)."""

MAX_DECIMALS = 12
"""After this many decimals the exact shortest representation of the float is printed."""


def on_or_over(value: float, limit: float) -> bool:
    """The verdict rule: True when ``value`` is at or over ``limit`` (unrounded).

    >>> on_or_over(1.048, 1.05), on_or_over(1.05, 1.05)
    (False, True)
    """
    return value >= limit


def format_near_limit(value: float, limit: float | None, decimals: int = MIN_DECIMALS) -> str:
    """``value`` with enough decimals to sit on its verdict's side of ``limit``.

    The verdict is :func:`on_or_over` on the unrounded numbers. The printed text,
    read back with ``float``, gives the same verdict against the same limit.

    Parameters
    ----------
    value : float
        The figure (a SAR, a diameter).
    limit : float or None
        The limit it is judged against; None prints ``decimals`` decimals.
    decimals : int
        The fewest decimals to print.

    Returns
    -------
    str

    Examples
    --------
    >>> format_near_limit(1.048, 1.05)
    '1.048'
    >>> format_near_limit(1.052, 1.05)
    '1.05'
    >>> format_near_limit(0.93, 1.05)
    '0.93'
    >>> format_near_limit(1.0499, 1.05)
    '1.0499'
    """
    if limit is None or not (math.isfinite(value) and math.isfinite(limit)):
        return f"{value:.{decimals}f}"
    over = on_or_over(value, limit)
    for places in range(decimals, MAX_DECIMALS + 1):
        text = f"{value:.{places}f}"
        if on_or_over(float(text), limit) is over:
            return text
    return repr(value)  # the shortest text that reads back as exactly this float


def format_limit(limit: float, decimals: int = MIN_DECIMALS) -> str:
    """A limit printed exactly: ``decimals`` decimals, more if the value has them.

    >>> format_limit(1.0), format_limit(1.27), format_limit(1.045)
    ('1.00', '1.27', '1.045')
    """
    for places in range(decimals, MAX_DECIMALS + 1):
        text = f"{limit:.{places}f}"
        if float(text) == limit:
            return text
    return repr(limit)


def ceil_to(value: float, step: float = 0.1) -> float:
    """Round ``value`` up to a multiple of ``step``, so that a printed minimum is safe.

    A hair of floating-point noise above a multiple is not rounded up again.

    >>> ceil_to(9.1 / 1.05)
    8.7
    >>> ceil_to(8.4)
    8.4
    """
    steps = value / step
    return round(math.ceil(steps - 1e-9) * step, 10)
