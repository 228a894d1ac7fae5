"""Tests of the audit history store (audit_lib.history.store)."""

import sqlite3

import numpy as np
import pandas as pd
import pytest

from audit_lib.errors import AuditError, InputError
from audit_lib.history import store as history


def make_readings(rows, source_file="audit-2024.csv"):
    """Build a readings table following the readings contract (audit_lib.site.readings)."""
    records = []
    for i, (date, enclosure, lamp, position, value) in enumerate(rows):
        records.append({
            "date": pd.Timestamp(date), "enclosure": enclosure, "lamp": lamp,
            "position": position, "x_m": np.nan, "y_m": np.nan, "z_m": np.nan,
            "distance_m": 0.30, "quantity": "uvi", "value": value, "unit": "uvi",
            "value_si": value, "meter": "uvi-meter-1", "note": "",
            "source_file": source_file, "source_line": i + 2,
        })
    return pd.DataFrame.from_records(records)


ROWS_2024 = [
    ("2024-03-01", "desert-1", "basking-bar", "basking", 4.1),
    ("2024-03-01", "desert-1", "basking-bar", "refuge", 0.4),
    ("2024-03-01", "forest-2", "tube-1", "basking", 1.8),
]


def count(db, table):
    conn = sqlite3.connect(db)
    try:
        return conn.execute(f"SELECT COUNT(*) FROM {table}").fetchone()[0]
    finally:
        conn.close()


def test_import_is_idempotent(tmp_path):
    """Re-importing the same file adds nothing (issue 5: "import is idempotent")."""
    db = tmp_path / "history.sqlite"
    first = history.import_readings(db, make_readings(ROWS_2024))
    assert (first.rows_in_input, first.rows_added, first.already_imported) == (3, 3, False)
    again = history.import_readings(db, make_readings(ROWS_2024))
    assert again.already_imported and again.rows_added == 0
    assert count(db, "readings") == 3 and count(db, "imports") == 1
    # The same readings inside another file (different line numbers) are not stored twice:
    # the natural key, not the file, identifies a reading.
    overlap = make_readings(ROWS_2024[::-1] + [("2025-03-02", "desert-1", "basking-bar",
                                                 "basking", 3.7)], "audit-2025.csv")
    third = history.import_readings(db, overlap)
    assert (third.rows_added, third.rows_already_stored) == (1, 3)
    assert count(db, "readings") == 4


def test_failing_row_rolls_back_whole_import(tmp_path):
    """A bad row leaves the database exactly as it was (issue 5: "transactional"; SQLite
    ROLLBACK semantics, sqlite.org "Transaction" documentation)."""
    db = tmp_path / "history.sqlite"
    history.import_readings(db, make_readings(ROWS_2024))
    before = history.read_all_readings(db)
    bad = make_readings([
        ("2025-03-02", "desert-1", "basking-bar", "basking", 3.7),
        ("2025-03-02", "forest-2", "tube-1", "basking", 1.6),
        ("2025-03-02", "forest-2", "tube-1", "refuge", -0.2),
    ], "audit-2025.csv")
    with pytest.raises(InputError, match=r"audit-2025\.csv:4: value: negative reading -0\.2"):
        history.import_readings(db, bad)
    pd.testing.assert_frame_equal(history.read_all_readings(db), before)
    assert count(db, "imports") == 1 and count(db, "audits") == 2
    # After fixing the row the import goes through.
    bad.loc[2, ["value", "value_si"]] = 0.2
    assert history.import_readings(db, bad).rows_added == 3


@pytest.mark.parametrize("column, value, message", [
    ("quantity", "uvx", r"audit-2024\.csv:3: quantity: unknown quantity 'uvx'"),
    ("date", None, r"audit-2024\.csv:3: date: not a date"),
    ("enclosure", "", r"audit-2024\.csv:3: enclosure: missing enclosure id"),
    ("value_si", float("inf"), r"audit-2024\.csv:3: value: not a finite number"),
])
def test_bad_row_names_file_line_and_field(tmp_path, column, value, message):
    """Every rejected row names file, line and field (issue 5, validation section)."""
    db = tmp_path / "history.sqlite"
    frame = make_readings(ROWS_2024)
    frame[column] = frame[column].astype(object)
    frame.at[1, column] = value
    with pytest.raises(InputError, match=message):
        history.import_readings(db, frame)
    assert count(db, "readings") == 0


def test_migration_from_version_1_keeps_data(tmp_path):
    """A version-1 database is migrated in place (SQLite PRAGMA user_version, sqlite.org
    "PRAGMA statements"): rows survive, v1 duplicates collapse, new imports dedupe
    against old rows."""
    db = tmp_path / "history.sqlite"
    conn = history.open_history(db, target_version=1)
    conn.execute("INSERT INTO audits (enclosure, date) VALUES ('desert-1', '2024-03-01')")
    for _ in range(2):  # version 1 had no natural key, so a double import left duplicates
        conn.execute(
            "INSERT INTO readings (audit_id, date, enclosure, lamp, position, distance_m,"
            " quantity, value, unit, value_si, meter, source_file, source_line) VALUES"
            " (1, '2024-03-01', 'desert-1', 'basking-bar', 'basking', 0.3, 'uvi', 4.1, 'uvi',"
            " 4.1, 'uvi-meter-1', 'audit-2024.csv', 2)")
    conn.close()
    assert history.schema_version(db) == 1
    conn = history.open_history(db)
    assert conn.execute("PRAGMA user_version").fetchone()[0] == history.SCHEMA_VERSION == 2
    keys = conn.execute("SELECT reading_key FROM readings").fetchall()
    conn.close()
    assert len(keys) == 1 and keys[0][0]
    summary = history.import_readings(db, make_readings(ROWS_2024))
    assert summary.rows_added == 2  # the basking reading was already there


