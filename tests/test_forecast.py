"""Tests of the site history glue and the import/forecast commands (audit_lib.pipeline.forecast)."""

import math
from types import SimpleNamespace

import pandas as pd
import pytest

from audit_lib.run import cli

from audit_lib.pipeline import forecast

from audit_lib.history import store as history
from audit_lib.site.folder import new_site

K_PER_H = 5e-5  # synthetic exponential decay rate [h-1]
INSTALLED = pd.Timestamp("2025-09-01")  # install day of tube-1 in the starter site
DAYS = (1, 136, 273, 426)


@pytest.fixture
def site(tmp_path):
    """The starter site of ``light-audit new-site`` with four audits of synthetic decay."""
    root = tmp_path / "site"
    new_site(root)
    lines = ["date,enclosure,lamp,position,x_m,y_m,z_m,distance_m,quantity,value,unit,meter,note"]
    for d in DAYS:
        date = (INSTALLED + pd.Timedelta(days=d)).date().isoformat()
        value = 4.0 * math.exp(-K_PER_H * 12 * d)
        lines.append(f"{date},viv-1,tube-1,basking,,,,,uvi,{value:.5f},UVI,uvi-meter,")
        lines.append(f"{date},viv-1,tube-1,hide,,,,,uvi,0.3,UVI,uvi-meter,")
    (root / "readings" / "first-audit.csv").write_text("\n".join(lines) + "\n")
    return root


def test_import_and_forecast_commands(site, capsys):
    """`light-audit import` is idempotent and `forecast` prints the schedule; the forecast
    day follows from y = 4 exp(-k h) = 2.9 (zone 3 lower basking UVI in the shipped zone
    table): h = ln(4 / 2.9) / k (algebra), at 12 h per day from the install day."""
    assert cli.main(["import", str(site)]) == 0
    assert "8 readings, 8 added" in capsys.readouterr().out
    assert cli.main(["import", str(site)]) == 0
    assert "already imported" in capsys.readouterr().out
    assert (site / "history.sqlite").is_file()

    assert cli.main(["forecast", str(site), "--date", "2026-12-01",
                     "--csv", str(site / "schedule.csv")]) == 0
    out = capsys.readouterr().out
    expected = INSTALLED + pd.Timedelta(days=math.ceil(math.log(4 / 2.9) / K_PER_H / 12))
    row = out.splitlines()[1]
    assert row.startswith("viv-1") and "exponential" in row and "due soon" in row
    table = pd.read_csv(site / "schedule.csv", parse_dates=["replace_by"])
    assert abs((table.loc[0, "replace_by"] - expected).days) <= 1
    assert table.loc[0, "target_min"] == 2.9
    assert table.loc[0, "loss_per_1000h_pct"] == pytest.approx(
        100 * (1 - math.exp(-1000 * K_PER_H)), rel=1e-3)

    assert cli.main(["forecast", str(site), "--date", "2026-12-01", "--target-uvi", "1.0"]) == 0
    assert "ok" in capsys.readouterr().out.splitlines()[1]


def test_forecast_without_import_brings_the_history_up_to_date(site, capsys):
    """The history is derived from the readings folder: `forecast` on a site never imported
    syncs it itself, and a second run adds nothing (idempotent; issue 14)."""
    assert cli.main(["forecast", str(site)]) == 0
    assert "viv-1" in capsys.readouterr().out
    stored = history.read_all_readings(site / "history.sqlite")
    assert len(stored) == 2 * len(DAYS)
    assert cli.main(["forecast", str(site)]) == 0
    assert len(history.read_all_readings(site / "history.sqlite")) == 2 * len(DAYS)


def test_invalid_site_writes_nothing(site, capsys):
    """An invalid site is not imported: nothing is written (issue 5, validation)."""
    path = site / "readings" / "first-audit.csv"
    path.write_text(path.read_text() + "2025-09-10,no-such-enclosure,,,,,,,uvi,1.0,UVI,,\n")
    assert cli.main(["import", str(site)]) == 2
    assert "no-such-enclosure" in capsys.readouterr().err
    assert not (site / "history.sqlite").exists()


def test_lamp_installs_recorded_from_site(site):
    """Install day and schedule hours (08:00-20:00 = 12 h, clock arithmetic) reach the
    store, so lamp hours on 2026-01-15 are 136 days x 12 h."""
    forecast.import_site_readings(site)
    db = site / "history.sqlite"
    assert history.lamp_hours_at(db, "viv-1", "tube-1", "2026-01-15") == 136 * 12


