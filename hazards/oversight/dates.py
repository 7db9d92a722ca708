"""Calendar arithmetic of due dates, and the state of a due date on a given day."""

from __future__ import annotations

import calendar
import datetime as dt

# Where the default interval comes from; local rules (a shorter company or national interval)
# may differ and are set per site (hazards.Site.revalidation_interval_months).
DEFAULT_SOURCE = (
    "OSHA 29 CFR 1910.119(e)(6): a process hazard analysis is updated and revalidated at "
    "least every five years. Local rules and company standards may set a shorter interval."
)
RETENTION_NOTE = (
    "OSHA 29 CFR 1910.119(e)(7): the analyses, their updates and revalidations are kept for "
    "the life of the process."
)

OVERDUE, DUE, CURRENT = "overdue", "due", "current"


def add_months(day: dt.date, months: int) -> dt.date:
    """`day` plus whole calendar months; a day the target month lacks becomes its last day
    (31 Aug + 6 months = 28 Feb, or 29 Feb in a leap year)."""
    index = day.month - 1 + months
    year, month = day.year + index // 12, index % 12 + 1
    return dt.date(year, month, min(day.day, calendar.monthrange(year, month)[1]))


def due_state(due_on: dt.date, today: dt.date, within_days: int) -> str:
    """overdue: the due date has passed; due: it is today or within the window; else current.

    A revalidation due today is still due, not overdue: it may be completed on that day.
    """
    if due_on < today:
        return OVERDUE
    if due_on <= today + dt.timedelta(days=within_days):
        return DUE
    return CURRENT
