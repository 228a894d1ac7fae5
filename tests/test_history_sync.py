"""The history database as derived state of the readings folder (audit_lib.history.sync)."""

from __future__ import annotations

from pathlib import Path

import pytest

from audit_lib.errors import AuditError, AuditWarning
from audit_lib.history import store
from audit_lib.history.sync import site_history_path, sync_site_history
from audit_lib.run import batch, cli
from audit_lib.site.folder import load_site, new_site

ROWS = ("2026-01-15,viv-1,tube-1,basking,,,,,uvi,{basking},UVI,uvi-meter,\n"
        "2026-01-15,viv-1,tube-1,hide,,,,,uvi,0.3,UVI,uvi-meter,\n")
HEADER = "date,enclosure,lamp,position,x_m,y_m,z_m,distance_m,quantity,value,unit,meter,note\n"


@pytest.fixture
def root(tmp_path) -> Path:
    """An invented one-enclosure site (the starter) with one readings file."""
    site = tmp_path / "site"
    new_site(site)
    (site / "readings" / "first-audit.csv").write_text(HEADER + ROWS.format(basking=2.2))
    return site


def _values(db: Path) -> list[float]:
    return sorted(store.read_all_readings(db)["value"].tolist())


def test_sync_is_idempotent(root):
    """Syncing twice stores each reading once (content hash of the import; SQLite UNIQUE)."""
    first = sync_site_history(load_site(root))
    assert [(s.source_file, s.rows_added) for s in first] == [("first-audit.csv", 2)]
    again = sync_site_history(load_site(root))
    assert [s.already_imported for s in again] == [True]
    assert _values(site_history_path(load_site(root))) == [0.3, 2.2]


def test_import_then_sync_adds_nothing(root, capsys):
    """`import` and the sync read the folder the same way: the sync finds it imported."""
    assert cli.main(["import", str(root)]) == 0
    (summary,) = sync_site_history(load_site(root))
    assert summary.already_imported


def test_corrected_file_replaces_its_earlier_import(root):
    """The database follows the folder: a corrected value replaces the old one instead of
    standing beside it; a new file adds its readings."""
    sync_site_history(load_site(root))
    (root / "readings" / "first-audit.csv").write_text(HEADER + ROWS.format(basking=2.4))
    (root / "readings" / "second-audit.csv").write_text(
        HEADER + "2026-02-15,viv-1,tube-1,basking,,,,,uvi,2.3,UVI,uvi-meter,\n")
    sync_site_history(load_site(root))
    assert _values(root / "history.sqlite") == [0.3, 2.3, 2.4]


def test_file_from_elsewhere_is_kept(root, tmp_path):
    """`import` stays for files kept elsewhere; a sync never deletes their readings."""
    other = tmp_path / "archive-2025.csv"
    other.write_text(HEADER + "2025-11-15,viv-1,tube-1,basking,,,,,uvi,2.6,UVI,uvi-meter,\n")
    assert cli.main(["import", str(root), str(other)]) == 0
    sync_site_history(load_site(root))
    assert _values(root / "history.sqlite") == [0.3, 2.2, 2.6]


def test_site_without_readings_gets_an_empty_database(root):
    """A new site has a history from the start (so `forecast` never asks for `import`)."""
    (root / "readings" / "first-audit.csv").unlink()
    assert sync_site_history(load_site(root)) == []
    assert store.schema_version(root / "history.sqlite") == store.SCHEMA_VERSION


def test_unwritable_database_is_an_audit_error(root, tmp_path):
    """A database that cannot be opened for writing (here a folder in its place, as a
    read-only site folder would do) is an AuditError naming it (sqlite3 errors wrapped)."""
    blocked = tmp_path / "blocked.sqlite"
    blocked.mkdir()
    with pytest.raises(AuditError, match=r"blocked\.sqlite: cannot update the history database"):
        sync_site_history(load_site(root), blocked)


class _NoPool:
    def shutdown(self, **_):
        pass


def test_run_brings_the_history_up_to_date(root, tmp_path, monkeypatch):
    """`run` syncs the history before it audits (the workbooks themselves are left out
    here: no pool, no kernels)."""
    monkeypatch.setattr(batch, "_start_pool", lambda *a: _NoPool())
    monkeypatch.setattr(batch, "_execute", lambda *a: [])
    batch.run_batch(root, tmp_path / "out", progress=False)
    assert _values(root / "history.sqlite") == [0.3, 2.2]


def test_run_on_an_unwritable_history_warns_and_goes_on(root, tmp_path, monkeypatch):
    """The audit does not need the history: a sync failure is a warning, not a failure."""
    def refuse(site):
        raise AuditError("history.sqlite: cannot update the history database: read-only")

    monkeypatch.setattr(batch, "sync_site_history", refuse)
    monkeypatch.setattr(batch, "_start_pool", lambda *a: _NoPool())
    monkeypatch.setattr(batch, "_execute", lambda *a: [])
    with pytest.warns(AuditWarning, match=r"cannot update the history database: read-only"):
        batch.run_batch(root, tmp_path / "out", progress=False)
    assert (tmp_path / "out" / "results.json").is_file()


def test_scenario_run_leaves_the_history_alone(monkeypatch, tmp_path):
    """A what-if scenario is audited from a copy; the copy gets no history of its own."""
    seen = {}
    monkeypatch.setattr(batch, "write_scenario_site", lambda *a: (tmp_path, "viv-1"))
    monkeypatch.setattr(batch, "run_batch", lambda *a, **kw: seen.update(kw))
    batch.run_scenario(tmp_path, "lower-lamp", tmp_path / "out")
    assert seen["sync_history"] is False