def test_schedule_daily_hours():
    """On-off spans by clock arithmetic, past midnight and averaged over months; natural
    day length averages about 12 h over a year (common practice)."""
    fixed = SimpleNamespace(kind="fixed", on="08:00", off="20:00", periods=[])
    assert forecast.schedule_daily_hours(fixed) == 12.0
    night = SimpleNamespace(kind="fixed", on="20:00", off="06:30", periods=[])
    assert forecast.schedule_daily_hours(night) == 10.5
    summer = SimpleNamespace(months=[5, 6, 7, 8, 9, 10], on="07:00", off="21:00")
    seasonal = SimpleNamespace(kind="fixed", on="09:00", off="19:00", periods=[summer])
    assert forecast.schedule_daily_hours(seasonal) == pytest.approx((6 * 14 + 6 * 10) / 12)
    natural = SimpleNamespace(kind="natural", on=None, off=None, periods=[])
    assert forecast.schedule_daily_hours(natural) == forecast.NATURAL_DAY_HOURS


def test_explicit_file_is_checked_against_the_site(site, tmp_path, capsys):
    """A readings file given on the command line is checked like the site's own (issue 5,
    validation: readings for an enclosure that does not exist); nothing is written."""
    extra = tmp_path / "extra.csv"
    extra.write_text("date,enclosure,lamp,position,quantity,value,unit\n"
                     "2026-02-01,viv-9,tube-1,basking,uvi,2.0,UVI\n")
    assert cli.main(["import", str(site), str(extra)]) == 2
    assert "viv-9" in capsys.readouterr().err
    assert not (site / "history.sqlite").exists()
    extra.write_text("date,enclosure,lamp,position,quantity,value,unit\n"
                     "2026-02-01,viv-1,tube-1,basking,uvi,2.0,UVI\n")
    assert cli.main(["import", str(site), str(extra)]) == 0
    assert "extra.csv: 1 readings, 1 added" in capsys.readouterr().out


def test_import_replace_flag(site, capsys):
    """`light-audit import --replace` swaps a corrected file for its earlier import
    (audit_lib.history.store.import_readings, replace=True)."""
    assert cli.main(["import", str(site)]) == 0
    path = site / "readings" / "first-audit.csv"
    path.write_text(path.read_text().replace(",0.3,UVI", ",0.4,UVI"))
    capsys.readouterr()
    assert cli.main(["import", str(site), "--replace"]) == 0
    assert "8 removed" in capsys.readouterr().out.replace("of the earlier import ", "")
    hide = history.read_lamp_readings(site / "history.sqlite", "viv-1", "tube-1")
    assert sorted(set(hide.loc[hide["position"] == "hide", "value_si"])) == [0.4]


def test_forecast_uses_mismatch_corrected_readings(site, capsys):
    """With a meter response in the site, the fit uses corrected = F* x raw readings
    (CIE S 017:2020 17-25-115), marked with '*'; --raw fits the readings as taken."""
    import numpy as np

    from audit_lib.pipeline.meter_corrections import site_meter_corrections
    from audit_lib.site.folder import load_site

    wl = np.arange(250, 401)
    rows = "\n".join(f"{w},{1.0 if w >= 280 else 0.0}" for w in wl)
    (site / "spectra" / "uvi-meter-response.csv").write_text(
        "wavelength_nm,relative_response\n" + rows + "\n")
    toml = site / "site.toml"
    toml.write_text(toml.read_text().replace('# spectral_response = "spectra/',
                                             'spectral_response = "spectra/'))
    factor = site_meter_corrections(load_site(site)).loc[0, "correction_factor"]
    assert abs(factor - 1) > 0.05
    assert cli.main(["import", str(site)]) == 0
    for flag, scale, mark in (([], factor, "*"), (["--raw"], 1.0, "")):
        out_csv = site / "schedule.csv"
        assert cli.main(["forecast", str(site), "--date", "2026-12-01", "--csv", str(out_csv),
                         *flag]) == 0
        out = capsys.readouterr().out
        table = pd.read_csv(out_csv)
        raw_last = 4.0 * math.exp(-K_PER_H * 12 * DAYS[-1])
        assert table.loc[0, "last_value"] == pytest.approx(scale * raw_last, rel=1e-4)
        assert bool(table.loc[0, "meter_corrected"]) == (mark == "*")
        assert (f"{scale * raw_last:.2f}*" in out) == (mark == "*")
