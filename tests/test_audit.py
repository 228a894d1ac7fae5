"""The orchestrator and the site-to-scene translation, against outside references.

Sources named in each test: the WHO 2002 UV Index definition (1 UVI = 25 mW m-2 erythemal)
and the CIE standard erythema dose (1 SED = 100 J m-2); the Madronich (2007) clear-sky
formula with solar zenith angles from pvlib's SPA (an independent reference library); the
handbook aspect-factor formula of a finite line source; linearity of weighted quantities in
irradiance (CIE action-spectrum weighting); numpy's trapezoid rule.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import replace
from pathlib import Path

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.pipeline.assemble import bands_spectrum, build_scene, failed_labels
from audit_lib.pipeline.audit import audit_enclosure, choose_audit_date, open_enclosure
from audit_lib.scene.maps import compute_maps, evaluate_points
from audit_lib.site.folder import load_site, new_site

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
SMALL = ROOT / "sample_sites" / "ashdown-private-collection"


@pytest.fixture(scope="module")
def small():
    return load_site(SMALL)


@pytest.fixture(scope="module")
def dragon(small):
    return audit_enclosure(small, small.records.enclosures[0].id)


def test_bands_spectrum_has_unit_area_and_its_peak():
    """numpy trapezoid rule: the modelled spectral shape integrates to 1; one band peaks at
    its stated wavelength."""
    from audit_lib.site.schema import Band

    spectrum = bands_spectrum([Band(peak_nm=313, fwhm_nm=30, share=1.0)], "one band")
    assert np.trapezoid(spectrum.irradiance_w_m2_nm, spectrum.wavelength_nm) == \
        pytest.approx(1.0, rel=1e-9)
    assert spectrum.wavelength_nm[np.argmax(spectrum.irradiance_w_m2_nm)] == \
        pytest.approx(313, abs=0.5)


def test_tube_reproduces_its_reference_reading(tmp_path):
    """Lighting handbooks' aspect factor for a finite line source: the tube built from the
    site file gives its rated UV Index at the reference distance below its middle (screens
    removed), i.e. the reference scaling and the line-source model agree."""
    new_site(tmp_path / "site")
    site = load_site(tmp_path / "site")
    place = site.records.enclosures[0].lamps[0]
    reference = site.lamp_model(place.model).reference
    scene = replace(build_scene(site, "viv-1"), screens=())
    point = np.array([[place.x_m, place.y_m, place.z_m - reference.distance_m]])
    uvi = evaluate_points(scene, point, ("uvi",)).values["uvi"][0]
    assert uvi == pytest.approx(reference.uvi, rel=0.02)


def test_calibration_matches_a_single_reading(tmp_path):
    """Weighted quantities are linear in irradiance (CIE weighting), so one scale factor maps
    the model onto the audit's reading exactly at the measured place."""
    new_site(tmp_path / "site")
    readings = next((tmp_path / "site" / "readings").glob("*.csv"))
    lines = readings.read_text().splitlines()
    header = next(i for i, line in enumerate(lines) if line.startswith("date,"))
    readings.write_text("\n".join(lines[: header + 2]) + "\n")  # keep one reading
    site = load_site(tmp_path / "site")
    audit = audit_enclosure(site, "viv-1")
    points = audit.points.set_index("position")
    measured = points["measured_uvi"].dropna()
    assert len(measured) == 1
    ratios = points.loc[measured.index, "modelled_uvi"] / measured
    assert float(np.median(ratios)) == pytest.approx(1.0, rel=1e-9)
    raw = compute_maps(audit.scene, spacing_m=0.02)
    assert audit.maps["floor"].values["uvi"].max() == \
        pytest.approx(audit.calibration * raw["floor"].values["uvi"].max(), rel=1e-6)


def test_daily_dose_follows_the_uv_index_definition(dragon):
    """WHO 2002: 1 UVI = 0.025 W m-2 erythemal; CIE: 1 SED = 100 J m-2. The basking dose is
    the integral of the day's UV Index curve at the basking maximum."""
    curve = dragon.daily["enclosure_uvi"]
    step_s = (curve.index[1] - curve.index[0]) * 3600.0
    erythemal = float(curve.sum()) * 0.025 * step_s
    assert dragon.basking_dose.erythemal_j_m2 == pytest.approx(erythemal, rel=0.03)
    assert dragon.basking_dose.sed == pytest.approx(dragon.basking_dose.erythemal_j_m2 / 100.0)


