"""The audit history store: one SQLite file per site.

The store keeps every reading ever imported, the audits they belong to (one audit = one
enclosure visited on one day) and each lamp's installs and replacements, so that lamp decay
can be fitted across yearly audits (see :mod:`audit_lib.history.decay`).

Design
------
* Plain stdlib :mod:`sqlite3`, one file per site (``SITE/history.sqlite`` by default).
* The schema is versioned with ``PRAGMA user_version``; :data:`MIGRATIONS` is an ordered
  list of functions, migration ``i`` takes the schema from version ``i`` to ``i + 1``.
  Opening a database applies every missing migration in one transaction.
* :func:`import_readings` is idempotent: a reading's natural key (date, enclosure, lamp,
  position, coordinates, distance, quantity, meter, value) is hashed into ``reading_key``
  (unique), and the content hash of the whole import is recorded, so importing the same
  file twice adds nothing. It is transactional: the first bad row rolls the whole import
  back and raises :class:`~audit_lib.errors.InputError` naming file, line and field.

Dates are stored as ISO 8601 text (``YYYY-MM-DD``), as the SQLite documentation
recommends for date values ("Date And Time Functions", sqlite.org).
"""

from __future__ import annotations

import datetime as dt
import hashlib
import math
import sqlite3
from collections.abc import Callable
from dataclasses import dataclass
from os import PathLike
from pathlib import Path

import numpy as np
import pandas as pd

from audit_lib.errors import AuditError, InputError

#: Quantities a reading may carry (the readings contract of ``audit_lib.site.readings``).
QUANTITIES = ("uvi", "uvb_w_m2", "uva_w_m2", "illuminance_lux", "vitamin_d_w_m2")

#: Columns of the readings table as returned by :func:`read_lamp_readings`.
READING_COLUMNS = (
    "date", "enclosure", "lamp", "position", "x_m", "y_m", "z_m", "distance_m",
    "quantity", "value", "unit", "value_si", "meter", "note", "source_file", "source_line",
)

DEFAULT_DB_NAME = "history.sqlite"


def _run_script(conn: sqlite3.Connection, script: str) -> None:
    """Run ``;``-separated statements inside the open transaction.

    (``executescript`` would commit first and break the migration's atomicity.)
    """
    for statement in script.split(";"):
        if statement.strip():
            conn.execute(statement)


def _migrate_0_to_1(conn: sqlite3.Connection) -> None:
    """Create the first schema: audits, readings, lamp installs."""
    _run_script(
        conn,
        """
        CREATE TABLE audits (
            id INTEGER PRIMARY KEY,
            enclosure TEXT NOT NULL CHECK (enclosure <> ''),
            date TEXT NOT NULL,
            UNIQUE (enclosure, date)
        );
        CREATE TABLE readings (
            id INTEGER PRIMARY KEY,
            audit_id INTEGER NOT NULL REFERENCES audits(id),
            date TEXT NOT NULL,
            enclosure TEXT NOT NULL,
            lamp TEXT NOT NULL DEFAULT '',
            position TEXT NOT NULL DEFAULT '',
            x_m REAL, y_m REAL, z_m REAL, distance_m REAL,
            quantity TEXT NOT NULL,
            value REAL NOT NULL,
            unit TEXT NOT NULL DEFAULT '',
            value_si REAL NOT NULL CHECK (value_si >= 0),
            meter TEXT NOT NULL DEFAULT '',
            note TEXT NOT NULL DEFAULT '',
            source_file TEXT NOT NULL DEFAULT '',
            source_line INTEGER
        );
        CREATE INDEX readings_lamp ON readings (enclosure, lamp, date);
        CREATE TABLE lamp_installs (
            id INTEGER PRIMARY KEY,
            enclosure TEXT NOT NULL,
            lamp TEXT NOT NULL,
            installed_on TEXT NOT NULL,
            daily_hours REAL NOT NULL CHECK (daily_hours >= 0 AND daily_hours <= 24),
            lamp_model TEXT NOT NULL DEFAULT '',
            note TEXT NOT NULL DEFAULT '',
            UNIQUE (enclosure, lamp, installed_on)
        );
        """
    )


