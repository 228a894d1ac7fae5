"""Tests of the spectral mismatch correction of broadband meters (audit_lib.light.meters)."""

import numpy as np
import pandas as pd
import pytest

from audit_lib.errors import InputError
from audit_lib.light import meters
from audit_lib.light.action_spectra import erythema_cie1998
from audit_lib.light.spectra import Spectrum

WL = np.arange(250.0, 420.5, 0.5)


def led(peak_nm, fwhm_nm=12.0, name="UVB LED 305nm"):
    sigma = fwhm_nm / 2.3548
    return Spectrum(WL, 1e-3 * np.exp(-0.5 * ((WL - peak_nm) / sigma) ** 2), name)


def test_meter_matching_erythema_needs_no_correction():
    """F* = 1 when the meter's relative response equals the target action spectrum
    (definition of the spectral mismatch correction factor, CIE S 017:2020 17-25-115;
    erythema spectrum of ISO 17166 / CIE S 007), whatever the lamp and calibration sun
    (ASTM G173-03 global tilt, pvlib's copy)."""
    meter = meters.MeterResponse(WL, 7.0 * erythema_cie1998(WL), "ideal")
    for peak in (295.0, 305.0, 313.0):
        result = meters.spectral_mismatch(meter, led(peak))
        assert result.correction_factor == pytest.approx(1.0, abs=1e-12)
        assert result.mismatch_factor == pytest.approx(1.0, abs=1e-12)
    assert result.calibration == "ASTM G173-03 global tilt"
    assert result.target == "erythema_cie1998"


def test_agrees_with_pvlib_for_a_broadband_reference():
    """pvlib.spectrum.calc_spectral_mismatch_field (IEC 60904-7 with a broadband
    reference device, i.e. a flat target response) returns MM = 1 / F* for the same
    inputs: pvlib's example c-Si response, ASTM G173 direct as the measured spectrum and
    ASTM G173 global as the reference."""
    import pvlib

    ref = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    wl = ref.index.to_numpy(float)
    sr = pvlib.spectrum.get_example_spectral_response()
    response = np.interp(wl, sr.index, sr.to_numpy(), left=0.0, right=0.0)
    meter = meters.MeterResponse(wl, response, "c-Si")
    field = Spectrum(wl, ref["direct"].to_numpy(), "direct")
    cal = Spectrum(wl, ref["global"].to_numpy(), "global")
    ours = meters.spectral_mismatch(meter, field, cal, target=np.ones_like)
    theirs = pvlib.spectrum.calc_spectral_mismatch_field(
        pd.Series(response, index=wl), e_sun=ref["direct"], e_ref=ref["global"])
    assert ours.mismatch_factor == pytest.approx(float(theirs), rel=1e-10)
    assert ours.mismatch_factor != pytest.approx(1.0, abs=1e-3)  # a real mismatch


def test_hand_computed_three_point_case():
    """Hand computation with the trapezoid rule on 300, 310, 320 nm (weights 5, 10, 5 nm):
    lamp E = (0, 1, 0), sun E = (1, 1, 1), meter s_m = (1, 0.5, 0.25), target
    s_t = (1, 0.1, 0.01). Lamp·s_t = 1, lamp·s_m = 5, sun·s_t = 6.05, sun·s_m = 11.25,
    so F* = (1 × 11.25) / (5 × 6.05) = 0.371901 (formula of CIE S 017:2020 17-25-115)."""
    wl = np.array([300.0, 310.0, 320.0])
    meter = meters.MeterResponse(wl, [1.0, 0.5, 0.25], "hand")
    lamp = Spectrum(wl, [0.0, 1.0, 0.0], "line")
    sun = Spectrum(wl, [1.0, 1.0, 1.0], "flat")
    result = meters.spectral_mismatch(meter, lamp, sun,
                                      target=lambda w: np.interp(w, wl, [1.0, 0.1, 0.01]))
    assert result.correction_factor == pytest.approx(11.25 / 30.25, rel=1e-12)
    assert result.mismatch_factor == pytest.approx(30.25 / 11.25, rel=1e-12)
    # only the shapes matter
    scaled = meters.spectral_mismatch(
        meters.MeterResponse(wl, [3.0, 1.5, 0.75]), lamp.scaled(40.0), sun.scaled(0.01),
        target=lambda w: np.interp(w, wl, [1.0, 0.1, 0.01]))
    assert scaled.correction_factor == pytest.approx(result.correction_factor, rel=1e-12)


def test_long_wave_meter_under_reads_short_wave_led():
    """A meter whose response is shifted 10 nm longer than erythema, calibrated on the sun,
    weights 295 nm less (relative to 313 nm) than erythema does, so the F* formula
    (CIE S 017:2020 17-25-115) must give F*(295) > F*(313): a direction check of the
    formula, not a published number."""
    meter = meters.MeterResponse(WL, erythema_cie1998(WL - 10.0), "shifted")
    f295 = meters.spectral_mismatch(meter, led(295.0)).correction_factor
    f313 = meters.spectral_mismatch(meter, led(313.0)).correction_factor
    assert f295 > f313 > 0


def test_correct_readings_keeps_raw_and_corrected():
    """Corrected = F* × raw (CIE S 017:2020 17-25-115); rows without a factor or of
    another quantity are left uncorrected (NaN), never shown as corrected."""
    readings = pd.DataFrame({
        "meter": ["m1", "m1", "m2", "m1"], "lamp": ["bar", "spot", "bar", "bar"],
        "quantity": ["uvi", "uvi", "uvi", "uvb_w_m2"], "value_si": [2.0, 3.0, 4.0, 0.5]})
    out = meters.correct_readings(readings, {("m1", "bar"): 1.25, "m1": 0.8})
    assert out["value_si_raw"].tolist() == [2.0, 3.0, 4.0, 0.5]
    assert out["value_si_corrected"].iloc[:2].tolist() == pytest.approx([2.5, 2.4])
    assert out["value_si_corrected"].iloc[2:].isna().all()
    assert readings.columns.tolist() == ["meter", "lamp", "quantity", "value_si"]


def test_errors_are_named(tmp_path):
    """Bad inputs raise InputError with the valid choices or the file line (project rule)."""
    meter = meters.MeterResponse(WL, erythema_cie1998(WL), "ideal")
    with pytest.raises(InputError, match="unknown target action spectrum 'erythemal'"):
        meters.spectral_mismatch(meter, led(305.0), target="erythemal")
    far = Spectrum(np.array([600.0, 700.0]), np.array([1.0, 1.0]), "red")
    with pytest.raises(InputError, match="lamp seen by the target integrates to zero"):
        meters.spectral_mismatch(meter, far)
    with pytest.raises(InputError, match="must be finite, non-negative"):
        meters.MeterResponse(WL, -erythema_cie1998(WL))
    good = tmp_path / "meter.csv"
    good.write_text("# relative response\nwavelength_nm,relative_response\n280,0.5\n300,1\n")
    response = meters.read_meter_response(good)
    assert response.name == "meter" and response.response.tolist() == [0.5, 1.0]
    bad = tmp_path / "bad.csv"
    bad.write_text("wavelength_nm,relative_response\n280,0.5\n300,x\n")
    with pytest.raises(InputError, match=r"bad\.csv:3: relative_response: expected two"):
        meters.read_meter_response(bad)
