"""Maps, geometry laws, screens, statistics and the measured-lamp route."""

from __future__ import annotations

import math
import warnings

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.light.spectra import Spectrum
from audit_lib.scene.maps import (
    Enclosure,
    PlacedLamp,
    Screen,
    Surface,
    SurfaceMap,
    compute_maps,
    mesh_transmission,
    point_values,
    statistics_table,
    surface_statistics,
)
from audit_lib.sources.emitters import (
    EmitterType,
    lambertian_order,
    line_shape,
    pattern_solid_angle,
)
from audit_lib.sources.lamps import (
    LedArray,
    MeasuredLamp,
    OutsideMeasuredRangeWarning,
    PointLamp,
    TubeLamp,
    fit_distance_law,
    lamp_sources,
    lamp_spectrum,
    line_of_emitters,
)

FLAT = Spectrum(np.arange(250.0, 801.0, 1.0), np.ones(551), name="flat")


def _uvb_of(lamp):
    return lamp_sources(lamp)[0].quantities["uvb_w_m2"]


def _box(*lamps, **kw):
    return Enclosure("test box", 2.0, 2.0, 2.0, lamps=lamps, **kw)


def _at(enc, x, y, z, normal=(0.0, 0.0, 1.0), q="uvb_w_m2"):
    return float(point_values(enc, {"p": (x, y, z)}, (q,), normal=normal)[q].iloc[0])


def test_point_source_inverse_square_law():
    """E = I / d^2 below an isotropic point source (inverse-square law; e.g. Ryer,
    Light Measurement Handbook 1997)."""
    lamp = PointLamp("compact", FLAT, radiant_flux_w=4 * math.pi)
    intensity = _uvb_of(lamp)  # W/sr in the UVB band
    assert intensity == pytest.approx(35.0 / 550.0, rel=1e-9)  # 35 of 550 nm of a flat shape
    enc = _box(PlacedLamp(lamp, 1.0, 1.0, 1.5))
    for d in (0.1, 0.3, 0.75, 1.5):
        assert _at(enc, 1.0, 1.0, 1.5 - d) == pytest.approx(intensity / d**2, rel=1e-12)


def test_cosine_law_of_incidence():
    """E = I cos(i) / r^2 off axis and on tilted receivers (Lambert's cosine law)."""
    lamp = PointLamp("compact", FLAT, radiant_flux_w=4 * math.pi)
    i0 = _uvb_of(lamp)
    enc = _box(PlacedLamp(lamp, 1.0, 1.0, 1.0))
    for dx in (0.0, 0.2, 0.5, 0.9):
        r = math.hypot(dx, 1.0)
        assert _at(enc, 1.0 + dx, 1.0, 0.0) == pytest.approx(i0 * (1.0 / r) / r**2, rel=1e-12)
    # a receiver tilted 60 deg towards the lamp, directly below it
    n = (math.sin(math.radians(60)), 0.0, math.cos(math.radians(60)))
    assert _at(enc, 1.0, 1.0, 0.0, normal=n) == pytest.approx(i0 * 0.5, rel=1e-12)
    # facing away gets nothing
    assert _at(enc, 1.0, 1.0, 0.0, normal=(0, 0, -1)) == 0.0


