"""Tests of the what-if planner (audit_lib.pipeline.planner).

External references: the inverse-square law of a point source (Lambert, Photometria 1760;
McCluney, Introduction to Radiometry and Photometry, 2nd ed. 2014, ch. 2); the UV Index
definition (WHO 2002, Global Solar UV Index: 1 UVI = 25 mW m-2 erythemally weighted); the
standard erythema dose (CIE S 007/E-1998: 1 SED = 100 J m-2); the ICNIRP 2004 actinic limit
(30 J m-2 a day, so the permitted time is inversely proportional to the irradiance); the
open-area transmission of a square wire mesh, (1 - d/p)^2 (geometry; Burger, Gehrmann &
Ferguson 2007, Zoo Biology 26:417); superposition of incoherent sources (irradiances add).
Consistency checks compare the planner with the library's orchestrator
(:func:`audit_lib.pipeline.audit.audit_enclosure`), whose parts are checked against
published sources
in their own tests.
"""

from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.pipeline.planner import WhatIfPlanner
from audit_lib.pipeline.scenarios import BlankEnclosure

DEMO = Path(__file__).resolve().parents[1] / "sample_sites" / "kestrel-moor-wildlife-park"


@pytest.fixture(scope="module")
def site():
    from audit_lib.site.folder import load_site

    return load_site(DEMO)


def _flood_planner(site):
    """Blank enclosure with the demo flood lamp straight above a basking cell centre."""
    planner = WhatIfPlanner(site, "", blank=BlankEnclosure(), shape=(60, 120))
    planner.update(lamp_model="flood-uvb-100w", x_m=0.305, y_m=0.305, species="")
    return planner


def test_point_lamp_reproduces_its_reference_and_the_inverse_square_law(site):
    """A point lamp given as 'UVI 3.0 at 50 cm on the axis' (the demo site's flood lamp)
    gives 3.0 on the basking cell 50 cm straight below it, and 4 x 3.0 at 25 cm: inverse-square
    law of a point source (Lambert 1760; McCluney 2014, ch. 2)."""
    planner = _flood_planner(site)
    basking_z = BlankEnclosure().basking_z_m
    at_50 = planner.update(z_m=basking_z + 0.50).basking_max_uvi
    at_25 = planner.update(z_m=basking_z + 0.25).basking_max_uvi
    # maps of straight-down emitters are computed in single precision (about 1e-6)
    assert at_50 == pytest.approx(3.0, rel=1e-5)
    assert at_25 / at_50 == pytest.approx((0.50 / 0.25) ** 2, rel=1e-5)


def test_daily_dose_follows_the_uv_index_and_sed_definitions(site):
    """With own light times 08:00-20:00 and no ramp the basking dose is
    UVI x 0.025 W m-2 x 12 h / 100 J m-2 (WHO 2002 UV Index; CIE S 007 SED), and the light
    period is 12 h."""
    planner = _flood_planner(site)
    r = planner.update(z_m=0.65, on="08:00", off="20:00", ramp_minutes=0.0)
    expected_sed = r.basking_max_uvi * 0.025 * 12 * 3600 / 100.0
    assert float(r.dose.sed) == pytest.approx(expected_sed, rel=1e-9)
    assert r.light_hours == pytest.approx(12.0, abs=1e-9)
    assert float(r.daily.max()) == pytest.approx(r.basking_max_uvi, rel=1e-12)


def test_output_share_scales_maps_and_keeper_time_is_for_lamps_as_new(site):
    """Weighted irradiances are linear in lamp output (CIE 17.4 / ISO 17166 definitions), so
    a lamp at 50 % halves every map value. The keeper limit (ICNIRP 2004, 30 J m-2 / E_S) is
    that of the lamps as new whatever the output share, as in the audit (project rule: the
    limit must still hold after a lamp change; common practice)."""
    planner = WhatIfPlanner(site, "rh-01", shape=(20, 40))
    full = planner.update(output_share=1.0)
    half = planner.update(output_share=0.5)
    for name, m in full.maps.items():
        np.testing.assert_allclose(half.maps[name].values["uvi"], 0.5 * m.values["uvi"],
                                   rtol=1e-12)
    assert half.keeper_limit_s == pytest.approx(full.keeper_limit_s, rel=1e-12)


