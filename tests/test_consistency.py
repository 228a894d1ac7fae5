"""Consistency: every figure shown in more than one place is one figure.

One-source tests (not external checks): the enclosure report's data, the site overview, the
what-if planner on the same inputs and ``light-audit forecast`` must show the same figure
for the same enclosure, because each reads it from the one place that computes it
(``audit_lib.pipeline.findings``, ``audit_lib.pipeline.forecast``). The batch's
results.json/csv and index are compared in ``tests/test_batch.py`` (they need a batch run).
The physics behind each figure is checked against published sources in its own module's
tests.
"""

from __future__ import annotations

import math
import shutil
import warnings
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from audit_lib.judge.targets import (
    ABOVE,
    ANIMAL_UVI_MEAN,
    BASKING_UVI_MAX,
    BELOW,
    CHECK_IDS,
    REFUGE_FLOOR_SHARE,
    USED_AREA_UVI_MAX,
)
from audit_lib.judge.verdicts import NO_CHANGE

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"


@pytest.fixture(scope="module")
def park():
    from audit_lib import audit_enclosure, load_site

    site = load_site(DEMO)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        audits = {e.id: audit_enclosure(site, e.id, with_failures=False)
                  for e in site.records.enclosures}
    return site, audits


def test_check_ids_are_stable():
    """The documented ids (docs/batch-reports.md), in the order every verdict lists them."""
    assert CHECK_IDS == ("basking_uvi_max", "animal_uvi_mean", "refuge_floor_share",
                         "light_hours", "short_uvb_share", "keeper_exposure_time",
                         "used_area_uvi_max")


@pytest.mark.slow
def test_every_demo_check_carries_its_id(park):
    """consistency: each enclosure's checks come in the order of its species' UV provision
    (PROVISION_CHECK_IDS), in the report data too."""
    from audit_lib.judge.targets import PROVISION_CHECK_IDS
    from audit_lib.report.enclosure import report_data

    _, audits = park
    for audit in audits.values():
        want = list(PROVISION_CHECK_IDS[audit.species[0].uv_provision])
        assert [c.id for c in audit.checks] == want
        entries = report_data(audit)["results"]["checks"]
        assert [c["check_id"] for c in entries] == want
        assert [c["name"] for c in entries] == [c.name for c in audit.checks]


@pytest.mark.slow
def test_overview_run_alone_shows_the_reports_figures(park):
    """consistency: the overview audited on its own (workbook run alone) shows each report's
    basking maximum, animal mean, refuge share, verdict and lamp forecasts."""
    from audit_lib.report.site_overview import replacement_table, site_overview, verdict_table

    site, audits = park
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        overview = site_overview(site)
    table = verdict_table(overview)
    lamps = replacement_table(overview)
    for enclosure_id, audit in audits.items():
        row = table.loc[enclosure_id]
        by_id = {c.id: c for c in audit.checks}
        assert row["verdict"] == audit.verdict
        if BASKING_UVI_MAX in by_id:
            assert row["basking_max_uvi"] == pytest.approx(by_id[BASKING_UVI_MAX].value,
                                                           abs=0.005)
        else:
            assert row["used_area_max_uvi"] == pytest.approx(by_id[USED_AREA_UVI_MAX].value,
                                                             abs=0.005)
        assert row["animal_mean_uvi"] == pytest.approx(by_id[ANIMAL_UVI_MEAN].value, abs=0.005)
        assert row["refuge_share_pct"] == pytest.approx(
            100 * by_id[REFUGE_FLOOR_SHARE].value, abs=0.005)
        assert row["checks_out_of_range"] == sum(c.state in (BELOW, ABOVE) for c in audit.checks)
        for r in audit.lamps.itertuples(index=False):
            mine = lamps.loc[(enclosure_id, r.lamp)]
            want = "no forecast" if pd.isna(r.replace_by) else pd.Timestamp(r.replace_by).date()
            got = mine["replace_by"]
            assert (got if got == "no forecast" else pd.Timestamp(got).date()) == want
            assert mine["state"] == r.state


def _planner_like_audit(site, enclosure_id, audit):
    from audit_lib import WhatIfPlanner

    record = site.enclosure(enclosure_id)
    shape = (round(record.depth_m / 0.02), round(record.width_m / 0.02))
    planner = WhatIfPlanner(site, enclosure_id, shape=shape, audit_date=audit.audit_date,
                            uncertainty=audit.findings.uncertainty)  # the audit's intervals
    return planner, planner.update(output_share=audit.calibration)


#: rh-02 and rh-12 have a 0.75 m deep floor, not a whole number of 2 cm cells: the planner's
#: square cells (0.0197 m) then differ from the report's 2 cm grid on the basking surface, an
#: input difference (the grid), not a second computation.
SAME_GRID = [f"rh-{i:02d}" for i in range(1, 13) if i not in (2, 12)]