def _migrate_1_to_2(conn: sqlite3.Connection) -> None:
    """Add import bookkeeping and the natural key that makes imports idempotent."""
    _run_script(
        conn,
        """
        CREATE TABLE imports (
            id INTEGER PRIMARY KEY,
            content_sha256 TEXT NOT NULL UNIQUE,
            source_file TEXT NOT NULL DEFAULT '',
            imported_at TEXT NOT NULL,
            rows_added INTEGER NOT NULL
        );
        ALTER TABLE readings ADD COLUMN import_id INTEGER REFERENCES imports(id);
        ALTER TABLE readings ADD COLUMN reading_key TEXT;
        """
    )
    rows = conn.execute(
        "SELECT id, date, enclosure, lamp, position, x_m, y_m, z_m, distance_m, quantity,"
        " value_si, meter FROM readings"
    ).fetchall()
    for row in rows:
        conn.execute(
            "UPDATE readings SET reading_key = ? WHERE id = ?", (_natural_key(*row[1:]), row[0])
        )
    # Rows that were duplicates under version 1 keep only their first copy.
    conn.execute(
        "DELETE FROM readings WHERE id NOT IN (SELECT MIN(id) FROM readings GROUP BY reading_key)"
    )
    conn.execute("CREATE UNIQUE INDEX readings_key ON readings (reading_key)")


#: Ordered migrations: ``MIGRATIONS[i]`` takes the schema from version ``i`` to ``i + 1``.
MIGRATIONS: tuple[Callable[[sqlite3.Connection], None], ...] = (_migrate_0_to_1, _migrate_1_to_2)
SCHEMA_VERSION = len(MIGRATIONS)


@dataclass(frozen=True)
class ImportSummary:
    """What one call of :func:`import_readings` did.

    Attributes
    ----------
    source_file : str
        File(s) the readings came from, as named in ``source_file``.
    rows_in_input : int
        Readings offered [-].
    rows_added : int
        New readings stored [-].
    rows_already_stored : int
        Readings skipped because an identical reading is stored already [-].
    already_imported : bool
        True if this exact content had been imported before (nothing was done).
    rows_removed : int
        Readings of an earlier import of the same file removed (``replace=True``) [-].
    """

    source_file: str
    rows_in_input: int
    rows_added: int
    rows_already_stored: int
    already_imported: bool
    rows_removed: int = 0


def _natural_key(date, enclosure, lamp, position, x_m, y_m, z_m, distance_m, quantity,
                 value_si, meter) -> str:
    """Hash a reading's identifying fields (floats to 9 significant digits)."""

    def num(v) -> str:
        return "" if v is None or (isinstance(v, float) and math.isnan(v)) else f"{float(v):.9g}"

    parts = [str(date), str(enclosure), str(lamp or ""), str(position or ""),
             num(x_m), num(y_m), num(z_m), num(distance_m), str(quantity), num(value_si),
             str(meter or "")]
    return hashlib.sha256("\x1f".join(parts).encode()).hexdigest()


def migrate(conn: sqlite3.Connection, target: int = SCHEMA_VERSION) -> int:
    """Bring an open database up to schema version ``target``.

    Parameters
    ----------
    conn : sqlite3.Connection
        Open connection (autocommit mode, ``isolation_level=None``).
    target : int
        Schema version wanted; the default is the newest [-].

    Returns
    -------
    int
        The schema version after migration [-].
    """
    version = conn.execute("PRAGMA user_version").fetchone()[0]
    if version > SCHEMA_VERSION:
        raise AuditError(
            f"history database has schema version {version}, newer than this library "
            f"understands ({SCHEMA_VERSION}); update audit_lib"
        )
    if version >= target:
        return version
    conn.execute("BEGIN IMMEDIATE")
    try:
        for step in range(version, target):
            MIGRATIONS[step](conn)
        conn.execute(f"PRAGMA user_version = {int(target)}")
        conn.execute("COMMIT")
    except BaseException:
        conn.execute("ROLLBACK")
        raise
    return target


