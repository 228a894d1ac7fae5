"""Tests of saved what-if scenarios (audit_lib.pipeline.scenarios).

External references: TOML 1.0 (toml.io; files are read back with the standard library's
tomllib, Python >= 3.11); SHA-256 (FIPS 180-4, via hashlib) to show the site file and the
readings are unchanged; the open-area transmission of a square mesh, (1 - d/p)^2 (geometry;
Burger, Gehrmann & Ferguson 2007, Zoo Biology 26:417); linearity of weighted irradiance in
lamp output (CIE 17.4 / ISO 17166 definitions).
"""

from __future__ import annotations

import hashlib
import shutil
from pathlib import Path

import numpy as np
import pytest
import tomllib

from audit_lib.errors import InputError
from audit_lib.pipeline.planner import WhatIfPlanner
from audit_lib.pipeline.scenarios import (
    BlankEnclosure,
    builtin_screens,
    list_scenarios,
    read_scenario,
    scenario_path,
    write_scenario_site,
)
from audit_lib.site.folder import load_site

DEMO = Path(__file__).resolve().parents[1] / "sample_sites" / "kestrel-moor-wildlife-park"


@pytest.fixture()
def site_copy(tmp_path):
    root = tmp_path / "site"
    shutil.copytree(DEMO, root)
    return root


def _digests(root: Path) -> dict:
    files = [root / "site.toml", *sorted((root / "readings").iterdir())]
    return {f.name: hashlib.sha256(f.read_bytes()).hexdigest() for f in files}


def test_saved_scenario_round_trips_and_leaves_the_site_untouched(site_copy):
    """A plan saved as SITE/scenarios/<name>.toml reads back (tomllib, TOML 1.0) as the same
    plan; site.toml and every readings file keep their SHA-256 (FIPS 180-4); the site still
    loads and validates."""
    before = _digests(site_copy)
    planner = WhatIfPlanner(load_site(site_copy), "rh-01", shape=(10, 20))
    planner.update(z_m=0.72, x_m=0.55, failed_emitters=(2, 7), screen="mesh-fine",
                   on="07:15", off="19:45", ramp_minutes=25.0, output_share=0.85,
                   uv_per_row=10, uv_beam_angle_deg=70.0, species="uromastyx-ocellata")
    path = planner.save_scenario("lower-and-guarded", note="lamp lower, mesh guard")
    assert path == scenario_path(site_copy, "lower-and-guarded")
    raw = tomllib.loads(path.read_text(encoding="utf-8"))
    assert raw["plan"]["z_m"] == 0.72 and raw["plan"]["failed_emitters"] == [2, 7]
    scenario = read_scenario(site_copy, "lower-and-guarded")
    assert scenario.plan == planner.config
    assert scenario.enclosure == "rh-01" and scenario.note == "lamp lower, mesh guard"
    assert list_scenarios(site_copy) == ["lower-and-guarded"]
    assert _digests(site_copy) == before
    load_site(site_copy)  # the scenarios folder does not disturb the site format


def test_reopened_scenario_gives_the_same_figures(site_copy):
    """Opening a saved scenario recomputes the same maps and verdict (same plan, same
    library path); the mesh passes its open-area share (1 - 0.4/1.6)^2 (Burger et al. 2007)."""
    site = load_site(site_copy)
    planner = WhatIfPlanner(site, "rh-01", shape=(12, 24))
    bare = planner.update(screen="none")
    first = planner.update(screen="mesh-fine", z_m=0.8)
    planner.save_scenario("guarded")
    again = WhatIfPlanner.from_scenario(site, "guarded", shape=(12, 24)).result
    np.testing.assert_array_equal(again.maps["floor"].values["uvi"],
                                  first.maps["floor"].values["uvi"])
    assert again.verdict == first.verdict
    mesh = builtin_screens()["mesh-fine"]
    assert (1 - mesh.wire_diameter_m / mesh.pitch_m) ** 2 == pytest.approx(0.5625)
    assert bare.config.z_m != first.config.z_m


