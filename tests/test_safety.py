"""Lamp-level safety: the lamp on its axis, the indicative IEC 62471 risk group at a stated
distance, and whole-fitting reference readings of LED arrays (issue 12)."""

from __future__ import annotations

import math
import warnings
from pathlib import Path

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.light.metrics import (
    ACTINIC_RISK_LIMITS_W_M2,
    UVA_RISK_LIMITS_W_M2,
    hazard_risk_groups,
    spectrum_metrics,
    weighted_quantities,
)
from audit_lib.light.spectra import Spectrum
from audit_lib.scene.maps import Enclosure, PlacedLamp, point_values
from audit_lib.sources.axis import quantity_on_axis, scale_to_reading, spectrum_on_axis
from audit_lib.sources.emitters import EmitterType, flux_for_reading
from audit_lib.sources.lamps import EmitterPosition, LedArray, PointLamp, TubeLamp
from audit_lib.sources.safety import general_lighting_distance_m, lamp_risk_group

PARK = Path(__file__).resolve().parent.parent / "sample_sites" / "kestrel-moor-wildlife-park"
FLAT = Spectrum(np.arange(250.0, 801.0, 1.0), np.ones(551), name="flat")


def _quantities(spectrum):
    return {k: float(v) for k, v in weighted_quantities(spectrum.wavelength_nm,
                                                        spectrum.irradiance_w_m2_nm).items()}


def test_limits_follow_from_the_icnirp_dose_limits():
    """IEC 62471 Table 6.1 limits (FROM MEMORY) are the ICNIRP 2004 dose limits (read: 30 J m-2
    effective actinic; 10^4 J m-2 UVA to the eye) over 30 000 / 10 000 / 1 000 s and
    1 000 / 300 / 100 s: the recalled table is at least self-consistent with them."""
    assert ACTINIC_RISK_LIMITS_W_M2 == pytest.approx([30 / 30000, 30 / 10000, 30 / 1000])
    assert UVA_RISK_LIMITS_W_M2 == pytest.approx([1e4 / 1000, 1e4 / 300, 1e4 / 100], rel=0.02)
    assert hazard_risk_groups(0.0299, 9.0) == {"actinic": "risk group 2", "uva": "exempt",
                                               "overall": "risk group 2"}
    assert hazard_risk_groups(0.0001, 100.0)["overall"] == "risk group 3"


def test_point_lamp_on_axis_follows_the_inverse_square_law():
    """E = I / d^2 on the axis of a point source (inverse-square law; Ryer, Light Measurement
    Handbook 1997): a lamp known at 50 cm gives (0.5 / d)^2 times that at d."""
    lamp = PointLamp("spot", FLAT.scaled(0.01), reference_distance_m=0.5, beam_angle_deg=40)
    at_ref = _quantities(spectrum_on_axis(lamp, 0.5))
    at_200 = _quantities(spectrum_on_axis(lamp, 0.2))
    assert at_ref["uvb_w_m2"] == pytest.approx(0.01 * 35, rel=1e-9)
    for q in ("uvb_w_m2", "actinic_w_m2", "uva_w_m2"):
        assert at_200[q] == pytest.approx(at_ref[q] * (0.5 / 0.2) ** 2, rel=1e-9)


def test_tube_on_axis_matches_the_handbook_line_source_formula():
    """Below the middle of a diffuse line source of length L at distance D:
    E = 2 (I'/D) 1/2 (beta + sin beta cos beta), beta = arctan(L / 2D) (aspect-factor method of
    lighting handbooks), I' = flux / (pi^2 L) for a bare tube."""
    length, flux = 1.2, 10.0
    tube = TubeLamp("t", length, FLAT, radiant_flux_w=flux, n_segments=2000)
    per_length = flux / (math.pi**2 * length) * 35.0 / 550.0  # UVB share of a flat shape
    for d in (0.1, 0.2, 0.6):
        beta = math.atan(length / (2 * d))
        expected = per_length / d * (beta + math.sin(beta) * math.cos(beta))
        assert quantity_on_axis(tube, "uvb_w_m2", d) == pytest.approx(expected, rel=1e-4)


def test_axis_sum_agrees_with_the_map_kernel():
    """The lamp-level axis sum and the enclosure map kernel (scene.geometry) are two codes for
    the same superposition of point sources: they agree below an LED bar with tilted
    emitters (second implementation as the check)."""
    etype = EmitterType("uvb", 305.0, 12.0, 0.01, beam_angle_deg=60.0)
    emitters = tuple(EmitterPosition("uvb", x, 0.0, tilt_deg=t, azimuth_deg=0.0)
                     for x, t in ((-0.1, 20.0), (0.0, 0.0), (0.1, -20.0)))
    bar = LedArray("bar", (etype,), emitters)
    enc = Enclosure("box", 2.0, 2.0, 2.0, lamps=(PlacedLamp(bar, 1.0, 1.0, 1.5),))
    for d in (0.2, 0.5):
        got = point_values(enc, {"p": (1.0, 1.0, 1.5 - d)}, ("uvi", "actinic_w_m2"))
        for q in ("uvi", "actinic_w_m2"):
            assert quantity_on_axis(bar, q, d) == pytest.approx(got[q].iloc[0], rel=1e-9)


