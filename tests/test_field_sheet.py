"""The audit day in the field: expected readings, the printable sheet and the readings template.

External references: JCGM 100:2008 (the GUM), 5.1.2 (uncorrelated standard uncertainties
combine in quadrature) and 6.2 (coverage factor k = 2, about 95 %); lamp hours as whole days
since install times daily hours (common practice for lamp-age bookkeeping); the consistency
tests hold the project's rule "one source for every number": the sheet's figure at the
audit day is the audit's own modelled value, and its decay is the one forecast's fit.
"""

from __future__ import annotations

import datetime as dt
import math
import shutil
import warnings
from pathlib import Path

import pandas as pd
import pytest

from audit_lib.errors import InputError
from audit_lib.pipeline import field
from audit_lib.pipeline.audit import audit_enclosure
from audit_lib.pipeline.forecast import lamp_forecasts, site_lamp_installs
from audit_lib.report.field_sheet import FIELD_CAUTIONS, field_sheet_html
from audit_lib.run import cli, pdf
from audit_lib.site.folder import load_site

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
AUDIT_DAY = dt.date(2026, 3, 10)  # the demo's last audit
LATER = dt.date(2026, 11, 20)  # a later day, in the past for any run of the tests


def _load(path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return load_site(path)


@pytest.fixture(scope="module")
def demo():
    return _load(DEMO)


@pytest.fixture(scope="module")
def sheets(demo):
    """The demo's sheet on its last audit day and on a later day."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return {day: field.expected_readings(demo, day) for day in (AUDIT_DAY, LATER)}


def _part(sheet, enclosure_id):
    return next(p for p in sheet.enclosures if p.enclosure_id == enclosure_id)


@pytest.mark.parametrize("enclosure_id", ["rh-01", "rh-08", "rh-09"])
def test_expected_on_the_audit_day_is_the_audits_modelled_value(demo, sheets, enclosure_id):
    """One source: at every position the audit models, the sheet's expected UV Index on the
    audit day equals the audit's calibrated ``modelled_uvi`` (one lamp, two lamps, an LED
    panel). The lamp check below each lamp is the lamp's own share, all other lamps off."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        audit = audit_enclosure(demo, enclosure_id, audit_date=AUDIT_DAY, with_failures=False)
    part = _part(sheets[AUDIT_DAY], enclosure_id)
    assert part.audit_date == AUDIT_DAY
    assert part.calibration == audit.calibration
    merged = audit.points.merge(part.positions, on="position", suffixes=("", "_sheet"))
    assert len(merged) == len(audit.points) >= 3
    assert merged["expected_uvi"].to_numpy() == pytest.approx(
        merged["modelled_uvi"].to_numpy(), rel=1e-9)
    assert merged[["x_m_sheet", "y_m_sheet", "z_m_sheet"]].to_numpy() == pytest.approx(
        merged[["x_m", "y_m", "z_m"]].to_numpy())
    checks = part.positions[part.positions["kind"] == "lamp check"]
    assert sorted(checks["lamp"]) == sorted(lamp.id for lamp in demo.enclosure(enclosure_id).lamps)
    assert (checks["distance_m"] == field.LAMP_CHECK_DISTANCE_M).all()


def test_later_day_decays_as_the_forecast_says(demo, sheets):
    """A later day scales every value by the forecast's fitted output at the day's lamp hours
    over the output at the audit day's (lamp hours: whole days since install x 10 h a day on
    the seasonal circuit averaged over the year; common practice)."""
    enclosure_id, lamp_id = "rh-01", "uvb-bar"
    installs = site_lamp_installs(demo, enclosure_id)
    _, decays = lamp_forecasts(demo, demo.readings_of(enclosure_id), installs, today=LATER)
    (decay,) = [d for d in decays if d.lamp == lamp_id]
    assert decay.fit.state == "fitted"
    installed = pd.Timestamp(2023, 11, 6)
    hours_per_day = (6 * 13 + 6 * 10) / 12  # 07:00-20:00 April-September, else 08:30-18:30
    assert decay.daily_hours == pytest.approx(hours_per_day)
    then = (pd.Timestamp(AUDIT_DAY) - installed).days * hours_per_day
    now = (pd.Timestamp(LATER) - installed).days * hours_per_day
    ratio = float(decay.fit.best_fit.predict(now) / decay.fit.best_fit.predict(then))
    assert 0.8 < ratio < 1.0
    before, after = _part(sheets[AUDIT_DAY], enclosure_id), _part(sheets[LATER], enclosure_id)
    (lamp,) = after.lamps.itertuples(index=False)
    assert lamp.output_basis == "decay fit"
    assert lamp.output_ratio == pytest.approx(ratio, rel=1e-9)
    assert lamp.lamp_hours == pytest.approx(now)
    assert after.positions["expected_uvi"].to_numpy() == pytest.approx(
        ratio * before.positions["expected_uvi"].to_numpy(), rel=1e-9)