@pytest.mark.parametrize("tilt", [0.0, 20.0])
def test_led_pattern_cos_m_off_axis(tilt):
    """I(theta) = I0 cos^m(theta), m from the beam angle (Moreno & Sun 2008), times
    cos(i) / r^2; straight down (fast path) and tilted (general path)."""
    e = EmitterType("uvb", 305, 12, 0.01, beam_angle_deg=60)
    lamp = LedArray("one", (e,), line_of_emitters(["uvb"], 0.01))
    m = lambertian_order(60)
    i0 = lamp_sources(lamp)[0].quantities["uvb_w_m2"]
    enc = _box(PlacedLamp(lamp, 1.0, 1.0, 0.5, tilt_deg=tilt))
    axis = np.array([0, math.sin(math.radians(tilt)), -math.cos(math.radians(tilt))])
    for x, y in [(1.0, 1.0), (1.1, 1.0), (1.0, 1.15), (0.8, 0.9)]:
        d = np.array([x - 1.0, y - 1.0, -0.5])
        r = np.linalg.norm(d)
        cos_t, cos_i = axis @ d / r, 0.5 / r
        expected = i0 * cos_t**m * cos_i / r**2
        # straight down runs in single precision (see geometry), tilted in double
        assert _at(enc, x, y, 0.0) == pytest.approx(expected, rel=1e-6 if tilt == 0 else 1e-10)


def test_finite_line_source_against_handbook_formula():
    """Aspect-factor method (lighting handbooks, e.g. IES Lighting Handbook): plane parallel to
    a diffuse line source of length L, point opposite one end at distance D:
    E = (I'/D) * 1/2 (beta + sin beta cos beta), beta = arctan(L / D); opposite the middle at
    D = L: E = 0.8636 I'/D (reference-data README)."""
    length = 1.2
    tube = TubeLamp("tube", length, FLAT, radiant_flux_w=10.0, n_segments=3000)
    i_per_m = _uvb_of(tube)
    assert i_per_m == pytest.approx(10.0 * 35 / 550 / (math.pi**2 * length), rel=1e-9)
    for d in (0.1, 0.3, 1.0):
        enc = _box(PlacedLamp(tube, 1.0, 1.0, d))
        beta = math.atan(length / d)
        expected = i_per_m / d * 0.5 * (beta + math.sin(beta) * math.cos(beta))
        assert _at(enc, 1.0 - length / 2, 1.0, 0.0) == pytest.approx(expected, rel=1e-4)
    enc = _box(PlacedLamp(tube, 1.0, 1.0, length))
    assert _at(enc, 1.0, 1.0, 0.0) == pytest.approx(0.8636 * i_per_m / length, rel=1e-4)


def test_line_source_distance_regimes():
    """Handbook rule of thumb (reference-data README): 1/D close to a tube (D <~ 0.2 L),
    1/D^2 far from it (D >~ 2-3 L)."""
    tube = TubeLamp("tube", 1.2, FLAT, radiant_flux_w=10.0, n_segments=2000)

    def below(d):
        return _at(Enclosure("big", 20, 20, 20, lamps=(PlacedLamp(tube, 10, 10, d),)), 10, 10, 0)

    assert below(0.02) / below(0.04) == pytest.approx(2.0, rel=0.05)
    assert below(5.0) / below(10.0) == pytest.approx(4.0, rel=0.02)


def test_tube_reference_distance():
    """A tube scaled to a spectrum measured below its middle reproduces that reading there
    (handbook aspect factor, used in reverse)."""
    measured = FLAT.scaled(0.002)
    expected = 35 * 0.002
    tube = TubeLamp("t", 0.9, measured, reference_distance_m=0.3)
    enc = _box(PlacedLamp(tube, 1.0, 1.0, 0.8))
    assert _at(enc, 1.0, 1.0, 0.5) == pytest.approx(expected, rel=1e-3)
    with pytest.raises(InputError, match="give exactly one of radiant_flux_w and reference"):
        lamp_sources(TubeLamp("t", 0.9, FLAT))


def _demo_bar(rows=2):
    uvb = EmitterType("uvb305", 305, 12, 0.004, asymmetry=1.2, beam_angle_deg=60)
    white = EmitterType("white", 450, 20, 0.2, shape="gaussian", beam_angle_deg=120)
    types = ["uvb305", "white", "uvb305", "uvb305", "white", "uvb305"]
    return LedArray("UVB LED bar", (uvb, white), line_of_emitters(types, 0.02, rows, 0.02))