def test_whole_fitting_reading_is_not_n_times_the_output():
    """Four emitters on one spot (a puck): a whole-fitting reading V at 20 cm gives V there,
    and equals the per-emitter form with V / 4 per emitter (superposition of point sources);
    entering V per emitter gives 4 V -- the mistake the fitting form avoids."""
    etype = EmitterType("uvb", 310.0, 12.0, 1.0, beam_angle_deg=100.0)
    places = tuple(EmitterPosition("uvb", 0.0, 0.0) for _ in range(4))
    fitting = scale_to_reading(LedArray("puck", (etype,), places), "uvi", 0.3, 0.2)
    assert quantity_on_axis(fitting, "uvi", 0.2) == pytest.approx(0.3, rel=1e-9)
    per_emitter = LedArray("puck", (flux_for_reading(etype, 0.3 / 4, 0.2, "uvi"),), places)
    assert fitting.emitter_types[0].radiant_flux_w == pytest.approx(
        per_emitter.emitter_types[0].radiant_flux_w, rel=1e-9)
    wrong = LedArray("puck", (flux_for_reading(etype, 0.3, 0.2, "uvi"),), places)
    assert quantity_on_axis(wrong, "uvi", 0.2) == pytest.approx(4 * 0.3, rel=1e-9)
    with pytest.raises(InputError, match="applies to LED arrays"):
        scale_to_reading(PointLamp("p", FLAT, radiant_flux_w=1.0), "uvi", 1.0, 0.2)


def test_whole_fitting_reading_keeps_the_ratio_of_emitter_types():
    """Two emitter types scaled together keep their flux ratio (one common factor)."""
    uvb = EmitterType("uvb", 305.0, 12.0, 0.02)
    white = EmitterType("white", 450.0, 20.0, 0.5)
    array = LedArray("a", (uvb, white), (EmitterPosition("uvb", -0.02, 0.0),
                                         EmitterPosition("white", 0.02, 0.0)))
    scaled = scale_to_reading(array, "uvi", 2.0, 0.3)
    ratio = scaled.emitter_types[1].radiant_flux_w / scaled.emitter_types[0].radiant_flux_w
    assert ratio == pytest.approx(25.0, rel=1e-12)


def test_general_lighting_distance_is_the_500_lux_distance():
    """An isotropic point lamp of luminous intensity I_v gives 500 lx at d = sqrt(I_v / 500)
    (inverse-square law); IEC 62471 classifies general lighting lamps there, but not nearer
    than 200 mm (from memory)."""
    lamp = PointLamp("bulb", FLAT, radiant_flux_w=4 * math.pi)
    intensity_cd = _quantities(FLAT)["illuminance_lux"] / 550.0  # 1 W/sr over 550 nm
    assert general_lighting_distance_m(lamp) == pytest.approx(
        math.sqrt(intensity_cd / 500.0), rel=1e-6)
    dim = PointLamp("dim", FLAT, radiant_flux_w=0.01)
    assert general_lighting_distance_m(dim) == pytest.approx(0.2)
    result = lamp_risk_group(lamp, general_lighting=True)
    assert result["risk_group_distance_rule"] == "500_lux"
    assert result["illuminance_lux_at_distance"] == pytest.approx(500.0, rel=1e-6)


def test_demo_metal_halide_spot_is_group_3_at_200_mm():
    """Issue 12: the demo park's 70 W metal-halide spot gives E_S of about 0.035 W m-2 at its
    own 50 cm reading; moved to 200 mm by the inverse-square law of its point-lamp model it is
    far above the 0.03 W m-2 limit of group 2 (IEC 62471 Table 6.1, from memory): group 3."""
    from audit_lib.pipeline.assemble import build_lamp
    from audit_lib.site.folder import load_site

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        site = load_site(PARK)
    lamp = build_lamp(site, site.lamp_model("mh-uvb-70w"))
    result = lamp_risk_group(lamp)
    at_reading = _quantities(spectrum_on_axis(lamp, 0.5))["actinic_w_m2"]
    assert at_reading == pytest.approx(0.035, abs=0.002)
    assert result["risk_group_distance_m"] == 0.2
    assert result["risk_group_distance_rule"] == "200_mm"
    assert result["actinic_w_m2_at_distance"] == pytest.approx(at_reading * 6.25, rel=1e-9)
    assert result["risk_group"] == "risk group 3"
    assert result["actinic_risk_group"] == "risk group 3"
    assert result["keeper_limit_s_at_distance"] == pytest.approx(
        30.0 / result["actinic_w_m2_at_distance"])


def test_measured_spectrum_is_moved_to_200_mm_or_gets_no_group():
    """A spectrum measured at 0.4 m is moved to 200 mm by the inverse-square law (factor 4,
    stated as an assumption); without a distance the risk group is None with the reason."""
    wl = np.arange(250.0, 801.0, 1.0)
    spectrum = Spectrum(wl, np.where(wl < 400, 1e-3, 1e-4), name="lamp")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        known = spectrum_metrics(spectrum, distance_m=0.4)
        unknown = spectrum_metrics(spectrum)
    assert known["actinic_w_m2_at_distance"] == pytest.approx(4 * known["actinic_w_m2"])
    assert known["risk_group"] == hazard_risk_groups(4 * known["actinic_w_m2"],
                                                     4 * known["uva_w_m2"])["overall"]
    assert known["risk_group_scaling"] == "inverse_square"
    assert unknown["risk_group"] is None and unknown["risk_group_distance_m"] is None
    assert unknown["risk_group_missing"] == "no_measurement_distance"
    with pytest.raises(InputError, match="distance must be positive"):
        spectrum_metrics(spectrum, distance_m=0.0)