def test_band_combines_meter_and_model_in_quadrature(sheets):
    """Band half-width k * sqrt(u_meter^2 + u_model^2) with k = 2 (GUM 5.1.2 and 6.2), at
    least one display step; the spread is the last audit's when two or more positions read
    at least 0.5, else the project default, and each says which."""
    parts = sheets[AUDIT_DAY].enclosures
    assert {p.model_spread_basis for p in parts} == {"last audit", "project default"}
    for part in parts:
        if part.model_spread_basis == "project default":
            assert part.model_spread == field.DEFAULT_MODEL_SPREAD
        assert part.tolerance == pytest.approx(
            2.0 * math.sqrt(field.METER_UNCERTAINTY ** 2 + part.model_spread ** 2))
        rows = part.positions
        half = (rows["expected_uvi"] * part.tolerance).clip(lower=field.DISPLAY_STEP_UVI)
        assert rows["high_uvi"].to_numpy() == pytest.approx(rows["expected_uvi"] + half)
        assert rows["low_uvi"].to_numpy() == pytest.approx(
            (rows["expected_uvi"] - half).clip(lower=0.0))
    # the demo's readings were synthesised from its lamp models: every reading of the last
    # audit lies inside its band
    for part in parts:
        seen = part.positions.dropna(subset=["last_uvi"])
        assert ((seen["last_uvi"] >= seen["low_uvi"] - 0.05)
                & (seen["last_uvi"] <= seen["high_uvi"] + 0.05)).all(), part.enclosure_id


def test_lamp_installed_after_the_audit_is_modelled_at_rated_output(tmp_path):
    """A lamp replaced since the last audit: the audit's factor measured the old lamp, so the
    new lamp's share is the model as new (calibration 1), not the old lamp decayed."""
    site_dir = tmp_path / "site"
    shutil.copytree(DEMO, site_dir)
    toml = site_dir / "site.toml"
    text = toml.read_text(encoding="utf-8")
    toml.write_text(text.replace("installed = 2023-11-06\n",
                                 "installed = 2026-06-01\nearlier_installs = [2023-11-06]\n", 1),
                    encoding="utf-8")
    site = _load(site_dir)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sheet = field.expected_readings(site, LATER)
        audit = audit_enclosure(site, "rh-01", audit_date=AUDIT_DAY, with_failures=False)
    part = _part(sheet, "rh-01")
    assert part.lamps["output_basis"].tolist() == ["installed after the last audit"]
    merged = audit.points.merge(part.positions, on="position")
    assert merged["expected_uvi"].to_numpy() == pytest.approx(merged["uvi"].to_numpy(),
                                                              rel=1e-9)


def test_sheet_page_is_self_contained_printable_and_cautious(sheets):
    """The page carries the cautions (UV eye and skin protection, mains, heat, veterinary
    advice and local codes), A4 print CSS, one block per enclosure, one write-in cell per
    position, and fetches nothing."""
    sheet = sheets[LATER]
    page = field_sheet_html(sheet)
    assert "@page { size: A4" in page
    assert "UV-blocking eye protection" in page and "mains electrical" in page
    for text in FIELD_CAUTIONS:
        assert text.replace("'", "&#x27;") in page
    assert page.count("<section class='enclosure'>") == len(sheet.enclosures) == 12
    rows = sum(len(p.positions) for p in sheet.enclosures)
    assert page.count("<td class='write'>") == rows
    assert "<script" not in page and "http://" not in page and "https://" not in page


def test_template_rows_and_columns(sheets):
    """One UV Index row per enclosure and position, the readings folder's long-format
    columns, ``value`` empty; lamp checks carry their point and distance."""
    sheet = sheets[LATER]
    table = field.readings_template(sheet)
    assert list(table.columns) == ["date", "enclosure", "lamp", "position", "x_m", "y_m",
                                   "z_m", "distance_m", "quantity", "value", "unit", "meter",
                                   "note"]
    assert len(table) == sum(len(p.positions) for p in sheet.enclosures)
    assert table["value"].isna().all()
    assert set(table["quantity"]) == {"uvi"} and set(table["meter"]) == {"uvi-meter-a"}
    checks = table[table["position"] == ""]
    assert checks["distance_m"].eq(0.3).all() and checks["z_m"].notna().all()


def _fill(csv_path: Path, sheet) -> None:
    """Type the expected values (to the meter's 0.1) into the template's value column."""
    lines = csv_path.read_text(encoding="utf-8").splitlines()
    comments = [line for line in lines if line.startswith("#")]
    table = pd.read_csv(csv_path, comment="#", keep_default_na=False, dtype=str)
    expected = [round(v, 1) for part in sheet.enclosures
                for v in part.positions["expected_uvi"]]
    table["value"] = [f"{v:.1f}" for v in expected]
    csv_path.write_text("\n".join(comments) + "\n" + table.to_csv(index=False),
                        encoding="utf-8")