def test_sun_reference_against_pvlib_and_madronich(small, dragon):
    """Madronich (2007): UVI = 12.5 cos(SZA)^2.42 at 300 DU; the zenith from pvlib's SPA at
    the curve's peak time on the audit day at the site."""
    pvlib = pytest.importorskip("pvlib")
    import pandas as pd

    info = small.records.site
    peak_h = float(dragon.daily["sun_uvi"].idxmax())
    if dragon.natural["place"] == "the site":
        tz, lat, lon = info.time_zone, info.latitude_deg, info.longitude_deg
    else:  # the species' native latitude, local solar time (longitude 0, UTC)
        tz, lat, lon = "UTC", dragon.natural["latitude_deg"], 0.0
    when = pd.Timestamp(dragon.audit_date.isoformat(), tz=tz) + pd.Timedelta(hours=peak_h)
    sza = float(pvlib.solarposition.get_solarposition(
        pd.DatetimeIndex([when]), lat, lon)["apparent_zenith"].iloc[0])
    assert dragon.natural["peak_uvi"] == \
        pytest.approx(12.5 * math.cos(math.radians(sza)) ** 2.42, rel=0.03)


def test_checks_use_the_maps(dragon):
    """The basking check's figure is the highest UV Index over the basking surfaces."""
    basking = [m for m in dragon.maps.values() if m.surface.kind == "basking"]
    check = next(c for c in dragon.checks if c.name == "basking UV Index maximum")
    assert check.value == pytest.approx(max(float(m.values["uvi"].max()) for m in basking))
    assert dragon.verdict in ("meets targets", "needs attention", "borderline", "not enough data")


@pytest.mark.slow
def test_failed_emitter_lowers_the_map():
    """Superposition: with an emitter the site marks failed, the map is the full map minus
    that emitter's share (never higher anywhere)."""
    site = load_site(DEMO)
    enclosure = next(e.id for e in site.records.enclosures
                     if any(p.failed_emitters for p in e.lamps))
    scene = build_scene(site, enclosure)
    failed = failed_labels(site, enclosure)
    assert failed and all("/" in f for f in failed)
    full = compute_maps(scene, spacing_m=0.03)
    out = compute_maps(scene, spacing_m=0.03, failed=failed)
    for name in full:
        assert np.all(out[name].values["uvi"] <= full[name].values["uvi"] + 1e-12)
    assert sum(out[n].values["uvi"].sum() for n in out) < \
        sum(full[n].values["uvi"].sum() for n in full)


def test_parameters_are_checked(small):
    """Bad workbook parameters are named with a hint (messages pinned)."""
    with pytest.raises(InputError, match="no enclosure 'nope'.*enclosures: dragon-viv"):
        open_enclosure(SMALL, "nope")
    with pytest.raises(InputError, match="map spacing 5 m is outside"):
        open_enclosure(SMALL, spacing_m=5)
    with pytest.raises(InputError, match="audit_date: '2026-13-01' is not a date"):
        choose_audit_date(small, "2026-13-01")
    assert choose_audit_date(small, "2026-01-02") == dt.date(2026, 1, 2)
    assert choose_audit_date(small) == max(small.records.site.audit_dates)


def test_readings_corrected_for_meter_mismatch(tmp_path):
    """Spectral mismatch correction (CIE S 017 / IEC 60904-7 F*): with a meter response that
    differs from the erythema action spectrum, the audit compares the model with the
    corrected reading (raw x F*) and keeps the raw one beside it."""
    import shutil

    from audit_lib.pipeline.meter_corrections import site_meter_corrections

    site_dir = tmp_path / "site"
    shutil.copytree(SMALL, site_dir)
    rows = "\n".join(f"{wl},{max(0.0, 1 - abs(wl - 320) / 60):.4f}" for wl in range(250, 401, 5))
    (site_dir / "flat_meter.csv").write_text("wavelength_nm,relative_response\n" + rows + "\n")
    toml = site_dir / "site.toml"
    text = toml.read_text()
    at = text.index('type = "uv_index_meter"')
    toml.write_text(text[:at] + 'spectral_response = "flat_meter.csv"\n' + text[at:])
    site = load_site(site_dir)
    enclosure = site.records.enclosures[0]
    factors = site_meter_corrections(site)
    factor = float(factors[factors["enclosure"] == enclosure.id]["correction_factor"].iloc[0])
    assert abs(factor - 1) > 0.01
    points = audit_enclosure(site, enclosure.id).points.dropna(subset=["measured_uvi"])
    assert len(points)
    assert np.allclose(points["measured_uvi"], points["measured_uvi_raw"] * factor, rtol=1e-9)


