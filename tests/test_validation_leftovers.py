"""Leftovers of the validation work (issue 14): placeholders as report notes, one date parser
for the audit day, ``forecast`` loading its site once, one history database path.

External reference: ISO 8601 calendar dates (``YYYY-MM-DD``); the rest pins the project's
own contracts ("one source for every number", validation up front).
"""

from __future__ import annotations

import warnings

import pytest

from audit_lib.errors import InputError
from audit_lib.history import store
from audit_lib.history.sync import site_history_path
from audit_lib.pipeline import forecast
from audit_lib.pipeline.audit import audit_enclosure, choose_audit_date
from audit_lib.run import cli
from audit_lib.site import folder
from audit_lib.site.folder import load_site, new_site

HEADER = "date,enclosure,lamp,position,x_m,y_m,z_m,distance_m,quantity,value,unit,meter,note\n"


@pytest.fixture
def starter(tmp_path):
    """An unedited ``new-site`` folder (invented placeholders)."""
    root = tmp_path / "site"
    new_site(root)
    return root


def _quiet_load(root):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return load_site(root)


def test_report_notes_show_the_sites_placeholders(starter):
    """A report made from an unedited starter says so in its notes (one per placeholder,
    naming the key, no machine paths); an edited site has none of them."""
    site = _quiet_load(starter)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        audit = audit_enclosure(site, "viv-1", with_failures=False)
    notes = [n for n in audit.notes if n.startswith("Site not finished")]
    assert any("site.auditor: still the starter's placeholder 'Your name'" in n for n in notes)
    assert any("readings/first-audit.csv" in n for n in notes)
    assert not any(str(starter) in n for n in notes)
    toml = starter / "site.toml"
    toml.write_text(toml.read_text().replace('"Your name"', '"A. Keeper"'))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        audit = audit_enclosure(_quiet_load(starter), "viv-1", with_failures=False)
    assert not any("site.auditor" in n for n in audit.notes)


def test_audit_day_uses_the_shared_date_parser(starter):
    """Day-first dates are refused, not guessed (ISO 8601 only), with the shared parser's
    message and hint."""
    site = _quiet_load(starter)
    with pytest.raises(InputError, match=r"audit_date: '15/01/2026' is not a date in "
                                         r"YYYY-MM-DD form \(hint: .*ambiguous"):
        choose_audit_date(site, "15/01/2026")
    assert str(choose_audit_date(site, "2026-01-15 00:00:00")) == "2026-01-15"


def test_forecast_loads_the_site_once(starter, monkeypatch, capsys):
    """``light-audit forecast`` validates the site folder once, then syncs its history and
    forecasts from the loaded site."""
    (starter / "readings" / "first-audit.csv").write_text(
        HEADER + "2026-01-15,viv-1,tube-1,basking,,,,,uvi,2.2,UVI,uvi-meter,\n")
    loads = []
    real = folder._load

    def counting(*args, **kwargs):
        loads.append(args[0])
        return real(*args, **kwargs)

    monkeypatch.setattr(folder, "_load", counting)
    assert cli.main(["forecast", str(starter), "--date", "2026-02-01"]) == 0
    assert len(loads) == 1
    assert "viv-1" in capsys.readouterr().out
    assert len(store.read_all_readings(starter / "history.sqlite")) == 1


def test_one_history_path(starter):
    """One function names a site's history database, for a loaded site or its folder; the
    forecast module keeps no second one."""
    assert site_history_path(starter) == site_history_path(_quiet_load(starter)) \
        == starter / "history.sqlite"
    assert not hasattr(forecast, "default_db_path")