def open_history(db_path: str | PathLike, *, target_version: int = SCHEMA_VERSION
                 ) -> sqlite3.Connection:
    """Open (creating if needed) a site's history database, migrated to ``target_version``.

    Parameters
    ----------
    db_path : str or PathLike
        The SQLite file, e.g. ``SITE/history.sqlite``.
    target_version : int
        Schema version to migrate to (tests use older ones) [-].

    Returns
    -------
    sqlite3.Connection
        Connection in autocommit mode with foreign keys on; the caller closes it.
    """
    path = Path(db_path)
    path.parent.mkdir(parents=True, exist_ok=True)
    conn = sqlite3.connect(path, isolation_level=None)
    conn.execute("PRAGMA foreign_keys = ON")
    try:
        migrate(conn, target_version)
    except BaseException:
        conn.close()
        raise
    return conn


def schema_version(db_path: str | PathLike) -> int:
    """Return the schema version stored in ``db_path`` (0 for a new file) [-]."""
    conn = sqlite3.connect(Path(db_path))
    try:
        return conn.execute("PRAGMA user_version").fetchone()[0]
    finally:
        conn.close()


def _opt_float(value) -> float | None:
    if value is None:
        return None
    value = float(value)
    return None if math.isnan(value) else value


def _text(value) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return ""
    return str(value)


def _iso_date(value) -> str:
    if value is None or value is pd.NaT or (isinstance(value, float) and math.isnan(value)):
        raise ValueError("missing date")
    return pd.Timestamp(value).date().isoformat()


def _now_utc() -> str:
    return dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds")


def _content_hash(readings: pd.DataFrame) -> str:
    cols = [c for c in READING_COLUMNS if c in readings.columns and c != "source_line"]
    text = readings[cols].to_csv(index=False, date_format="%Y-%m-%d", float_format="%.9g")
    return hashlib.sha256(text.encode()).hexdigest()


def _row_error(row, message: str, field: str, hint: str | None = None) -> InputError:
    line = row.get("source_line")
    line = None if line is None or pd.isna(line) else int(line)
    return InputError(message, path=_text(row.get("source_file")) or None, line=line,
                      field=field, hint=hint)


def _check_row(row) -> tuple:
    """Validate one reading and return its column values in table order."""
    try:
        date = _iso_date(row.get("date"))
    except (ValueError, TypeError) as exc:
        raise _row_error(row, f"not a date: {row.get('date')!r} ({exc})", "date",
                         "write dates as YYYY-MM-DD") from None
    enclosure = _text(row.get("enclosure"))
    if not enclosure:
        raise _row_error(row, "missing enclosure id", "enclosure")
    quantity = _text(row.get("quantity"))
    if quantity not in QUANTITIES:
        raise _row_error(row, f"unknown quantity {quantity!r}", "quantity",
                         "one of " + ", ".join(QUANTITIES))
    try:
        value_si = float(row.get("value_si"))
        value = float(row.get("value"))
    except (TypeError, ValueError):
        raise _row_error(row, f"not a number: {row.get('value')!r}", "value") from None
    if not math.isfinite(value_si):
        raise _row_error(row, f"not a finite number: {row.get('value')!r}", "value")
    if value_si < 0:
        raise _row_error(row, f"negative reading {value!r}", "value",
                         "readings of irradiance or UV Index cannot be negative")
    values = (
        date, enclosure, _text(row.get("lamp")), _text(row.get("position")),
        _opt_float(row.get("x_m")), _opt_float(row.get("y_m")), _opt_float(row.get("z_m")),
        _opt_float(row.get("distance_m")), quantity, value, _text(row.get("unit")), value_si,
        _text(row.get("meter")), _text(row.get("note")), _text(row.get("source_file")),
        None if pd.isna(row.get("source_line", None)) else int(row.get("source_line")),
    )
    return values