@pytest.fixture
def filled_site(tmp_path, capsys):
    """A copy of the demo site with a field-sheet template filled in and copied in."""
    site_dir = tmp_path / "site"
    shutil.copytree(DEMO, site_dir, ignore=shutil.ignore_patterns("history.sqlite"))
    out = tmp_path / "sheet"
    assert cli.main(["field-sheet", str(site_dir), "--out", str(out),
                     "--date", LATER.isoformat()]) == 0
    written = capsys.readouterr().out.split()
    assert [Path(p).name for p in written] == [f"field-sheet-{LATER}.html",
                                               f"readings-template-{LATER}.csv"]
    template = out / f"readings-template-{LATER}.csv"
    return site_dir, template


def test_unfilled_template_in_the_readings_folder_is_refused(filled_site, capsys):
    """The template is written outside ``readings/``; copied in unfilled, ``check`` names
    every empty value (message pinned) instead of auditing with holes."""
    site_dir, template = filled_site
    shutil.copy(template, site_dir / "readings")
    assert cli.main(["check", str(site_dir)]) == 2
    err = capsys.readouterr().err
    assert f"readings-template-{LATER}.csv:4: value: is empty (hint: give the reading)" in err


def test_filled_template_passes_check_and_feeds_the_audit(filled_site, capsys):
    """Filled in and copied into ``readings/``, the template passes ``check``, and the audit
    of that day calibrates to it: every named position is read, and the model's factor
    moves by the lamps' decay since the last audit."""
    site_dir, template = filled_site
    sheet = field.expected_readings(_load(site_dir), LATER)
    _fill(template, sheet)
    shutil.copy(template, site_dir / "readings")
    assert cli.main(["check", str(site_dir)]) == 0
    assert "readings-template" not in capsys.readouterr().err  # no warning about it
    site = _load(site_dir)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        audit = audit_enclosure(site, "rh-01", audit_date=LATER, with_failures=False)
    assert audit.points["measured_uvi"].notna().all()
    ratio = _part(sheet, "rh-01").lamps["output_ratio"].iloc[0]
    assert audit.calibration == pytest.approx(_part(sheet, "rh-01").calibration * ratio,
                                              rel=0.05)


@pytest.mark.slow
def test_filled_template_feeds_run(filled_site, capsys):
    """End to end: ``light-audit run`` on the day of the filled template audits from it."""
    import json

    site_dir, template = filled_site
    _fill(template, field.expected_readings(_load(site_dir), LATER))
    shutil.copy(template, site_dir / "readings")
    out = site_dir.parent / "out"
    assert cli.main(["run", str(site_dir), "--out", str(out), "--only", "rh-01",
                     "--audit-date", LATER.isoformat(), "--quiet", "--jobs", "1"]) == 0
    results = json.loads((out / "results.json").read_text())
    assert LATER.isoformat() in json.dumps(results)


def test_pdf_without_chromium_exits_2_before_any_work(tmp_path, monkeypatch, capsys):
    """``--pdf`` with no Chromium: exit 2, one message with a hint, nothing written."""
    monkeypatch.setattr(pdf.shutil, "which", lambda name: None)
    out = tmp_path / "out"
    assert cli.main(["field-sheet", str(DEMO), "--out", str(out), "--pdf"]) == 2
    assert "Chromium is not installed" in capsys.readouterr().err
    assert not out.exists()
    with pytest.raises(InputError, match=r"--pdf: cannot write a PDF.*apt-get install chromium"):
        pdf.find_chromium()


def test_bad_date_exits_2(tmp_path, capsys):
    """The shared date parser refuses a day-first date before any work (exit 2)."""
    assert cli.main(["field-sheet", str(DEMO), "--out", str(tmp_path / "o"),
                     "--date", "20/11/2026"]) == 2
    assert "YYYY-MM-DD" in capsys.readouterr().err
    assert not (tmp_path / "o").exists()


@pytest.mark.browser
@pytest.mark.skipif(shutil.which("chromium") is None, reason="Debian's chromium is not installed")
def test_pdf_is_printed_by_chromium(sheets, tmp_path):
    """Headless Chromium prints the page to a PDF (the file starts with the PDF magic)."""
    html = tmp_path / "sheet.html"
    html.write_text(field_sheet_html(sheets[LATER]), encoding="utf-8")
    written = pdf.html_to_pdf(html, tmp_path / "sheet.pdf")
    assert written.read_bytes()[:5] == b"%PDF-"
