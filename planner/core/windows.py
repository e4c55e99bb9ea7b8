"""Date arithmetic for currency windows: calendar months, days, months to the day.

Regulations state recency in three ways, and each needs its own arithmetic:

* **calendar months** (14 CFR 61.57(c) "within the 6 calendar months preceding
  the month of the flight", 61.56(c) "24 calendar months"): a period always ends
  on the **last day of a month**; never "add six months to the day";
* **days** (14 CFR 61.57(a) "within the preceding 90 days", EASA FCL.060(b)):
  by default a task on day d counts through day d + N (landing on 1 Jan 2025,
  current through 1 Apr 2025: common practice); the stricter reading ends one
  day earlier;
* **months or years to the day** (anniversary validity, e.g. EASA FCL.625, CAR
  401.05(3)): valid through the same day N months later; a day that does not
  exist in the target month is clamped to that month's last day (29 Feb + 1 year
  is 28 Feb: from memory).

All dates are local calendar dates (the pilot's home base or the entry's
airfield). Nothing here reads the clock.
"""

from __future__ import annotations

import calendar
from dataclasses import dataclass
from datetime import date, timedelta
from functools import lru_cache

CALENDAR_MONTHS = "calendar-months"
DAYS = "days"
MONTHS_TO_THE_DAY = "months-to-the-day"
YEARS_TO_THE_DAY = "years-to-the-day"
UNITS = (CALENDAR_MONTHS, DAYS, MONTHS_TO_THE_DAY, YEARS_TO_THE_DAY)

ONE_DAY = timedelta(days=1)


@dataclass(frozen=True)
class Window:
    """How long something done on one day keeps counting.

    ``current_month_counts`` (calendar months only): whether work done earlier in
    the month of the flight counts. Common practice counts it (default); the
    literal reading of "preceding the month of the flight" does not, so work done
    in month m first counts on the first day of month m + 1.

    ``inclusive`` (days, months/years to the day): whether the Nth day (or the
    anniversary day) itself is still covered. Default True: "within the preceding
    90 days" covers day d + 90.
    """

    unit: str
    length: int
    current_month_counts: bool = True
    inclusive: bool = True

    def __post_init__(self) -> None:
        if self.unit not in UNITS:
            raise ValueError(f"unknown window unit {self.unit!r}; expected one of {', '.join(UNITS)}")
        if self.length < 0:
            raise ValueError("window length must not be negative")

    def describe(self) -> str:
        """Short human wording, e.g. '6 calendar months'."""
        return f"{self.length} {self.unit.replace('-', ' ')}"


def month_index(d: date) -> int:
    """Months since year 0: consecutive months have consecutive indexes."""
    return d.year * 12 + d.month - 1


def end_of_month_index(index: int) -> date:
    """Last day of the month with this ``month_index``."""
    year, month0 = divmod(index, 12)
    return date(year, month0 + 1, calendar.monthrange(year, month0 + 1)[1])


def first_of_month_index(index: int) -> date:
    year, month0 = divmod(index, 12)
    return date(year, month0 + 1, 1)


def end_of_month_after(d: date, months: int) -> date:
    """Last day of the month ``months`` calendar months after the month of ``d``."""
    return end_of_month_index(month_index(d) + months)


def add_months(d: date, months: int) -> date:
    """Same day ``months`` months later (or earlier), clamped to the month's last day."""
    index = month_index(d) + months
    year, month0 = divmod(index, 12)
    last = calendar.monthrange(year, month0 + 1)[1]
    return date(year, month0 + 1, min(d.day, last))


@lru_cache(maxsize=65536)
def credit_end(window: Window, d: date) -> date:
    """Last day on which something done on ``d`` still counts (inclusive)."""
    if window.unit == CALENDAR_MONTHS:
        return end_of_month_after(d, window.length)
    if window.unit == DAYS:
        end = d + timedelta(days=window.length)
    elif window.unit == MONTHS_TO_THE_DAY:
        end = add_months(d, window.length)
    else:
        end = add_months(d, 12 * window.length)
    return end if window.inclusive else end - ONE_DAY


@lru_cache(maxsize=65536)
def credit_start(window: Window, d: date) -> date:
    """First day on which something done on ``d`` counts.

    ``d`` itself, except for calendar-month windows read literally (the flight's
    own month does not count), where it is the first day of the next month.
    """
    if window.unit == CALENDAR_MONTHS and not window.current_month_counts:
        return first_of_month_index(month_index(d) + 1)
    return d


def early_window_start(window: Window, expiry: date) -> date:
    """First day of the early-renewal span of ``window`` that ends on ``expiry``.

    "Within the N months before expiry": for calendar months the N months ending
    with the expiry month (expiry 31 Dec, 3 months: from 1 Oct); to the day, the
    day after the same day N months earlier (expiry 15 Mar: from 16 Dec); in days,
    the N days ending on the expiry day. From memory: check the regulator's text.
    """
    if window.unit == CALENDAR_MONTHS:
        return first_of_month_index(month_index(expiry) - max(window.length - 1, 0))
    if window.unit == DAYS:
        return expiry - timedelta(days=max(window.length - 1, 0))
    months = window.length if window.unit == MONTHS_TO_THE_DAY else 12 * window.length
    return add_months(expiry, -months) + ONE_DAY


def earliest_counting(window: Window, day: date) -> date:
    """Earliest date whose work can still count on ``day`` (a lower bound for look-ups)."""
    if window.unit == CALENDAR_MONTHS:
        return first_of_month_index(month_index(day) - window.length)
    if window.unit == DAYS:
        return day - timedelta(days=window.length)
    months = window.length if window.unit == MONTHS_TO_THE_DAY else 12 * window.length
    return add_months(day, -months) - ONE_DAY
