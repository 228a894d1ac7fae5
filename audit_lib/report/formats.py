"""Every number formatter of the reports, the overview, the index and ``results.csv``.

A figure is shown at the precision of the measurement behind it, with its unit in the column
header (``Basking maximum [UVI]``), "–" when missing and "no limit" for an open upper limit.
:data:`QUANTITIES` says, once, how each kind of figure is scaled and rounded; :func:`text`
writes it for a page and :func:`rounded` gives the same figure as a number for
``results.csv``, so the two never disagree. :func:`html_table` builds the designed tables
(escaped text, numbers right-aligned, headers that wrap).

Precision, common practice (from memory): handheld UV Index meters read to 0.1 UVI; lamp
hours, days and minutes are whole; illuminance meters to about 3 significant figures;
a spectroradiometer resolves about 1 nm; shares are shown in whole per cent.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass
from html import escape

#: Shown for a missing figure.
MISSING = "–"


class HTMLBlock(str):
    """A string of finished HTML that a notebook shows as HTML."""

    def _repr_html_(self) -> str:
        return str(self)


@dataclass(frozen=True)
class Quantity:
    """How one kind of figure is shown.

    Attributes
    ----------
    unit : str
        Unit shown in headers ("" for none).
    scale : float
        Shown value = stored value × scale (100 for a share shown in %).
    decimals : int or None
        Fixed decimals of the shown value.
    significant : int or None
        Significant figures instead (for figures spanning decades).
    """

    unit: str
    scale: float = 1.0
    decimals: int | None = None
    significant: int | None = None


#: Every kind of figure the reports show. Stored values are the library's (shares as
#: fractions, SI units); shown values are scaled and rounded here.
QUANTITIES = {
    "uvi": Quantity("UVI", decimals=1),
    "share_pct": Quantity("%", 100.0, decimals=0),
    "small_share_pct": Quantity("%", 100.0, significant=2),
    "hours": Quantity("h", decimals=1),
    "minutes": Quantity("min", decimals=0),
    "lamp_hours": Quantity("h", decimals=0),
    "days": Quantity("days", decimals=0),
    "lux": Quantity("lx", significant=3),
    "w_m2": Quantity("W/m²", significant=3),
    "j_m2": Quantity("J/m²", significant=3),
    "sed": Quantity("SED", decimals=2),
    "nm": Quantity("nm", decimals=0),
    "kelvin": Quantity("K", significant=2),
    "ratio": Quantity("", decimals=2),
    "metres": Quantity("m", decimals=2),
    "area_m2": Quantity("m²", decimals=2),
    "count": Quantity("", decimals=0),
    "factor": Quantity("", decimals=2),
}

#: How each check of ``results.json`` is shown: its quantity and a header in words.
CHECK_QUANTITIES = {
    "basking_uvi_max": ("uvi", "Basking maximum"),
    "used_area_uvi_max": ("uvi", "Used-area maximum"),
    "animal_uvi_mean": ("uvi", "Animal's mean"),
    "refuge_floor_share": ("share_pct", "Low-UV refuge share of floor"),
    "light_hours": ("hours", "Hours of light"),
    "short_uvb_share": ("small_share_pct", "Short-wave UVB share"),
    "keeper_exposure_time": ("minutes", "Keeper's daily limit"),
}
#: Check units not covered above (a check added later): shown by unit.
_BY_UNIT = {"UVI": "uvi", "h": "hours", "min": "minutes", "-": "ratio", "%": "ratio"}


def header(words: str, quantity: str | None = None) -> str:
    """A column header in words with its unit: ``header("Basking maximum", "uvi")``."""
    unit = QUANTITIES[quantity].unit if quantity else ""
    return f"{words} [{unit}]" if unit else words


def _missing(value) -> bool:
    if value is None:
        return True
    try:
        return math.isnan(float(value))
    except (TypeError, ValueError):
        return True


def _decimals(shown: float, q: Quantity, extra: int = 0) -> int:
    if q.decimals is not None:
        return q.decimals + extra
    if shown == 0:
        return 0
    return q.significant - 1 - math.floor(math.log10(abs(shown))) + extra  # < 0: tens...


def rounded(value, quantity: str, *, extra: int = 0) -> float | None:
    """The figure as shown, in its stored unit (for ``results.csv``); None when missing.

    Parameters
    ----------
    value : float or None
        Stored value (a share as a fraction) [stored unit].
    quantity : str
        Key of :data:`QUANTITIES`.
    extra : int
        Decimals beyond the quantity's own.
    """
    if _missing(value):
        return None
    value = float(value)
    if math.isinf(value):
        return value
    q = QUANTITIES[quantity]
    shown = value * q.scale
    digits = _decimals(shown, q, extra)
    shown = round(shown, digits)
    if q.scale != 1:
        shown = round(shown / q.scale, digits + round(math.log10(q.scale)))
    return float(shown)


def text(value, quantity: str, *, unit: bool = False, extra: int = 0) -> str:
    """The figure for a page: rounded, "–" when missing, "no limit" when infinite.

    Parameters
    ----------
    value : float or None
        Stored value [stored unit].
    quantity : str
        Key of :data:`QUANTITIES`.
    unit : bool
        Append the unit ("3.3 UVI"), for text outside a table.
    extra : int
        Decimals beyond the quantity's own.
    """
    if _missing(value):
        return MISSING
    value = float(value)
    if math.isinf(value):
        return "no limit"
    q = QUANTITIES[quantity]
    shown = value * q.scale
    digits = _decimals(shown, q, extra)
    out = f"{round(shown, digits):.{max(0, digits)}f}"
    if out.startswith("-") and float(out) == 0:
        out = out[1:]
    return f"{out} {q.unit}" if unit and q.unit else out


def check_quantity(check_id: str | None, unit: str = "") -> str:
    """The quantity key a check is shown with (by its stable id, else by its unit)."""
    if check_id in CHECK_QUANTITIES:
        return CHECK_QUANTITIES[check_id][0]
    return _BY_UNIT.get(unit, "ratio")


def check_extra(value, low, high, state: str, quantity: str) -> int:
    """Extra decimals so that a figure never rounds onto the wrong side of its limit.

    A basking maximum of 2.96 below a range starting at 3.0 is shown as 2.96, not 3.0.
    """
    if _missing(value):
        return 0
    for extra in range(4):
        v = rounded(value, quantity, extra=extra)
        lo = None if _missing(low) else rounded(low, quantity, extra=extra)
        hi = None if _missing(high) or math.isinf(float(high)) else \
            rounded(high, quantity, extra=extra)
        if state == "below range" and lo is not None and v >= lo:
            continue
        if state == "above range" and hi is not None and v <= hi:
            continue
        if state == "within range" and ((lo is not None and v < lo)
                                        or (hi is not None and v > hi)):
            continue
        return extra
    return 3


def check_text(check: dict, key: str = "value") -> str:
    """A figure of a ``results.json`` check (``value``, ``target_low`` or ``target_high``)."""
    q = check_quantity(check.get("check_id"), check.get("unit", ""))
    extra = check_extra(check.get("value"), check.get("target_low"), check.get("target_high"),
                        check.get("state", ""), q)
    return text(check.get(key), q, extra=extra)


def check_rounded(check: dict, key: str = "value") -> float | None:
    """:func:`check_text` as a number in the check's own unit (``results.csv``)."""
    q = check_quantity(check.get("check_id"), check.get("unit", ""))
    extra = check_extra(check.get("value"), check.get("target_low"), check.get("target_high"),
                        check.get("state", ""), q)
    return rounded(check.get(key), q, extra=extra)