def import_readings(db_path: str | PathLike, readings: pd.DataFrame, *,
                    source_file: str | None = None, replace: bool = False) -> ImportSummary:
    """Import readings (the ``audit_lib.site.readings`` contract) into a site's history.

    Idempotent and transactional: identical readings are stored once, re-importing the
    same content adds nothing, and any bad row rolls the whole import back.

    Parameters
    ----------
    db_path : str or PathLike
        The site's history database (created and migrated if needed).
    readings : pandas.DataFrame
        One row per reading with the columns of the readings contract (``date``,
        ``enclosure``, ``lamp``, ``position``, ``x_m``, ``y_m``, ``z_m``, ``distance_m``,
        ``quantity``, ``value``, ``unit``, ``value_si``, ``meter``, ``note``,
        ``source_file``, ``source_line``); missing optional columns count as empty.
    source_file : str, optional
        Name recorded for the import; defaults to the distinct ``source_file`` values.
    replace : bool
        First remove the readings stored by earlier imports under the same
        ``source_file`` name (a corrected file replaces its old version, in the same
        transaction). Without it, a changed value is stored beside the old one. A reading
        that an earlier import of *another* file also held is removed with this file's.

    Returns
    -------
    ImportSummary
        Counts of rows offered, added and already stored.

    Raises
    ------
    InputError
        On the first bad row (file, line and field named); the database is unchanged.
    """
    for column in ("date", "enclosure", "quantity", "value", "value_si"):
        if column not in readings.columns:
            raise InputError(f"readings table has no column {column!r}", field=column,
                             hint="use audit_lib.site.readings.read_readings to read the file")
    if source_file is None:
        names = readings["source_file"].dropna().astype(str).unique() \
            if "source_file" in readings.columns else []
        source_file = ", ".join(sorted(names))
    digest = _content_hash(readings)
    conn = open_history(db_path)
    try:
        if conn.execute("SELECT 1 FROM imports WHERE content_sha256 = ?", (digest,)).fetchone():
            return ImportSummary(source_file, len(readings), 0, len(readings), True)
        conn.execute("BEGIN IMMEDIATE")
        try:
            cur = conn.execute(
                "INSERT INTO imports (content_sha256, source_file, imported_at, rows_added)"
                " VALUES (?, ?, ?, 0)",
                (digest, source_file, _now_utc()),
            )
            import_id = cur.lastrowid
            removed = 0
            if replace:
                old = "SELECT id FROM imports WHERE source_file = ? AND id <> ?"
                removed = conn.execute(f"DELETE FROM readings WHERE import_id IN ({old})",
                                       (source_file, import_id)).rowcount
                conn.execute(f"DELETE FROM imports WHERE id IN ({old})", (source_file, import_id))
            added = 0
            for row in readings.to_dict("records"):
                values = _check_row(row)
                key = _natural_key(*values[:9], values[11], values[12])
                conn.execute("INSERT OR IGNORE INTO audits (enclosure, date) VALUES (?, ?)",
                             (values[1], values[0]))
                audit_id = conn.execute(
                    "SELECT id FROM audits WHERE enclosure = ? AND date = ?",
                    (values[1], values[0])).fetchone()[0]
                try:
                    cur = conn.execute(
                        "INSERT OR IGNORE INTO readings (audit_id, date, enclosure, lamp, position,"
                        " x_m, y_m, z_m, distance_m, quantity, value, unit, value_si, meter, note,"
                        " source_file, source_line, import_id, reading_key)"
                        " VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?, ?)",
                        (audit_id, *values, import_id, key),
                    )
                except sqlite3.IntegrityError as exc:
                    raise _row_error(row, f"rejected by the history database: {exc}",
                                     "value") from None
                added += cur.rowcount
            conn.execute("UPDATE imports SET rows_added = ? WHERE id = ?", (added, import_id))
            if removed:
                conn.execute("DELETE FROM audits WHERE id NOT IN"
                             " (SELECT DISTINCT audit_id FROM readings)")
            conn.execute("COMMIT")
        except BaseException:
            conn.execute("ROLLBACK")
            raise
    finally:
        conn.close()
    return ImportSummary(source_file, len(readings), added, len(readings) - added, False,
                         removed)


