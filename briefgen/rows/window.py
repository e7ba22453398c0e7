"""``window: {column: dispatched_at, last: 7 days}``: the latest period before the build date.

The window ends where the build date begins (midnight, in the data's own clock) and
starts the given number of days, weeks, months or years earlier. The build day itself
is left out: a nightly run sees only part of it, and a part-day would read as a drop.
The build date is ``SOURCE_DATE_EPOCH`` when set, like every other date of the build.
"""

from __future__ import annotations

import calendar
import datetime as dt
import re
from dataclasses import dataclass

UNITS = ("day", "week", "month", "year")
_LAST = re.compile(r"^\s*(\d+)\s*(day|week|month|year)s?\s*$", re.IGNORECASE)


def parse_last(text: str) -> tuple[int, str]:
    """``"7 days"`` ─► (7, "day"); a ValueError says what to write instead."""
    found = _LAST.match(str(text))
    if not found or int(found.group(1)) < 1:
        raise ValueError(
            "write a whole number of days, weeks, months or years, such as '7 days' or '3 months'"
        )
    return int(found.group(1)), found.group(2).lower()


def _months_before(day: dt.date, months: int) -> dt.date:
    index = day.year * 12 + day.month - 1 - months
    year, month = divmod(index, 12)
    last = calendar.monthrange(year, month + 1)[1]
    return dt.date(year, month + 1, min(day.day, last))


@dataclass(frozen=True, slots=True)
class Window:
    """Rows whose ``column`` falls in [``start``, ``end``): ``count`` ``unit``s before the build date."""

    column: str
    count: int
    unit: str
    start: dt.date
    end: dt.date

    @property
    def last_day(self) -> dt.date:
        return self.end - dt.timedelta(days=1)

    def words(self) -> str:
        """The window in words, with its dates: the reader should not have to work them out."""
        unit = self.unit if self.count == 1 else f"{self.unit}s"
        span = f"the last {self.count} {unit}" if self.count > 1 else f"the last {unit}"
        if self.start == self.last_day:
            dates = self.start.isoformat()
        else:
            dates = f"{self.start.isoformat()} to {self.last_day.isoformat()}"
        return f"{self.column} in {span} before {self.end.isoformat()} ({dates})"


def window_for(column: str, last: str, built_on: str) -> Window:
    count, unit = parse_last(last)
    end = dt.date.fromisoformat(built_on)
    if unit == "day":
        start = end - dt.timedelta(days=count)
    elif unit == "week":
        start = end - dt.timedelta(weeks=count)
    elif unit == "month":
        start = _months_before(end, count)
    else:
        start = _months_before(end, 12 * count)
    return Window(column=column, count=count, unit=unit, start=start, end=end)
