"""What each check rests on, the site's own targets, and UV provision (issue 12).

External values: the ICNIRP 2004 actinic limit (30 J m-2 effective a day, read; Health Phys.
87:171-186), the Ferguson et al. 2010 zone ranges (Zoo Biology 29:317-334, FROM MEMORY: the
shared reference-data README), IEC 62471 risk group limits (from memory). The rest are
consistency tests of the one-source wiring: every view reads the check records and the
lamp model metrics, never computes them again.
"""

from __future__ import annotations

import json
import re
import warnings
from pathlib import Path

import numpy as np
import pytest

from audit_lib.judge.targets import (
    BASES,
    BASKING_UVI_MAX,
    CHECK_IDS,
    FROM_MEMORY,
    KEEPER_EXPOSURE_TIME,
    LIGHT_HOURS,
    PROJECT_DEFAULT,
    PROVISION_CHECK_IDS,
    REFUGE_FLOOR_SHARE,
    SHORT_UVB_SHARE,
    SITE_SETTING,
    USED_AREA_UVI_MAX,
    TargetSettings,
    check_keeper_limit,
    read_zone_table,
    species_targets,
)
from audit_lib.judge.verdicts import ATTENTION, assess_enclosure
from audit_lib.light.metrics import RISK_GROUPS

ROOT = Path(__file__).resolve().parents[1]
PARK = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
ASHDOWN = ROOT / "sample_sites" / "ashdown-private-collection"


@pytest.fixture(scope="module")
def zones():
    return read_zone_table()


def _species(provision, zone=3):
    return species_targets([{"id": "x", "scientific_name": "X", "zone": zone,
                             "uv_provision": provision}])["x"]


def _all_figures(**extra):
    return dict(basking_max_uvi=5.0, used_area_max_uvi=2.0, mean_uvi=1.5, refuge_share=0.4,
                light_hours=12.0, short_uvb_fraction=0.0, keeper_limit_s=7200.0, **extra)


# --- basis and source ---------------------------------------------------------------------


def test_every_check_states_its_basis_with_the_defaults(zones):
    """Ferguson ranges are from memory (reference-data README); the refuge, hours,
    short-wave tolerance and keeper time are project defaults (issue 12)."""
    for provision in ("gradient", "basking_patch"):
        v = assess_enclosure("e", _species(provision), zones[3], **_all_figures())
        basis = {c.id: c.basis for c in v.checks}
        assert set(basis.values()) <= set(BASES) and all(c.source for c in v.checks)
        assert basis[PROVISION_CHECK_IDS[provision][0]] == FROM_MEMORY
        assert basis["animal_uvi_mean"] == FROM_MEMORY
        for check_id in (REFUGE_FLOOR_SHARE, LIGHT_HOURS, SHORT_UVB_SHARE,
                         KEEPER_EXPOSURE_TIME):
            assert basis[check_id] == PROJECT_DEFAULT, check_id


def test_keeper_check_credits_icnirp_for_the_limit_and_us_for_the_time():
    """ICNIRP 2004: 30 J m-2 effective a day (published, read): 30 J m-2 / 0.01 W m-2 =
    3000 s = 50 min permissible; the 30 min a day target is the project's own."""
    c = check_keeper_limit(30.0 / 0.01)
    assert c.value == pytest.approx(50.0) and c.target_low == 30.0
    assert c.basis == PROJECT_DEFAULT
    assert "ICNIRP 2004 actinic limit of 30 J m-2 a day (published)" in c.source
    assert "30 min a day near the lamps is a project default" in c.source
    assert c.status != "read"


def test_a_site_setting_is_named_with_the_default_it_replaces(zones):
    """A value the site sets changes the check's basis to "site setting" and its source
    names the key, the value and the project default."""
    v = assess_enclosure("e", _species("basking_patch"), zones[3], refuge_min_share=0.3,
                         keeper_time_s=2700.0, **_all_figures())
    by_id = {c.id: c for c in v.checks}
    assert by_id[REFUGE_FLOOR_SHARE].basis == SITE_SETTING
    assert ("site.toml [targets] refuge_min_share = 0.3 (project default 0.25)"
            in by_id[REFUGE_FLOOR_SHARE].source)
    assert by_id[KEEPER_EXPOSURE_TIME].basis == SITE_SETTING
    assert "keeper_time_s = 2700 (project default 1800)" in by_id[KEEPER_EXPOSURE_TIME].source
    assert by_id[KEEPER_EXPOSURE_TIME].target_low == 45.0
    assert by_id[LIGHT_HOURS].basis == PROJECT_DEFAULT


def _site_with_targets(tmp_path, table: str) -> Path:
    import shutil

    root = tmp_path / "site"
    shutil.copytree(ASHDOWN, root)
    path = root / "site.toml"
    text = path.read_text()
    path.write_text(text.replace("[[meters]]", f"{table}\n\n[[meters]]", 1))
    return root