def test_superposition_of_lamps():
    """Irradiances add (superposition of incoherent sources): two identical lamps in one
    place double every map; two lamps apart give the sum of their separate maps."""
    bar = _demo_bar()
    a, b = PlacedLamp(bar, 0.6, 1.0, 0.5, name="a"), PlacedLamp(bar, 1.3, 0.8, 0.6, name="b")
    one = compute_maps(_box(a), spacing_m=0.05)["floor"]
    two = compute_maps(_box(a, PlacedLamp(bar, 0.6, 1.0, 0.5, name="a2")), spacing_m=0.05)
    only_b = compute_maps(_box(b), spacing_m=0.05)["floor"]
    both = compute_maps(_box(a, b), spacing_m=0.05)["floor"]
    for q, v in one.values.items():
        np.testing.assert_allclose(two["floor"].values[q], 2 * v, rtol=1e-12)
        np.testing.assert_allclose(both.values[q], v + only_b.values[q], rtol=1e-12)


def test_symmetric_array_gives_symmetric_map():
    """A symmetric array centred over a symmetric grid gives a map with the same mirror
    symmetry (geometry)."""
    uvb = EmitterType("uvb", 305, 12, 0.004, beam_angle_deg=60)
    bar = LedArray("sym", (uvb,), line_of_emitters(["uvb"] * 6, 0.03, rows=2, row_pitch_m=0.04))
    enc = Enclosure("box", 1.2, 0.6, 0.6, lamps=(PlacedLamp(bar, 0.6, 0.3, 0.55),))
    m = compute_maps(enc, shape=(30, 60))["floor"]
    for v in m.values.values():
        np.testing.assert_allclose(v, v[:, ::-1], rtol=1e-6)  # single-precision fast path
        np.testing.assert_allclose(v, v[::-1, :], rtol=1e-6)


def test_mesh_and_screens():
    """Square mesh open area (1 - d/p)^2 (geometry; Burger et al. 2007 discuss mesh losses);
    a full screen scales every map by its transmission; a spectral screen that blocks below
    320 nm removes UVB and keeps illuminance."""
    assert mesh_transmission(0.001, 0.005) == pytest.approx(0.64)
    with pytest.raises(InputError, match="smaller than the pitch"):
        mesh_transmission(0.006, 0.005)
    bar = _demo_bar()
    lamp = PlacedLamp(bar, 1.0, 1.0, 0.62)
    bare = compute_maps(_box(lamp), spacing_m=0.1)["floor"]
    mesh = Screen("top", 0.6, transmission=0.64)
    meshed = compute_maps(_box(lamp, screens=(mesh,)), spacing_m=0.1)["floor"]
    flat_half = Screen("glass", 0.6, wavelength_nm=(200, 900), transmittance=(0.5, 0.5))
    halved = compute_maps(_box(lamp, screens=(flat_half,)), spacing_m=0.1)["floor"]
    blocker = Screen("glass", 0.6, wavelength_nm=(200, 319.9, 320, 900), transmittance=(0, 0, 1, 1))
    blocked = compute_maps(_box(lamp, screens=(blocker,)), spacing_m=0.1)["floor"]
    for q in bare.values:
        np.testing.assert_allclose(meshed.values[q], 0.64 * bare.values[q], rtol=1e-12)
        np.testing.assert_allclose(halved.values[q], 0.5 * bare.values[q], rtol=1e-9)
    assert np.all(blocked.values["uvb_w_m2"] == 0)
    np.testing.assert_allclose(
        blocked.values["illuminance_lux"], bare.values["illuminance_lux"], rtol=1e-9
    )