def test_migrations_are_applied_in_order_from_empty(tmp_path):
    """Every migration runs once, in order (PRAGMA user_version counts them)."""
    db = tmp_path / "history.sqlite"
    for version in range(history.SCHEMA_VERSION + 1):
        history.open_history(db, target_version=version).close()
        assert history.schema_version(db) == version


def test_newer_schema_is_refused(tmp_path):
    """A database from a newer library is not touched (common practice for versioned
    schemas)."""
    db = tmp_path / "history.sqlite"
    conn = sqlite3.connect(db)
    conn.execute("PRAGMA user_version = 99")
    conn.close()
    with pytest.raises(AuditError, match="schema version 99, newer than"):
        history.open_history(db)


def test_queries_lamp_over_time_and_last_audit(tmp_path):
    """Readings of a lamp come back oldest first; the last audit per enclosure is the
    latest date (issue 5, "Queries")."""
    db = tmp_path / "history.sqlite"
    history.import_readings(db, make_readings(ROWS_2024))
    history.import_readings(db, make_readings(
        [("2025-03-02", "desert-1", "basking-bar", "basking", 3.7),
         ("2023-03-03", "desert-1", "basking-bar", "basking", 4.6)], "mixed.csv"))
    lamp = history.read_lamp_readings(db, "desert-1", "basking-bar", quantity="uvi")
    basking = lamp[lamp["position"] == "basking"]
    assert basking["value_si"].tolist() == [4.6, 4.1, 3.7]
    assert basking["date"].is_monotonic_increasing
    last = history.read_last_audits(db).set_index("enclosure")
    assert last.loc["desert-1", "date"] == pd.Timestamp("2025-03-02")
    assert last.loc["desert-1", "audits"] == 3 and last.loc["desert-1", "readings"] == 1
    assert last.loc["forest-2", "date"] == pd.Timestamp("2024-03-01")


def test_lamp_hours_follow_installs_and_replacements(tmp_path):
    """Lamp hours = whole days since install x daily hours; 2024 is a leap year, so
    1 January to 1 July 2024 is 182 days (Gregorian calendar, as Python's datetime)."""
    db = tmp_path / "history.sqlite"
    assert history.record_lamp_install(db, "desert-1", "basking-bar", "2024-01-01", 12)
    assert not history.record_lamp_install(db, "desert-1", "basking-bar", "2024-01-01", 12)
    history.record_lamp_install(db, "desert-1", "basking-bar", "2025-01-01", 10,
                                lamp_model="UVB LED bar 12x305nm")
    assert history.lamp_hours_at(db, "desert-1", "basking-bar", "2024-07-01") == 182 * 12
    assert history.lamp_hours_at(db, "desert-1", "basking-bar", "2025-01-11") == 10 * 10
    assert np.isnan(history.lamp_hours_at(db, "desert-1", "basking-bar", "2023-06-01"))
    installs = history.read_lamp_installs(db)
    assert installs["removed_on"].iloc[0] == pd.Timestamp("2025-01-01")
    assert pd.isna(installs["removed_on"].iloc[1])
    with pytest.raises(InputError, match="daily hours must be between 0 and 24"):
        history.record_lamp_install(db, "desert-1", "basking-bar", "2026-01-01", 25)


def test_failed_migration_leaves_old_schema(tmp_path, monkeypatch):
    """A migration that fails part-way is rolled back in full (SQLite transactional DDL,
    sqlite.org "Transaction"): the version and tables stay as they were."""
    db = tmp_path / "history.sqlite"
    history.open_history(db, target_version=1).close()

    def broken(conn):
        conn.execute("CREATE TABLE imports (id INTEGER PRIMARY KEY)")
        raise RuntimeError("disk full")

    monkeypatch.setattr(history, "MIGRATIONS", (history.MIGRATIONS[0], broken))
    with pytest.raises(RuntimeError, match="disk full"):
        history.open_history(db)
    assert history.schema_version(db) == 1
    conn = sqlite3.connect(db)
    tables = {r[0] for r in conn.execute("SELECT name FROM sqlite_master WHERE type='table'")}
    conn.close()
    assert "imports" not in tables


def test_replace_swaps_a_corrected_file(tmp_path):
    """A corrected file imported with replace=True takes the place of its old version in
    one transaction; without it the changed value is stored beside the old one (issue 5:
    idempotent import; the natural key decides what is "the same reading")."""
    db = tmp_path / "history.sqlite"
    history.import_readings(db, make_readings(ROWS_2024), source_file="audit-2024.csv")
    fixed = make_readings(ROWS_2024[:2] + [("2024-03-01", "forest-2", "tube-1", "basking", 1.9)])
    plain = tmp_path / "plain.sqlite"
    history.import_readings(plain, make_readings(ROWS_2024), source_file="audit-2024.csv")
    assert history.import_readings(plain, fixed, source_file="audit-2024.csv").rows_added == 1
    assert count(plain, "readings") == 4
    summary = history.import_readings(db, fixed, source_file="audit-2024.csv", replace=True)
    assert (summary.rows_removed, summary.rows_added) == (3, 3)
    tube = history.read_lamp_readings(db, "forest-2", "tube-1")
    assert tube["value_si"].tolist() == [1.9]
    assert count(db, "imports") == 1
    # the replaced version's content is no longer "already imported"
    again = history.import_readings(db, make_readings(ROWS_2024), source_file="audit-2024.csv",
                                    replace=True)
    assert not again.already_imported and again.rows_removed == 3