def test_mesh_screen_passes_its_open_area_fraction(site):
    """A square mesh of 0.4 mm wire on a 1.6 mm pitch passes (1 - 0.4/1.6)^2 = 0.5625 of the
    UV at normal incidence (open-area fraction; Burger, Gehrmann & Ferguson 2007)."""
    planner = WhatIfPlanner(site, "rh-01", shape=(20, 40))
    bare = planner.update(screen="none")
    meshed = planner.update(screen="mesh-fine")
    for name, m in bare.maps.items():
        np.testing.assert_allclose(meshed.maps[name].values["uvi"], 0.5625 * m.values["uvi"],
                                   rtol=1e-12)


def test_failed_emitters_superpose(site):
    """Incoherent sources add: the map with emitters 1 and 2 out plus each of them alone
    (all others out) gives the map with every emitter working."""
    planner = WhatIfPlanner(site, "rh-01", shape=(20, 40))
    n = len(planner.emitter_labels())
    full = planner.update(failed_emitters=()).maps["floor"].values["uvi"]
    without = planner.update(failed_emitters=(1, 2)).maps["floor"].values["uvi"]
    alone = [planner.update(failed_emitters=tuple(k for k in range(1, n + 1) if k != j))
             .maps["floor"].values["uvi"] for j in (1, 2)]
    # single-precision fast path of the maps (about 1e-6)
    np.testing.assert_allclose(without + alone[0] + alone[1], full, rtol=1e-5, atol=1e-9)


def test_planner_sequence_matches_the_library_maps(site):
    """Driving the planner through a sequence of changes gives the maps that the library's
    own path gives (site records -> assemble.build_scene -> scene.compute_maps with the failed
    labels); reference: superposition of incoherent sources, as in audit_lib.scene.maps."""
    from audit_lib.pipeline.assemble import build_scene, failed_labels
    from audit_lib.pipeline.scenarios import apply_plan
    from audit_lib.scene.maps import compute_maps

    planner = WhatIfPlanner(site, "rh-09", shape=(24, 36))
    steps = [{"z_m": 1.7}, {"failed_emitters": (3, 5)}, {"x_m": 0.8, "screen": "mesh-coarse"},
             {"uv_per_row": 4}, {"uv_beam_angle_deg": 40.0}, {"failed_emitters": (1,)},
             {"species": "pogona-vitticeps", "output_share": 0.8}]
    for change in steps:
        r = planner.update(**change)
        planned = apply_plan(site, "rh-09", r.config)
        scene = build_scene(planned, "rh-09")
        failed = failed_labels(planned, "rh-09")
        for name, (shape, spacing) in planner.grids(scene).items():
            direct = compute_maps(scene, ("uvi",), spacing, [name], shape, failed)[name]
            np.testing.assert_allclose(r.maps[name].values["uvi"],
                                       r.config.output_share * direct.values["uvi"],
                                       rtol=1e-5, atol=1e-9)


def test_planner_agrees_with_the_audit_orchestrator(site, tmp_path):
    """The planner's figures and verdict equal audit_enclosure's on the same plan written as
    a scenario site (same 2 cm grid; lamps as new): basking maximum, refuge share, hours of
    light, the animal's mean UV Index (time budget) and every check value.
    Reference: audit_lib.pipeline.audit (each stage checked against its published source in its own
    tests: WHO 2002, CIE S 007, ICNIRP 2004, Ferguson et al. 2010 zones from memory)."""
    import shutil

    from audit_lib.pipeline.audit import audit_enclosure
    from audit_lib.pipeline.scenarios import write_scenario_site
    from audit_lib.site.folder import load_site

    root = tmp_path / "site"
    shutil.copytree(DEMO, root)
    local = load_site(root)
    record = local.enclosure("rh-01")
    shape = (round(record.depth_m / 0.02), round(record.width_m / 0.02))
    planner = WhatIfPlanner(local, "rh-01", shape=shape)
    r = planner.update(z_m=0.75, failed_emitters=(4,), on="07:30", off="19:30",
                       ramp_minutes=30.0)
    planner.save_scenario("lower")
    copy, enclosure = write_scenario_site(root, "lower", tmp_path / "copy")
    audit = audit_enclosure(load_site(copy), enclosure, spacing_m=0.02, with_failures=False)
    assert audit.calibration == 1.0
    planner.uncertainty = audit.findings.uncertainty  # judge with the audit's intervals
    r = planner.update()
    assert r.basking_max_uvi == pytest.approx(
        audit.surface_stats.query("quantity == 'uvi' and kind == 'basking'")["maximum"].max(),
        rel=1e-5)
    by_id = {c.id: c for c in audit.checks}
    mine = {c.id: c for c in r.checks}
    assert set(mine) == set(by_id)
    for check_id, check in by_id.items():
        if check.value is None or (isinstance(check.value, float) and math.isnan(check.value)):
            assert mine[check_id].value is None or math.isnan(mine[check_id].value)
        else:
            assert mine[check_id].value == pytest.approx(check.value, rel=1e-5), check_id
        assert mine[check_id].state == check.state, check_id
    assert r.verdict == audit.verdict