@pytest.mark.parametrize("table, message", [
    ("[targets]\nlight_hours_min = 15",
     r"site\.toml:\d+: targets: light_hours_min \(15 h\) is above light_hours_max \(14 h\) "
     r"\(hint: give the shorter day first\)"),
    ("[targets]\nrefuge_min_share = 25",
     r"targets\.refuge_min_share: 25 is not a share from 0 to 1 \(hint: write 0\.25 for 25 %\)"),
    ("[targets]\nkeeper_time = 30",
     r"targets\.keeper_time: a number without a unit \(hint: write keeper_time = \"30 <unit>\""),
    ("[targets]\nrefuge_uvi = 0.7",
     r"targets\.refuge_uvi: unknown key 'refuge_uvi' \(hint: did you mean 'refuge_uvi_max'\?"),
])
def test_bad_targets_table_is_a_clear_error(tmp_path, table, message):
    """Each bad key of [targets] is named with the file's key path and a hint."""
    from audit_lib.errors import InputError, InputErrors
    from audit_lib.site.folder import load_site

    root = _site_with_targets(tmp_path, table)
    with pytest.raises((InputError, InputErrors)) as info:
        load_site(root)
    assert re.search(message, str(info.value)), str(info.value)


def test_site_targets_reach_the_checks_and_the_report(tmp_path):
    """[targets] in site.toml: a stricter refuge threshold is used for the refuge share
    (recomputed here from the floor map) and named in the check and the notes."""
    from audit_lib.pipeline.audit import audit_enclosure
    from audit_lib.report.enclosure import checks_table
    from audit_lib.site.folder import load_site

    root = _site_with_targets(tmp_path, '[targets]\nrefuge_uvi_max = 0.2\nkeeper_time = "1 h"')
    site = load_site(root)
    assert TargetSettings.from_record(site.records.targets).overridden == {
        "refuge_uvi_max", "keeper_time_s"}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        audit = audit_enclosure(site, "tortoise-table", with_failures=False, spacing_m=0.05)
    by_id = {c.id: c for c in audit.checks}
    refuge = by_id[REFUGE_FLOOR_SHARE]
    assert refuge.basis == SITE_SETTING and "refuge_uvi_max = 0.2" in refuge.source
    assert by_id[KEEPER_EXPOSURE_TIME].target_low == 60.0
    floor = audit.surface_stats.query("surface == 'floor' and quantity == 'uvi'")
    assert refuge.value == pytest.approx(float(floor["share_refuge"].iloc[0]))
    assert any("sets its own targets" in n and "refuge_uvi_max = 0.2" in n
               for n in audit.notes)
    html = checks_table(audit)
    assert "Target rests on" in html and "site setting" in html and "from-memory" in html
    from audit_lib.report.enclosure_tables import surfaces_table

    assert "at or below UV Index 0.2" in surfaces_table(audit)._repr_html_()  # the site's


# --- UV provision -------------------------------------------------------------------------


def test_provision_decides_the_uv_index_top_check(zones):
    """Ferguson et al. 2010 zone 3 (from memory): mean range 1.0-2.6, maximum 2.9-7.4. A
    basking patch is judged at the patch on the maximum range, a whole-enclosure gradient
    over the area used on the mean range (our own rule on the paper's two ranges)."""
    patch = assess_enclosure("e", _species("basking_patch"), zones[3], **_all_figures())
    grad = assess_enclosure("e", _species("gradient"), zones[3], **_all_figures())
    assert [c.id for c in patch.checks] == list(PROVISION_CHECK_IDS["basking_patch"])
    assert [c.id for c in grad.checks] == list(PROVISION_CHECK_IDS["gradient"])
    assert (patch.checks[0].target_low, patch.checks[0].target_high) == (2.9, 7.4)
    assert (grad.checks[0].target_low, grad.checks[0].target_high) == (1.0, 2.6)
    assert patch.checks[0].value == 5.0 and grad.checks[0].value == 2.0
    # the same 5.0 UVI is a good basking patch but too much for a gradient
    hot = assess_enclosure("e", _species("gradient"), zones[3],
                           **_all_figures() | {"used_area_max_uvi": 5.0})
    assert hot.state == ATTENTION and hot.checks[0].state == "above range"
    assert "highest UV Index over the area used" in hot.reason
    assert set(CHECK_IDS) == {*PROVISION_CHECK_IDS["gradient"],
                              *PROVISION_CHECK_IDS["basking_patch"]}


def test_both_provisions_occur_at_both_demo_sites():
    """The demo sites show both ways of providing UV (issue 12), and so does the library's
    demo species table."""
    from audit_lib.judge.zones import read_species_table
    from audit_lib.site.folder import load_site

    for root in (PARK, ASHDOWN):
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            site = load_site(root)
        table = species_targets(site.records.species)
        used = {table[s].uv_provision for e in site.records.enclosures for s in e.species}
        assert used == {"gradient", "basking_patch"}, root.name
    assert set(read_species_table()["uv_provision"]) == {"gradient", "basking_patch"}