def record_lamp_install(db_path: str | PathLike, enclosure: str, lamp: str, installed_on,
                        daily_hours: float, *, lamp_model: str = "", note: str = "") -> bool:
    """Record that a lamp was installed (or replaced) in an enclosure; idempotent.

    A replacement is a new install of the same ``lamp`` id with a later date; the earlier
    install then ends on that date.

    Parameters
    ----------
    db_path : str or PathLike
        The site's history database.
    enclosure, lamp : str
        Identifiers as used in the site and in the readings.
    installed_on : date-like
        Day the lamp went in.
    daily_hours : float
        Hours the lamp is on per day [h].
    lamp_model, note : str
        Free text kept with the install.

    Returns
    -------
    bool
        True if a new install was stored, False if it was known already.
    """
    return record_lamp_installs(db_path, [dict(enclosure=enclosure, lamp=lamp,
                                               installed_on=installed_on,
                                               daily_hours=daily_hours, lamp_model=lamp_model,
                                               note=note)]) == 1


def record_lamp_installs(db_path: str | PathLike, installs) -> int:
    """Record many lamp installs in one transaction (see :func:`record_lamp_install`).

    Parameters
    ----------
    db_path : str or PathLike
        The site's history database.
    installs : iterable of dict
        Each with ``enclosure``, ``lamp``, ``installed_on``, ``daily_hours`` [h] and
        optionally ``lamp_model``, ``note``.

    Returns
    -------
    int
        Installs newly stored [-]; all or none are stored.
    """
    rows = []
    for item in installs:
        hours = float(item["daily_hours"])
        where = f"{item['enclosure']}.{item['lamp']}.daily_hours"
        if not 0 <= hours <= 24:
            raise InputError(f"daily hours must be between 0 and 24, got {hours:g}", field=where)
        rows.append((item["enclosure"], item["lamp"], _iso_date(item["installed_on"]), hours,
                     item.get("lamp_model", "") or "", item.get("note", "") or ""))
    conn = open_history(db_path)
    try:
        conn.execute("BEGIN IMMEDIATE")
        try:
            added = 0
            for row in rows:
                added += conn.execute(
                    "INSERT OR IGNORE INTO lamp_installs (enclosure, lamp, installed_on,"
                    " daily_hours, lamp_model, note) VALUES (?, ?, ?, ?, ?, ?)", row).rowcount
            conn.execute("COMMIT")
        except BaseException:
            conn.execute("ROLLBACK")
            raise
        return added
    finally:
        conn.close()


def _query(db_path: str | PathLike, sql: str, params: tuple = ()) -> pd.DataFrame:
    conn = open_history(db_path)
    try:
        return pd.read_sql_query(sql, conn, params=params)
    finally:
        conn.close()


def read_lamp_readings(db_path: str | PathLike, enclosure: str, lamp: str,
                       quantity: str | None = None) -> pd.DataFrame:
    """Return all stored readings of one lamp over time, oldest first.

    Parameters
    ----------
    db_path : str or PathLike
        The site's history database.
    enclosure, lamp : str
        Identifiers.
    quantity : str, optional
        Keep only this quantity (e.g. ``"uvi"``).

    Returns
    -------
    pandas.DataFrame
        Columns :data:`READING_COLUMNS`; ``date`` as datetime64.
    """
    sql = (f"SELECT {', '.join(READING_COLUMNS)} FROM readings WHERE enclosure = ? AND lamp = ?")
    params: tuple = (enclosure, lamp)
    if quantity is not None:
        sql += " AND quantity = ?"
        params += (quantity,)
    frame = _query(db_path, sql + " ORDER BY date, id", params)
    frame["date"] = pd.to_datetime(frame["date"])
    return frame