def test_unknown_setting_and_bad_values_are_errors(site):
    """Errors name the setting and the valid choices (project convention: a typo in an audit
    must be an error, not silently dropped; common practice)."""
    planner = WhatIfPlanner(site, "rh-01", shape=(10, 20))
    before = planner.config
    with pytest.raises(InputError, match="unknown plan setting.*height"):
        planner.update(height=0.5)
    with pytest.raises(InputError, match="unknown screen 'chicken-wire'"):
        planner.update(screen="chicken-wire")
    with pytest.raises(InputError, match="light time '7am' is not a clock time"):
        planner.update(on="7am", off="19:00")
    with pytest.raises(InputError, match="not an LED array"):
        planner.update(lamp_model="t5-uvb-60cm", uv_per_row=3)
    with pytest.raises(InputError, match="unknown species 'dragon'"):
        planner.update(species="dragon")
    assert planner.config == before


def test_changing_the_lamp_model_clears_emitter_settings(site):
    """Emitter numbers belong to one layout: a new lamp model starts with none out
    (common practice: failures are recorded per fitting)."""
    planner = WhatIfPlanner(site, "rh-01", shape=(10, 20))
    planner.update(failed_emitters=(2, 3), uv_per_row=8)
    r = planner.update(lamp_model="led-panel-24-mixed")
    assert r.config.failed_emitters == () and r.config.uv_per_row is None
    assert len(planner.emitter_labels()) == 2 * 6 + 2 * 6 + 8  # two UV grids of 2 x 6, 8 white
    planner.update(uv_per_row=2)
    labels = planner.emitter_labels()
    assert sum(e.startswith("uvb") for e in labels) == 2 * 2 + 2 * 2
    assert sum(e.startswith("white") for e in labels) == 8


def test_measured_lamp_outside_its_range_is_noted(site):
    """A lamp known only from readings at 0.1-0.4 m (the demo site's compact lamp) used 0.9 m
    above the floor is extrapolated there, and the result says so once per surface (common
    practice: a fitted law holds within the range it was fitted on)."""
    planner = WhatIfPlanner(site, "rh-07", shape=(10, 10))
    near = planner.update(z_m=0.5)
    far = planner.update(z_m=0.9)
    assert any("'floor'" in n and "extrapolated" in n for n in far.notes)
    extrapolated = [n for n in far.notes if "extrapolated" in n]
    assert len(far.notes) == len(set(far.notes)) and len(extrapolated) <= len(far.maps)
    assert far.statistics["floor"].share_extrapolated == 1.0
    assert near.statistics["basking"].share_extrapolated < 1.0


def test_planning_another_lamp_starts_from_the_site(site):
    """Switching to the other tube of a two-lamp enclosure starts from that tube as the site
    file places it, and the first tube is back where the site has it (superposition of
    incoherent sources: the enclosure's maps are those of the site file again)."""
    planner = WhatIfPlanner(site, "rh-08", shape=(10, 10))
    as_built = planner.update()
    planner.update(z_m=0.30)
    r = planner.update(lamp="t5-back")
    back = site.enclosure("rh-08").lamps[1]
    assert (r.config.lamp, r.config.x_m, r.config.y_m, r.config.z_m) == (
        "t5-back", back.x_m, back.y_m, back.z_m)
    np.testing.assert_allclose(r.maps["floor"].values["uvi"],
                               as_built.maps["floor"].values["uvi"], rtol=1e-12)
