"""Dates as the site format writes them: one parser for readings and command-line options.

Only ISO 8601 calendar dates ``YYYY-MM-DD`` are accepted (a spreadsheet's midnight time,
``2026-03-10 00:00:00``, is allowed and dropped). Day-first and month-first forms such as
``12/03/2026`` are refused rather than guessed: read the wrong way, an audit is filed under
another month.
"""

from __future__ import annotations

import datetime as dt
import re

from audit_lib.errors import InputError

_ISO_DATE = re.compile(r"^(\d{4})-(\d{2})-(\d{2})(?:[ T]00:00(?::00)?)?$")


def parse_date(text, *, field: str | None = None) -> dt.date:
    """Read a ``YYYY-MM-DD`` date.

    Parameters
    ----------
    text : str or datetime.date
        The date as written (a ``datetime.date`` is returned as it is).
    field : str, optional
        Where it was written (a column, key or command-line option), for the message.

    Returns
    -------
    datetime.date

    Raises
    ------
    InputError
        Not of the form ``YYYY-MM-DD``, or no such day (``2026-13-01``, ``2026-02-30``).
    """
    if isinstance(text, dt.datetime):
        return text.date()
    if isinstance(text, dt.date):
        return text
    text = str(text).strip()
    match = _ISO_DATE.match(text)
    if match is None:
        raise InputError(f"{text!r} is not a date in YYYY-MM-DD form", field=field,
                         hint="write dates as YYYY-MM-DD (12/03/2026 is ambiguous)")
    try:
        return dt.date(*(int(part) for part in match.groups()))
    except ValueError as exc:
        raise InputError(f"{text!r} is not a date: {exc}", field=field,
                         hint="write dates as YYYY-MM-DD, month 01-12") from None