def test_no_readings_on_the_audit_day_leaves_the_model_as_rated(small):
    """Without readings on the audit day the model is not scaled and the report says so
    (linearity: a factor of 1 keeps the rated output); the tables still render."""
    from audit_lib.report.enclosure import points_table, report_data

    audit = audit_enclosure(small, small.records.enclosures[1].id, audit_date="2020-06-01")
    assert audit.calibration == 1.0
    assert any("rated output" in n for n in audit.notes)
    table = points_table(audit)
    assert table["measured_uvi"].isna().all()
    assert report_data(audit)["results"]["checks"]


def test_failure_labels_of_a_whole_lamp_and_of_emitters():
    """A failure label is the lamp id (a tube or point lamp out) or '<lamp>/<emitter>' (one
    LED out); both belong to that lamp and to no other
    (label convention of audit_lib.scene.failures)."""
    from audit_lib.pipeline.steps import failed_of

    failed = ("tube", "bar/3", "bar-2/1")
    assert failed_of(failed, "tube") == ("tube",)
    assert failed_of(failed, "bar") == ("bar/3",)


def test_calibration_ignores_readings_at_meter_resolution():
    """A hide reading 0.0 (below a meter's 0.1 display step) must not halve the model's
    scale: the median uses readings of at least 0.5 UVI (rounding error <= 10 %, common
    practice). Basking 6.0 measured vs 5.0 modelled gives 1.2 (ratio definition)."""
    import pandas as pd

    from audit_lib.pipeline.steps import calibration_factor

    points = pd.DataFrame({"uvi": [5.0, 0.04], "measured_uvi": [6.0, 0.0]})
    assert calibration_factor(points) == pytest.approx(1.2)
    low = pd.DataFrame({"uvi": [0.2, 0.1], "measured_uvi": [0.3, 0.0]})
    assert calibration_factor(low) == pytest.approx(1.5)


def test_sun_drawn_in_the_native_range_when_known():
    """The species table's native latitude (demo data) moves the clear-sky reference there:
    the sun's daily dose is the one at that latitude (Madronich 2007 via sunlight module)."""
    from audit_lib.light.sun import clear_sky_daily_dose_sed

    park = load_site(ROOT / "sample_sites" / "kestrel-moor-wildlife-park")
    result = audit_enclosure(park, "rh-01", with_failures=False)
    native = [s.native_latitude_deg for s in result.species if s.native_latitude_deg is not None]
    assert native, "the demo's bearded dragon carries a native latitude"
    assert result.natural["place"] == "the species' native range"
    assert result.natural["latitude_deg"] == native[0]
    assert result.natural["daily_sed"] == pytest.approx(
        clear_sky_daily_dose_sed(native[0], result.audit_date))


def test_named_positions_leave_failed_emitters_out_as_the_maps_do():
    """One model for maps and named positions (consistency): at a map cell's centre, the
    point model with the site's failed emitters gives the map's value, and the audit's
    modelled readings use that same model (superposition of incoherent sources)."""
    from audit_lib.scene.maps import point_values

    site = load_site(DEMO)
    enclosure = next(e.id for e in site.records.enclosures
                     if any(p.failed_emitters for p in e.lamps))
    scene = build_scene(site, enclosure)
    failed = failed_labels(site, enclosure)
    maps = compute_maps(scene, spacing_m=0.05, failed=failed)
    floor = maps["floor"]
    iy, ix = np.unravel_index(np.argmax(floor.values["uvi"]), floor.values["uvi"].shape)
    at = {"cell": (floor.x_m[ix], floor.y_m[iy], floor.surface.z_m)}
    with_failed = point_values(scene, at, failed=failed)["uvi"].iloc[0]
    all_working = point_values(scene, at)["uvi"].iloc[0]
    assert with_failed == pytest.approx(floor.values["uvi"][iy, ix], rel=1e-6)  # float32 maps
    assert with_failed < all_working
    audit = audit_enclosure(site, enclosure, with_failures=False, spacing_m=0.05)
    named = audit.points.dropna(subset=["x_m"])
    again = point_values(scene, named[["position", "x_m", "y_m", "z_m"]], failed=failed)
    assert np.allclose(named["uvi"].to_numpy(), again["uvi"].to_numpy(), rtol=1e-9)