@pytest.mark.slow
@pytest.mark.parametrize("enclosure_id", SAME_GRID)
def test_planner_on_the_same_inputs_gives_the_reports_figures(park, enclosure_id):
    """consistency: the what-if planner with the enclosure as the site has it, at the audit's
    output (share = the audit's calibration) and the report's 2 cm grid, gives every check
    figure, the verdict and the basking point's daily dose of the report."""
    site, audits = park
    audit = audits[enclosure_id]
    _, r = _planner_like_audit(site, enclosure_id, audit)
    assert r.verdict == audit.verdict
    for mine, want in zip(r.checks, audit.checks, strict=True):
        assert mine.id == want.id and mine.state == want.state, want.id
        if want.value is None:
            assert mine.value is None
        else:
            assert mine.value == pytest.approx(want.value, rel=1e-5), want.id
    assert float(r.dose.sed) == pytest.approx(float(audit.basking_dose.sed), rel=1e-5)


@pytest.mark.slow
def test_recommendation_follows_the_checks(park):
    """consistency: "no change needed" only when every check is within range; any check out
    of range is answered by an action or named in the plain sentence."""
    _, audits = park
    for audit in audits.values():
        out = [c for c in audit.checks if c.state in (BELOW, ABOVE)]
        close = [c for c in audit.checks if c.state == "borderline"]
        text = audit.recommendation
        if not out and not close and not audit.actions:
            assert text == NO_CHANGE
        else:
            assert "No change needed" not in text
        answered = {a.check for a in audit.actions}
        for c in out:
            assert c.id in answered or c.name in text, (audit.enclosure_id, c.id)


@pytest.mark.slow
def test_what_if_never_says_no_change_beside_needs_attention(park):
    """consistency: rh-01 as shipped (lamps as new: the animal's mean is above range) and with
    the lamp dragged below the basking platform; the recommendation names what is wrong."""
    from audit_lib import WhatIfPlanner

    site, _ = park
    planner = WhatIfPlanner(site, "rh-01", shape=(30, 60))
    for change in ({}, {"z_m": 0.40}):
        r = planner.update(**change)
        if r.verdict == "needs attention":
            assert "No change needed" not in r.recommendation
            for c in r.checks:
                if c.state in (BELOW, ABOVE):
                    assert (c.id in {a.check for a in r.actions}
                            or c.name in r.recommendation), c.id
        else:
            assert r.recommendation == NO_CHANGE or r.actions


@pytest.mark.slow
def test_height_advice_stays_inside_every_demo_enclosure(park):
    """consistency: no action moves a lamp above its enclosure's top (or above a lamp already
    mounted over a mesh top); rh-02's flood, which would need 0.81 m in a 0.75 m enclosure,
    gets a plain sentence instead of a height."""
    site, audits = park
    for enclosure_id, audit in audits.items():
        record = site.enclosure(enclosure_id)
        top = max(record.height_m, *(p.z_m for p in record.lamps))
        for a in audit.actions:
            if a.kind == "move lamp":
                assert a.height_m is not None and a.height_m <= top + 1e-9, enclosure_id
    flood = audits["rh-02"].actions
    assert not [a for a in flood if a.kind == "move lamp"]
    (plain,) = [a for a in flood if a.kind == "change lamp"]
    assert "up to the top of the enclosure (0.75 m above the floor" in plain.text


def _with_meter_response(tmp_path) -> Path:
    """The demo site with a flat spectral response for its UV Index meter (from 280 nm)."""
    root = tmp_path / "site"
    shutil.copytree(DEMO, root, ignore=shutil.ignore_patterns("history.sqlite"))
    wl = np.arange(250, 401)
    rows = "\n".join(f"{w},{1.0 if w >= 280 else 0.0}" for w in wl)
    (root / "spectra" / "uvi-meter-response.csv").write_text(
        "wavelength_nm,relative_response\n" + rows + "\n")
    toml = root / "site.toml"
    text = toml.read_text()
    at = text.index('id = "uvi-meter-a"')
    end = text.index("\n", at)
    toml.write_text(text[:end + 1] + 'spectral_response = "spectra/uvi-meter-response.csv"\n'
                    + text[end + 1:])
    return root


@pytest.mark.slow
def test_one_lamp_forecast_for_report_overview_and_command(tmp_path, capsys):
    """consistency: with a meter response in the site, the report's lamp forecast (its
    results entry) and `light-audit forecast` on the audit day give the same dates, states
    and (corrected) last readings for every lamp."""
    from audit_lib import audit_enclosure, load_site
    from audit_lib.report.enclosure import lamp_entries
    from audit_lib.run import cli

    root = _with_meter_response(tmp_path)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        site = load_site(root)
        assert cli.main(["import", str(root)]) == 0
        report = {}
        for e in site.records.enclosures:
            audit = audit_enclosure(site, e.id, with_failures=False)
            report.update({(e.id, lamp["id"]): lamp for lamp in lamp_entries(audit)})
        day = audit.audit_date.isoformat()
        out_csv = tmp_path / "schedule.csv"
        assert cli.main(["forecast", str(root), "--date", day, "--csv", str(out_csv)]) == 0
    capsys.readouterr()
    table = pd.read_csv(out_csv, keep_default_na=True)
    assert table["meter_corrected"].any()
    assert len(table) == len(report)
    for r in table.itertuples(index=False):
        mine = report[(r.enclosure, r.lamp)]
        assert mine["replace_by"] == (None if pd.isna(r.replace_by) else r.replace_by)
        assert mine["forecast_state"] == r.state
        assert mine["meter_corrected"] == bool(r.meter_corrected)
        if not math.isnan(r.last_value):
            assert mine["last_uvi"] == pytest.approx(r.last_value, rel=1e-9)