def test_bounded_screen_only_shades_rays_that_cross_it():
    lamp = PointLamp("c", FLAT, radiant_flux_w=1.0)
    guard = Screen("guard", 0.5, transmission=0.25, bounds_m=(0.0, 1.0, 0.0, 2.0))
    enc = _box(PlacedLamp(lamp, 1.0, 1.0, 1.0), screens=(guard,))
    bare = _box(PlacedLamp(lamp, 1.0, 1.0, 1.0))
    # ray to (0.2, 1, 0) crosses z=0.5 at x=0.6 (inside); ray to (1.8, 1, 0) at x=1.4 (outside)
    assert _at(enc, 0.2, 1.0, 0.0) == pytest.approx(0.25 * _at(bare, 0.2, 1.0, 0.0))
    assert _at(enc, 1.8, 1.0, 0.0) == pytest.approx(_at(bare, 1.8, 1.0, 0.0))


def test_spectral_screen_needs_a_lamp_spectrum():
    lamp = MeasuredLamp("m", (0.2, 0.3, 0.4), (6.0, 2.7, 1.5))
    glass = Screen("glass", 0.6, wavelength_nm=(250, 800), transmittance=(0.8, 0.8))
    enc = _box(PlacedLamp(lamp, 1.0, 1.0, 0.9), screens=(glass,))
    with pytest.raises(InputError, match="has a spectral transmittance but lamp source 'm'"):
        point_values(enc, {"p": (1.0, 1.0, 0.5)}, ("uvi",))


def test_surface_statistics_on_a_known_map():
    """Shares are counted over equal-area cells; uniformity = min / mean (lighting practice)."""
    s = Surface("platform", 0.2, 0.0, 0.4, 0.0, 0.1)
    uvi = np.array([[0.2, 1.0, 2.0, 3.0], [4.0, 5.0, 6.0, 0.4]])
    m = SurfaceMap(s, np.arange(4), np.arange(2), {"uvi": uvi}, uvi * 0, uvi < 0)
    st = surface_statistics(m, uvi_range=(2.0, 5.0), refuge_below_uvi=0.5)
    assert st.maximum["uvi"] == 6.0 and st.minimum["uvi"] == 0.2
    assert st.mean["uvi"] == pytest.approx(21.6 / 8)
    assert st.uniformity["uvi"] == pytest.approx(0.2 / (21.6 / 8))
    assert st.share_in_uvi_range == pytest.approx(4 / 8)
    assert st.share_refuge == pytest.approx(2 / 8)
    assert st.area_m2 == pytest.approx(0.04)
    with pytest.raises(InputError, match=r"UVI range \(5, 2\) is reversed"):
        surface_statistics(m, uvi_range=(5.0, 2.0))


def test_maps_statistics_table_and_point_values():
    bar = _demo_bar()
    rock = Surface("rock", 0.25, 0.8, 1.2, 0.9, 1.1)
    enc = _box(PlacedLamp(bar, 1.0, 1.0, 0.6), surfaces=(rock,))
    maps = compute_maps(enc, spacing_m=0.05)
    assert set(maps) == {"floor", "rock"}
    table = statistics_table(maps, (1.0, 4.0), 0.5)
    assert set(table["quantity"]) == {"uvi", "vitamin_d_w_m2", "uvb_w_m2", "illuminance_lux"}
    assert list(table.columns[:3]) == ["surface", "kind", "quantity"]
    pv = point_values(enc, {"rock centre": (1.0, 1.0, 0.25)})
    rock_max = surface_statistics(maps["rock"]).maximum["uvi"]
    assert rock_max <= pv["uvi"].iloc[0] <= 1.05 * rock_max  # cells sample around the centre
    assert 0 <= pv["incidence_deg"].iloc[0] < 10
    with pytest.raises(InputError, match="no surface 'shelf' in enclosure 'test box'"):
        compute_maps(enc, surfaces=["shelf"])
    with pytest.raises(InputError, match="unknown emitter"):
        compute_maps(enc, failed=["nope"])