@pytest.fixture(scope="module")
def demo_audits():
    from audit_lib.pipeline.audit import audit_enclosure
    from audit_lib.site.folder import load_site

    out = {}
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        for root in (PARK, ASHDOWN):
            site = load_site(root)
            for e in site.records.enclosures:
                out[e.id] = (site, audit_enclosure(site, e.id, with_failures=False))
    return out


@pytest.mark.slow
def test_demo_top_check_is_the_maximum_over_its_places(demo_audits):
    """consistency: the basking maximum is the highest cell of the basking surfaces, the
    used-area maximum the highest over the time budget's surfaces (surface statistics
    table) and named positions (points table): one source, read back from two views."""
    for enclosure_id, (site, audit) in demo_audits.items():
        record = site.enclosure(enclosure_id)
        (species,) = audit.species
        top = audit.checks[0]
        assert [c.id for c in audit.checks] == list(PROVISION_CHECK_IDS[species.uv_provision])
        stats = audit.surface_stats.query("quantity == 'uvi'").set_index("surface")["maximum"]
        if species.uv_provision == "basking_patch":
            basking = [s.id for s in record.surfaces if s.kind == "basking"] or ["floor"]
            assert top.id == BASKING_UVI_MAX
            assert top.value == pytest.approx(max(stats[s] for s in basking), rel=1e-9)
        else:
            points = audit.points.set_index("position")["modelled_uvi"]
            places = [k for k, share in record.time_budget.items() if share > 0]
            want = max(float(stats[p]) if p in stats else float(points[p]) for p in places)
            assert top.id == USED_AREA_UVI_MAX
            assert top.value == pytest.approx(want, rel=1e-6), enclosure_id
            zone = audit.zone
            assert (top.target_low, top.target_high) == (zone.mean_uvi_low, zone.mean_uvi_high)


@pytest.mark.slow
def test_demo_results_carry_basis_source_and_lamp_risk_groups(demo_audits):
    """consistency: results.json checks carry the records' basis and source; each lamp
    carries its model's risk group (0 = exempt ... 3, RISK_GROUPS order), distance and E_S
    from audit.spectra, the one source; the metal-halide spot is group 3 at 200 mm
    (E_S far above the 0.03 W m-2 group 2 limit, IEC 62471 Table 6.1, from memory)."""
    from audit_lib.report.enclosure import enclosure_results

    for _, audit in demo_audits.values():
        entry = json.loads(json.dumps(enclosure_results(audit)))
        assert [(c["basis"], c["source"]) for c in entry["checks"]] == [
            (c.basis, c.source) for c in audit.checks]
        for lamp in entry["lamps"]:
            metrics = audit.spectra.get(lamp["model"])
            if metrics is None:
                assert lamp["risk_group"] is None
                continue
            assert RISK_GROUPS[lamp["risk_group"]] == metrics["risk_group"]
            assert lamp["risk_group_distance_m"] == metrics["risk_group_distance_m"]
            assert lamp["actinic_w_m2_at_distance"] == metrics["actinic_w_m2_at_distance"]
    (_, spot) = demo_audits["rh-11"]
    lamps = enclosure_results(spot)["lamps"]
    mh = [lamp for lamp in lamps if lamp["model"] == "mh-uvb-70w"]
    assert mh and mh[0]["risk_group"] == 3 and mh[0]["risk_group_distance_m"] == 0.2
    assert mh[0]["actinic_w_m2_at_distance"] > 0.03


@pytest.mark.slow
def test_from_memory_marks_in_index_and_overview(demo_audits):
    """consistency: the index and the overview mark verdicts that rest on values from
    memory, reading the checks' basis from the results entries."""
    from audit_lib.report.enclosure import enclosure_results
    from audit_lib.report.index_page import render_index
    from audit_lib.report.site_overview import SiteOverview, verdict_table
    from audit_lib.run.batch import EnclosureOutcome

    entries = [enclosure_results(a) for k, (s, a) in demo_audits.items() if k.startswith("rh-")]
    overview = SiteOverview("park", demo_audits["rh-01"][1].audit_date,
                            enclosures=entries)
    table = verdict_table(overview)
    assert (table["from_memory"] != "").all()
    assert "animal_uvi_mean" in table.loc["rh-06", "from_memory"]
    assert np.isnan(table.loc["rh-06", "basking_max_uvi"])
    assert table.loc["rh-06", "used_area_max_uvi"] == pytest.approx(
        demo_audits["rh-06"][1].checks[0].value, abs=0.005)
    outcomes = [EnclosureOutcome(e["id"], e["name"], e["verdict"], checks=e["checks"])
                for e in entries]
    page = render_index("park", outcomes)
    assert page.count('class="from-memory"') == len(entries)