def read_all_readings(db_path: str | PathLike, enclosure: str | None = None) -> pd.DataFrame:
    """Return every stored reading, oldest first (columns :data:`READING_COLUMNS`).

    ``enclosure`` keeps only that enclosure's (read through the store's index, so one
    enclosure of a large collection does not read the whole history).
    """
    where, params = ("WHERE enclosure = ? ", (enclosure,)) if enclosure is not None else ("", ())
    frame = _query(db_path, f"SELECT {', '.join(READING_COLUMNS)} FROM readings "
                            f"{where}ORDER BY date, id", params)
    frame["date"] = pd.to_datetime(frame["date"])
    return frame


def read_last_audits(db_path: str | PathLike) -> pd.DataFrame:
    """Return the last audit of each enclosure.

    Returns
    -------
    pandas.DataFrame
        Columns ``enclosure``, ``date`` (datetime64), ``readings`` (count in that audit),
        ``audits`` (audits on record for the enclosure); one row per enclosure.
    """
    frame = _query(
        db_path,
        "SELECT a.enclosure, a.date, (SELECT COUNT(*) FROM readings r WHERE r.audit_id = a.id)"
        " AS readings, (SELECT COUNT(*) FROM audits b WHERE b.enclosure = a.enclosure)"
        " AS audits FROM audits a WHERE a.date = (SELECT MAX(date) FROM audits c"
        " WHERE c.enclosure = a.enclosure) ORDER BY a.enclosure",
    )
    frame["date"] = pd.to_datetime(frame["date"])
    return frame


def read_lamp_installs(db_path: str | PathLike) -> pd.DataFrame:
    """Return every lamp install with the day it ended (NaT while still in place).

    Returns
    -------
    pandas.DataFrame
        Columns ``enclosure``, ``lamp``, ``installed_on``, ``removed_on`` (datetime64),
        ``daily_hours`` [h], ``lamp_model``, ``note``.
    """
    frame = _query(
        db_path,
        "SELECT enclosure, lamp, installed_on, (SELECT MIN(n.installed_on) FROM lamp_installs n"
        " WHERE n.enclosure = i.enclosure AND n.lamp = i.lamp AND n.installed_on > i.installed_on)"
        " AS removed_on, daily_hours, lamp_model, note FROM lamp_installs i"
        " ORDER BY enclosure, lamp, installed_on",
    )
    for column in ("installed_on", "removed_on"):
        frame[column] = pd.to_datetime(frame[column])
    return frame


def lamp_hours(installed_on, daily_hours: float, date) -> float:
    """Hours a lamp has run by ``date``, from its install day and daily hours.

    Counts whole days from the install day (the install day itself not counted), times
    the daily hours. Common practice for lamp-age bookkeeping; it ignores days off.

    Parameters
    ----------
    installed_on, date : date-like
        Install day and the day asked about.
    daily_hours : float
        Hours on per day [h].

    Returns
    -------
    float
        Lamp hours [h]; 0 for dates before the install.
    """
    days = (pd.Timestamp(date).normalize() - pd.Timestamp(installed_on).normalize()).days
    return max(days, 0) * float(daily_hours)


def find_install(installs: pd.DataFrame, enclosure: str, lamp: str, date) -> pd.Series | None:
    """Return the install of ``lamp`` in place on ``date``, or None if there is none.

    ``installs`` is a table from :func:`read_lamp_installs`; the result is one of its rows.
    """
    date = pd.Timestamp(date).to_datetime64()
    installed = installs["installed_on"].to_numpy("datetime64[ns]")
    removed = installs["removed_on"].to_numpy("datetime64[ns]")
    keep = ((installs["enclosure"].to_numpy(object) == enclosure)
            & (installs["lamp"].to_numpy(object) == lamp)
            & (installed <= date) & (np.isnat(removed) | (removed > date)))
    rows = np.flatnonzero(keep)
    return None if rows.size == 0 else installs.iloc[rows[-1]]


def lamp_hours_at(db_path: str | PathLike, enclosure: str, lamp: str, date) -> float:
    """Hours the lamp in place on ``date`` had run by then [h] (NaN if no install known)."""
    install = find_install(read_lamp_installs(db_path), enclosure, lamp, date)
    if install is None:
        return math.nan
    return lamp_hours(install["installed_on"], install["daily_hours"], date)
