"""Meter readings in long format: one row per reading, from CSV or ``.xlsx``.

The table contract (shared by ``site``, ``history`` and ``batch``) is :data:`COLUMNS`:
``date`` (datetime64, day), ``enclosure``, ``lamp``, ``position``, ``x_m``, ``y_m``, ``z_m``,
``distance_m``, ``quantity``, ``value`` (as written), ``unit`` (as written), ``value_si``
(converted with :func:`audit_lib.light.units.to_si`; the index itself for ``uvi``), ``meter``,
``note``, ``source_file``, ``source_line`` (1-based line in the file, header = line 1).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
import re
import zipfile
from os import PathLike
from pathlib import Path

import numpy as np
import pandas as pd

from audit_lib.errors import InputError, InputErrors
from audit_lib.light.units import to_si
from audit_lib.site.dates import parse_date

COLUMNS = (
    "date", "enclosure", "lamp", "position", "x_m", "y_m", "z_m", "distance_m", "quantity",
    "value", "unit", "value_si", "meter", "note", "source_file", "source_line",
)
REQUIRED = ("date", "enclosure", "quantity", "value", "unit")
OPTIONAL = ("lamp", "position", "x_m", "y_m", "z_m", "distance_m", "meter", "note")
#: quantity -> kind for :func:`audit_lib.light.units.to_si` (None: a plain index).
QUANTITIES = {
    "uvi": None,
    "uvb_w_m2": "irradiance",
    "uva_w_m2": "irradiance",
    "vitamin_d_w_m2": "irradiance",
    "illuminance_lux": "illuminance",
}
ALIASES = {
    "uv_index": "uvi", "uvb": "uvb_w_m2", "uva": "uva_w_m2", "vitamin_d": "vitamin_d_w_m2",
    "illuminance": "illuminance_lux", "lux": "illuminance_lux",
}
UVI_UNITS = ("", "uvi", "index", "-")


#: Column separators of a readings text file; the header's column names tell which one.
SEPARATORS = (",", ";", "\t")
#: Columns that hold numbers (decimal commas are read in files not separated by commas).
NUMBER_COLUMNS = ("x_m", "y_m", "z_m", "distance_m", "value")
_DECIMAL_COMMA = re.compile(r"^[-+]?\d*,\d+$")


def _read_table(path: Path) -> tuple[list[str], list[tuple[int, list[str]]], int, str]:
    """Return header, data rows (with 1-based line numbers), header line and separator.

    The separator is ``""`` for a spreadsheet.
    """
    suffix = path.suffix.lower()
    separator = ""
    if suffix == ".xlsx":
        from openpyxl import load_workbook

        book = load_workbook(path, read_only=True, data_only=True)
        sheet = book.worksheets[0]
        rows = [(i, ["" if v is None else _cell_text(v) for v in row])
                for i, row in enumerate(sheet.iter_rows(values_only=True), start=1)]
        book.close()
    elif suffix in (".csv", ".txt", ".tsv"):
        text = _decode(path.read_bytes())
        separator = "\t" if suffix == ".tsv" else _sniff_separator(text)
        rows = list(enumerate(csv.reader(io.StringIO(text), delimiter=separator), start=1))
    else:
        raise InputError("readings must be .csv, .tsv or .xlsx", path=path,
                         hint="export the sheet as CSV or save it as .xlsx")
    rows = [(i, [c.strip() for c in r]) for i, r in rows
            if any(c.strip() for c in r) and not r[0].lstrip().startswith("#")]
    if not rows:
        return [], [], 1, separator
    (header_line, header), data = rows[0], rows[1:]
    return [h.lower() for h in header], data, header_line, separator


def _decode(raw: bytes) -> str:
    """UTF-8 text (with or without a byte-order mark), else Windows-1252.

    Spreadsheets on Western-European Windows save "CSV" in Windows-1252 (``µW/cm²`` as the
    bytes B5 and B2); a file that is valid UTF-8 is always read as UTF-8.
    """
    try:
        return raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        try:
            return raw.decode("cp1252")
        except UnicodeDecodeError:
            raise exc from None


def _sniff_separator(text: str) -> str:
    """The separator that splits the header into the most known column names (ties: comma)."""
    header = next((line for line in text.splitlines()
                   if line.strip() and not line.lstrip().startswith("#")), "")
    known = set(REQUIRED + OPTIONAL)

    def known_columns(separator: str) -> int:
        cells = next(csv.reader([header], delimiter=separator), [])
        return sum(cell.strip().lower() in known for cell in cells)

    return max(SEPARATORS, key=known_columns)


def _decimal_mark(header: list[str], data: list, separator: str) -> str:
    """``","`` when a file not separated by commas writes its numbers with decimal commas."""
    if separator in ("", ","):
        return "."
    columns = [i for i, name in enumerate(header) if name in NUMBER_COLUMNS]
    found = any(_DECIMAL_COMMA.match(cells[i]) for _, cells in data for i in columns
                if i < len(cells))
    return "," if found else "."


def _cell_text(value) -> str:
    """Spreadsheet cell as text: dates as YYYY-MM-DD, numbers without a trailing .0."""
    if isinstance(value, dt.datetime | dt.date):
        return value.strftime("%Y-%m-%d")
    if isinstance(value, float) and value.is_integer():
        return str(int(value))
    return str(value)


def _number(text: str, *, where: dict, column: str, problems: list, decimal: str = ".") -> float:
    text = str(text).strip()
    if text == "":
        return math.nan
    if decimal == ",":
        if "." in text:
            problems.append(InputError(
                f"{text!r} has a point in a file written with decimal commas", field=column,
                **where, hint="write numbers without thousands separators, e.g. 12500 or 2,5"))
            return math.nan
        text = text.replace(",", ".")
    try:
        return float(text)
    except ValueError:
        hint = "write a plain number" + (" with a decimal comma" if decimal == "," else
                                         " with a decimal point")
        problems.append(InputError(f"{text!r} is not a number", field=column, **where,
                                   hint=hint))
        return math.nan


def _convert_row(raw: dict, where: dict, problems: list, decimal: str = ".") -> dict | None:

    before = len(problems)
    row = {k: str(raw.get(k, "")).strip() for k in REQUIRED + OPTIONAL}
    try:
        date = pd.Timestamp(parse_date(row["date"]))
    except InputError as exc:
        problems.append(InputError(exc.message, field="date", **where, hint=exc.hint))
        date = pd.NaT
    for column in ("enclosure",):
        if not row[column]:
            problems.append(InputError("is empty", field=column, **where,
                                       hint="every reading names its enclosure id"))
    quantity = ALIASES.get(row["quantity"].lower(), row["quantity"].lower())
    if quantity not in QUANTITIES:
        problems.append(InputError(
            f"unknown quantity {row['quantity']!r}", field="quantity", **where,
            hint="use one of " + ", ".join(QUANTITIES)))
    value = _number(row["value"], where=where, column="value", problems=problems,
                    decimal=decimal)
    if row["value"].strip() == "":
        problems.append(InputError("is empty", field="value", **where, hint="give the reading"))
    coords = {c: _number(row[c], where=where, column=c, problems=problems, decimal=decimal)
              for c in ("x_m", "y_m", "z_m", "distance_m")}
    value_si = math.nan
    if quantity in QUANTITIES and not math.isnan(value):
        kind = QUANTITIES[quantity]
        if kind is None:
            if row["unit"].lower() not in UVI_UNITS:
                problems.append(InputError(
                    f"unit {row['unit']!r} given for a UV Index", field="unit", **where,
                    hint="leave the unit empty or write 'UVI'"))
            value_si = value
        else:
            try:
                value_si = float(to_si(value, row["unit"], kind))
            except InputError as exc:
                problems.append(InputError(exc.message, field="unit", **where, hint=exc.hint))
    if len(problems) > before:
        return None
    return {"date": date, "enclosure": row["enclosure"], "lamp": row["lamp"],
            "position": row["position"], **coords, "quantity": quantity,
            "value": value, "unit": row["unit"], "value_si": value_si,
            "meter": row["meter"], "note": row["note"]}


def read_readings_with_problems(path: str | PathLike) -> tuple[pd.DataFrame, list[InputError]]:
    """Read one readings file; return the good rows and every problem found.

    Parameters
    ----------
    path : str or PathLike
        A ``.csv``/``.tsv`` (``#`` comment lines allowed above the header) or ``.xlsx`` file.

    Returns
    -------
    (pandas.DataFrame, list of InputError)
        Rows in the :data:`COLUMNS` layout, and the problems (file, line, column, hint).
    """
    path = Path(path)
    try:
        header, data, header_line, separator = _read_table(path)
    except InputError as exc:
        return _as_frame([]), [exc]
    except (OSError, UnicodeDecodeError, ValueError, KeyError, zipfile.BadZipFile) as exc:
        return _as_frame([]), [InputError(f"cannot read the file: {exc}", path=path,
                                          hint="save it again as UTF-8 CSV or .xlsx")]
    missing = [c for c in REQUIRED if c not in header]
    if missing and len(header) <= 1:  # one problem, not one per column
        return _as_frame([]), [InputError(
            f"the header {header[0] if header else ''!r} is not split into columns", path=path,
            line=header_line, hint="separate the columns with commas, semicolons or tabs; "
            "required columns: " + ", ".join(REQUIRED))]
    problems: list[InputError] = []
    unknown = [c for c in header if c not in REQUIRED + OPTIONAL]
    for column in missing:
        problems.append(InputError(f"missing column {column!r}", path=path, line=header_line,
                                   hint="required columns: " + ", ".join(REQUIRED)))
    for column in unknown:
        problems.append(InputError(f"unknown column {column!r}", path=path, line=header_line,
                                   hint="allowed columns: " + ", ".join(REQUIRED + OPTIONAL)))
    rows = []
    decimal = _decimal_mark(header, data, separator)
    sep_name = {"\t": "tabs", ";": "semicolons"}.get(separator, "commas")
    if not missing:
        for line, cells in data:
            if len(cells) != len(header):
                problems.append(InputError(
                    f"{len(cells)} fields where the header has {len(header)}", path=path,
                    line=line, hint=f"columns are separated by {sep_name}; quote notes that "
                                    "contain one: \"like; this\""
                    if separator == ";" else "quote notes that contain commas: \"like, this\""))
                continue
            row = _convert_row(dict(zip(header, cells, strict=True)),
                               {"path": path, "line": line}, problems, decimal)
            if row is not None:
                rows.append({**row, "source_file": path.name, "source_line": line})
    return _as_frame(rows), problems


def _as_frame(rows: list[dict]) -> pd.DataFrame:
    frame = pd.DataFrame(rows, columns=list(COLUMNS))
    frame["date"] = pd.to_datetime(frame["date"]).astype("datetime64[ns]")
    for column in ("x_m", "y_m", "z_m", "distance_m", "value", "value_si"):
        frame[column] = frame[column].astype(float)
    frame["source_line"] = frame["source_line"].astype(np.int64)
    return frame


def read_readings(path: str | PathLike) -> pd.DataFrame:
    """Read readings from a file, or from every ``*.csv``/``*.xlsx`` in a folder.

    Parameters
    ----------
    path : str or PathLike
        A readings file, or a folder (e.g. ``SITE/readings``) read in name order.

    Returns
    -------
    pandas.DataFrame
        One row per reading, columns :data:`COLUMNS`; SI values in ``value_si``
        (W m-2 for irradiances, lx for illuminance, the index for ``uvi``).

    Raises
    ------
    InputErrors
        Every problem in every file, each with file, line, column and a hint.
    """
    path = Path(path)
    files = readings_files(path) if path.is_dir() else [path]
    frames, problems = [], []
    for file in files:
        frame, found = read_readings_with_problems(file)
        frames.append(frame)
        problems.extend(found)
    if problems:
        raise InputErrors(problems)
    if not frames:
        return _as_frame([])
    return pd.concat(frames, ignore_index=True)


def readings_files(folder: str | PathLike) -> list[Path]:
    """Return the readings files of a folder in name order (``.csv``, ``.tsv``, ``.xlsx``)."""
    folder = Path(folder)
    if not folder.is_dir():
        return []
    return sorted(p for p in folder.iterdir()
                  if p.suffix.lower() in (".csv", ".tsv", ".xlsx") and not p.name.startswith("~$"))