def test_distance_law_fits():
    """Power law recovered exactly by log-log least squares; a point source 5 cm behind the
    face is recovered by the offset inverse-square fit."""
    d = np.array([0.2, 0.25, 0.3, 0.35, 0.4])
    fit = fit_distance_law(d, 0.3 * d**-1.7)
    assert (fit.coefficient, fit.exponent) == pytest.approx((0.3, 1.7), rel=1e-9)
    assert fit.residual_rms < 1e-9
    fit = fit_distance_law(d, 0.12 / (d + 0.05) ** 2, law="offset_square")
    assert fit.offset_m == pytest.approx(0.05, abs=1e-6)
    assert fit.relative_residual < 1e-6
    with pytest.raises(InputError, match="need readings at two or more different"):
        fit_distance_law([0.3, 0.3], [1.0, 1.0])
    with pytest.raises(InputError, match="unknown distance law 'cubic'"):
        fit_distance_law(d, d, law="cubic")


def test_measured_lamp_warns_and_flags_outside_its_range():
    lamp = MeasuredLamp("old lamp", (0.2, 0.3, 0.4), (6.0, 2.7, 1.5))
    enc = _box(PlacedLamp(lamp, 1.0, 1.0, 1.0))
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        inside = point_values(enc, {"p": (1.0, 1.0, 0.7)}, ("uvi",))
    assert not inside["extrapolated"].iloc[0]
    with pytest.warns(OutsideMeasuredRangeWarning, match="measured from 0.2 to 0.4 m"):
        far = point_values(enc, {"p": (1.0, 1.0, 0.0)}, ("uvi", "uvb_w_m2"))
    assert far["extrapolated"].iloc[0]
    assert math.isnan(far["uvb_w_m2"].iloc[0])  # no spectrum: only the measured quantity


def test_measured_lamp_reproduces_model_basking_uvi_within_10_percent():
    """Done-when test of issue 3: five on-axis readings under a lamp built with the emitter
    model, turned into a measured lamp (distance law + the lamp's spectral shape), give the
    model's own basking-surface UVI within 10 % inside the measured range."""
    bar = _demo_bar()
    model = PlacedLamp(bar, 0.6, 0.3, 0.55, name="bar")
    basking = Surface("basking", 0.25, 0.5, 0.7, 0.22, 0.38)
    enc = Enclosure("vivarium", 1.2, 0.6, 0.6, lamps=(model,), surfaces=(basking,))
    distances = np.array([0.20, 0.25, 0.30, 0.35, 0.40])
    readings = point_values(enc, {f"d{d}": (0.6, 0.3, 0.55 - d) for d in distances}, ("uvi",))
    measured = MeasuredLamp(
        "bar",
        tuple(distances),
        tuple(readings["uvi"]),
        spectrum=lamp_spectrum(bar),
        beam_angle_deg=60,
    )
    enc_measured = Enclosure(
        "vivarium",
        1.2,
        0.6,
        0.6,
        lamps=(PlacedLamp(measured, 0.6, 0.3, 0.55),),
        surfaces=(basking,),
    )
    with warnings.catch_warnings():
        warnings.simplefilter("error", OutsideMeasuredRangeWarning)
        got = surface_statistics(compute_maps(enc_measured, surfaces=["basking"])["basking"])
    want = surface_statistics(compute_maps(enc, surfaces=["basking"])["basking"])
    for stat in ("maximum", "mean", "minimum"):
        assert getattr(got, stat)["uvi"] == pytest.approx(getattr(want, stat)["uvi"], rel=0.10)
    assert got.mean["vitamin_d_w_m2"] == pytest.approx(want.mean["vitamin_d_w_m2"], rel=0.10)


def test_pattern_solid_angle_isotropic():
    """An isotropic source spreads its flux over 4 pi sr."""
    from audit_lib.sources.lamps import ISOTROPIC

    assert pattern_solid_angle(ISOTROPIC) == pytest.approx(4 * math.pi, rel=1e-6)
    assert line_shape(300, 300, 10) == 1.0