def check_range_text(check: dict) -> str:
    """The target range of a check as shown: "2.9–7.4", "at least 30"."""
    low, high = check_text(check, "target_low"), check.get("target_high")
    if high is None or _missing(high) or math.isinf(float(high)):
        return f"at least {low}"
    return f"{low}–{check_text(check, 'target_high')}"


def check_unit(check: dict) -> str:
    """The unit a check is shown in ("%" for shares)."""
    return QUANTITIES[check_quantity(check.get("check_id"), check.get("unit", ""))].unit


def date_text(value) -> str:
    """An ISO date ``YYYY-MM-DD``, or "–"."""
    if value is None or value != value:  # None, NaN and NaT
        return MISSING
    if isinstance(value, (dt.date, dt.datetime)):
        return value.strftime("%Y-%m-%d")
    try:
        return dt.date.fromisoformat(str(value)[:10]).isoformat()
    except ValueError:
        return escape(str(value))


@dataclass(frozen=True)
class Column:
    """One column of a designed table.

    Attributes
    ----------
    key : str
        Key of the row dicts.
    title : str
        Header text, units in brackets (:func:`header`).
    quantity : str or None
        Key of :data:`QUANTITIES` for a number; None for text (escaped), "date" for a date,
        "html" for finished HTML (a state badge), "html_num" for a finished figure.
    """

    key: str
    title: str
    quantity: str | None = None


def _cell(value, column: Column) -> tuple[str, str]:
    if column.quantity in ("html", "html_num"):
        return str(value if value is not None else MISSING), \
            "num" if column.quantity == "html_num" else ""
    if column.quantity == "date":
        return date_text(value), "num"
    if column.quantity is not None:
        return text(value, column.quantity), "num"
    if _missing(value) and not isinstance(value, str):
        return MISSING, ""
    return escape(str(value)), ""


def html_table(rows, columns, *, css_class: str = "data", caption: str = "",
               row_header: bool = True) -> HTMLBlock:
    """A designed table: header in words with units, numbers right-aligned and rounded.

    Parameters
    ----------
    rows : iterable of dict
        One dict per row, keyed by the columns' ``key``.
    columns : sequence of Column
        The columns, left to right.
    css_class : str
        Class of the ``<table>`` (the style sheet lets headers wrap and long text break).
    caption : str
        Shown above the table (escaped).
    row_header : bool
        The first column names the row (``<th scope="row">``).
    """
    head = "".join(f'<th scope="col"{"" if c.quantity in (None, "html") else " class=num"}>'
                   f"{escape(c.title)}</th>" for c in columns)
    body = []
    for row in rows:
        cells = []
        for i, column in enumerate(columns):
            content, cls = _cell(row.get(column.key), column)
            tag = "th" if i == 0 and row_header else "td"
            scope = ' scope="row"' if tag == "th" else ""
            cells.append(f'<{tag}{scope}{f" class={cls}" if cls else ""}>{content}</{tag}>')
        body.append("<tr>" + "".join(cells) + "</tr>")
    cap = f"<caption>{escape(caption)}</caption>" if caption else ""
    return HTMLBlock(f'<div class="table-wrap"><table class="{css_class}">{cap}<thead><tr>'
                     f'{head}</tr></thead><tbody>{"".join(body)}</tbody></table></div>')


def note(textline: str) -> HTMLBlock:
    """A one-line note in place of an empty table ("no lamp spectra")."""
    return HTMLBlock(f'<p class="table-note">{escape(textline)}</p>')