def test_scenario_site_reproduces_the_plan_with_output_scaled_in_the_records(site_copy):
    """The scenario written as a site of its own (one enclosure, no readings, output share
    written into the lamp model's rated output) loads and gives the planner's maps: weighted
    irradiance is linear in output (CIE 17.4 / ISO 17166 definitions)."""
    from audit_lib.pipeline.assemble import build_scene, failed_labels
    from audit_lib.scene.maps import compute_maps

    site = load_site(site_copy)
    planner = WhatIfPlanner(site, "rh-09", shape=(16, 20))
    r = planner.update(output_share=0.6, failed_emitters=(1, 2), z_m=1.8)
    planner.save_scenario("aged-panel")
    copy, enclosure = write_scenario_site(site_copy, "aged-panel", site_copy.parent / "copy")
    other = load_site(copy)
    assert [e.id for e in other.records.enclosures] == ["rh-09"]
    assert len(other.readings) == 0
    assert "scenario aged-panel" in other.name
    scene = build_scene(other, enclosure)
    spacing = planner.grids(scene)["floor"][1]
    direct = compute_maps(scene, ("uvi",), spacing, ["floor"], (16, 20),
                          failed_labels(other, enclosure))["floor"]
    np.testing.assert_allclose(direct.values["uvi"], r.maps["floor"].values["uvi"], rtol=1e-5)


def test_blank_enclosure_scenario(site_copy):
    """A blank enclosure is saved with its box and becomes a site enclosure of its own; its
    planned lamp hangs where the plan says (TOML 1.0 round trip)."""
    site = load_site(site_copy)
    planner = WhatIfPlanner(site, "", blank=BlankEnclosure(width_m=0.9, depth_m=0.45),
                            shape=(9, 18))
    planner.update(z_m=0.5, lamp_model="t5-uvb-60cm")
    planner.save_scenario("new-vivarium")
    scenario = read_scenario(site_copy, "new-vivarium")
    assert scenario.blank == BlankEnclosure(width_m=0.9, depth_m=0.45)
    copy, enclosure = write_scenario_site(site_copy, "new-vivarium", site_copy.parent / "c2")
    record = load_site(copy).enclosure(enclosure)
    assert record.width_m == 0.9 and record.lamps[0].z_m == 0.5
    assert record.lamps[0].model == "t5-uvb-60cm"


def test_scenario_errors_name_file_and_field(site_copy):
    """Errors name the file, the field and a hint (project convention, pinned by message)."""
    with pytest.raises(InputError, match="scenario name 'Lower lamp!' is not a plain id"):
        scenario_path(site_copy, "Lower lamp!")
    with pytest.raises(InputError, match="no scenario 'missing'.*saved: none"):
        read_scenario(site_copy, "missing")
    folder = site_copy / "scenarios"
    folder.mkdir()
    (folder / "typo.toml").write_text(
        'format_version = 1\nenclosure = "rh-01"\n[plan]\nlamp = "uvb-bar"\n'
        'lamp_model = "led-bar-12x305"\nx_m = 0.5\ny_m = 0.4\nz_m = 0.8\nheight = 3\n')
    with pytest.raises(InputError, match="typo.toml.*plan.height: unknown plan setting"):
        read_scenario(site_copy, "typo")
    (folder / "old.toml").write_text('format_version = 7\nenclosure = "rh-01"\n')
    with pytest.raises(InputError, match="format_version must be 1"):
        read_scenario(site_copy, "old")


@pytest.mark.slow
def test_batch_renders_a_scenario_report(site_copy, tmp_path):
    """light-audit run SITE --out DIR --scenario NAME writes the scenario's enclosure report
    (papermill + nbconvert, as for any site) and a results.json naming the scenario site."""
    import json

    from audit_lib.run.cli import main

    planner = WhatIfPlanner(load_site(site_copy), "rh-12", shape=(8, 8))
    planner.update(z_m=0.6)
    planner.save_scenario("bar-lower")
    out = tmp_path / "out"
    code = main(["run", str(site_copy), "--out", str(out), "--scenario", "bar-lower",
                 "--quiet", "--jobs", "1"])
    assert code == 0
    results = json.loads((out / "results.json").read_text())
    assert "scenario bar-lower" in json.dumps(results)
    assert list((out / "reports").glob("*rh-12*.html"))