def test_enclosure_validation_messages():
    lamp = PointLamp("compact", FLAT, radiant_flux_w=1.0)
    with pytest.raises(InputError, match="lamp ids must be unique within an enclosure"):
        _box(PlacedLamp(lamp, 1, 1, 1), PlacedLamp(lamp, 1.5, 1, 1))
    with pytest.raises(InputError, match="surface extent is empty"):
        Surface("rock", 0.2, 0.5, 0.4, 0.0, 0.1)
    with pytest.raises(InputError, match="unknown surface kind 'shelf'"):
        Surface("rock", 0.2, 0.0, 0.4, 0.0, 0.1, kind="shelf")
    with pytest.raises(InputError, match="give either transmission or both wavelength_nm"):
        Screen("glass", 0.5)


def test_measured_lamp_from_readings_table():
    """Readings with distances (the readings-table contract) become a measured lamp; repeated
    distances are averaged; a power law through exact 1/d^2 data has exponent 2."""
    import pandas as pd

    from audit_lib.sources.lamps import measured_lamp_from_readings

    rows = [("tube", d, "uvi", 0.27 / d**2) for d in (0.2, 0.3, 0.3, 0.4)]
    rows += [("tube", float("nan"), "uvi", 9.0), ("other", 0.2, "uvi", 1.0)]
    table = pd.DataFrame(rows, columns=["lamp", "distance_m", "quantity", "value_si"])
    lamp = measured_lamp_from_readings(table, "tube")
    assert lamp.distance_m == (0.2, 0.3, 0.4) and lamp.quantity == "uvi"
    fit = fit_distance_law(lamp.distance_m, lamp.values)
    assert fit.exponent == pytest.approx(2.0) and fit.coefficient == pytest.approx(0.27)
    with pytest.raises(InputError, match="no readings with a distance for lamp 'spot'"):
        measured_lamp_from_readings(table, "spot")
    bad = MeasuredLamp("m", (0.2, 0.3), (2.0, 1.0), quantity="UVI")
    with pytest.raises(InputError, match="unknown quantity 'UVI' for the readings of lamp 'm'"):
        lamp_sources(bad)


def test_incidence_angle_is_the_geometric_angle():
    """With one point source, the mean incidence angle is the angle between the surface normal
    and the ray (geometry): 0 below the lamp, 45 deg at a lateral offset equal to the height."""
    lamp = PointLamp("compact", FLAT, radiant_flux_w=1.0)
    enc = _box(PlacedLamp(lamp, 1.0, 1.0, 0.5))
    pv = point_values(enc, {"below": (1.0, 1.0, 0.0), "off": (1.5, 1.0, 0.0)}, ("uvb_w_m2",))
    assert pv["incidence_deg"].tolist() == pytest.approx([0.0, 45.0], abs=1e-6)


def test_tube_has_no_reflector_factor():
    """The reflector factor went (issue 12): a reading under the fitting holds the reflector's
    gain, and a uniform front gain does not shape the beam (project decision)."""
    with pytest.raises(TypeError, match="reflector_factor"):
        TubeLamp("t", 0.6, FLAT, radiant_flux_w=1.0, reflector_factor=2.0)


def test_lamp_spectrum_matches_the_map_in_the_far_field():
    """Beyond about five times its size a lamp acts as a point source (lighting handbooks,
    'five-times rule'): the map below the bar at 2 m matches its far-field spectrum within 1 %."""
    from audit_lib.sources.emitters import weigh_spectral

    bar = _demo_bar()
    enc = Enclosure("tall", 3.0, 3.0, 3.0, lamps=(PlacedLamp(bar, 1.5, 1.5, 2.2),))
    far = lamp_spectrum(bar, 2.0)
    want = weigh_spectral(far.wavelength_nm, far.irradiance_w_m2_nm)
    got = point_values(enc, {"p": (1.5, 1.5, 0.2)})
    for q in ("uvi", "illuminance_lux"):
        assert got[q].iloc[0] == pytest.approx(want[q], rel=0.01)
