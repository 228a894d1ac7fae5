"""Spectrum → weighted quantities, against published definitions and independent libraries."""

import math

import numpy as np
import pytest

from audit_lib.light import metrics as m
from audit_lib.light.spectra import Spectrum


def _analytic_erythemal_integral():
    """∫ s_er dλ over 250-400 nm in closed form from the ISO 17166 formula."""
    k1, k2 = 0.094 * math.log(10), 0.015 * math.log(10)
    part1 = 298 - 250
    part2 = (1 - 10 ** (0.094 * (298 - 328))) / k1
    part3 = 10 ** (0.015 * (140 - 328)) * (1 - 10 ** (-0.015 * 72)) / k2
    return part1 + part2 + part3


def test_uvi_of_flat_spectrum_by_hand():
    """UVI = 40 m²/W × ∫E s_er dλ (WHO 2002); for E = 1 mW/m²/nm the integral of the ISO 17166
    spectrum is done by hand in closed form (about 55.4 nm)."""
    wl = np.arange(240.0, 410.0001, 0.05)
    e = np.full(wl.size, 1e-3)
    q = m.weighted_quantities(wl, e)
    expected = 40 * 1e-3 * _analytic_erythemal_integral()
    assert float(q["uvi"]) == pytest.approx(expected, rel=1e-4)


def test_band_totals_of_flat_spectrum():
    """Band limits (CIE / ISO 21348): UVB 280-315, UVA 315-400, UVA2 315-340, UVA1 340-400.
    A flat 1 W/m²/nm spectrum gives the band widths in W/m² exactly, on any grid."""
    wl = np.array([200.0, 283.3, 301.0, 317.7, 339.9, 371.2, 404.4, 900.0])
    q = m.weighted_quantities(wl, np.ones(wl.size))
    assert float(q["uvb_w_m2"]) == pytest.approx(35.0)
    assert float(q["uva_w_m2"]) == pytest.approx(85.0)
    assert float(q["uva2_w_m2"]) == pytest.approx(25.0)
    assert float(q["uva1_w_m2"]) == pytest.approx(60.0)
    assert float(q["uvc_w_m2"]) == pytest.approx(80.0)
    assert float(q["visible_w_m2"]) == pytest.approx(400.0)


def test_nonuniform_steps_integrate_correctly():
    """Trapezoid rule on non-uniform steps is exact for a piecewise-linear spectrum
    (handbook numerical integration); compared with a uniform fine grid of the same curve."""
    rng = np.random.default_rng(1)
    coarse = np.unique(np.concatenate([[250.0, 420.0], rng.uniform(250, 420, 40)]))
    e = rng.uniform(0, 1, coarse.size)
    fine = np.linspace(250, 420, 170001)
    q_coarse = m.weighted_quantities(coarse, e)
    q_fine = m.weighted_quantities(fine, np.interp(fine, coarse, e))
    for key in ("uvb_w_m2", "uva_w_m2", "uva1_w_m2"):
        assert float(q_coarse[key]) == pytest.approx(float(q_fine[key]), rel=1e-6)


def test_sed_and_one_hour_at_uvi_one():
    """1 SED = 100 J/m² erythemal (CIE S 007); one hour at UVI 1 = 0.025 W/m² × 3600 s =
    90 J/m² = 0.9 SED (WHO 2002 + CIE S 007)."""
    assert m.SED_J_M2 == 100.0
    dose = float(m.erythemal_from_uv_index(1.0)) * 3600.0
    assert dose == pytest.approx(90.0)
    assert dose / m.SED_J_M2 == pytest.approx(0.9)


@pytest.fixture(scope="module")
def astm_g173():
    pvlib = pytest.importorskip("pvlib")
    ref = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    return ref.index.to_numpy(float), ref["global"].to_numpy(float)


def test_astm_g173_uvi_two_independent_ways(astm_g173):
    """UVI of the ASTM G173-03 global tilt spectrum (pvlib's copy): our integration matrix
    against a plain numpy trapezoid with the ISO 17166 formula written out here; both near
    the 3.690 computed in shared/reference-data."""
    wl, e = astm_g173
    s_er = np.where(wl <= 298, 1.0, np.where(wl <= 328, 10 ** (0.094 * (298 - wl)),
                                             10 ** (0.015 * (140 - wl))))
    inside = (wl >= 250) & (wl <= 400)
    plain = 40 * np.trapezoid(e[inside] * s_er[inside], wl[inside])
    ours = float(m.weighted_quantities(wl, e)["uvi"])
    assert ours == pytest.approx(plain, rel=5e-3)
    assert ours == pytest.approx(3.690, abs=0.005)


def test_astm_g173_reference_values(astm_g173):
    """ASTM G173 computed check values (shared/reference-data): UVB 0.682, UVA 45.42 W/m²,
    vitamin-D/erythemal 1.587, E_S about 20 mW/m², 280-290 nm share of UVB about 4e-9."""
    sun = m.sun_reference()
    assert sun["uvb_w_m2"] == pytest.approx(0.682, abs=0.001)
    assert sun["uva_w_m2"] == pytest.approx(45.42, abs=0.01)
    assert sun["vitd_to_erythemal_ratio"] == pytest.approx(1.587, abs=0.001)
    assert sun["actinic_w_m2"] == pytest.approx(0.020, abs=0.001)
    assert sun["short_uvb_fraction"] < 1e-8


@pytest.mark.parametrize(("illuminant", "cct"), [("A", 2856.0), ("D65", 6504.0)])
def test_illuminance_and_cct_against_colour_science(illuminant, cct):
    """Illuminance and CCT of CIE illuminants A (2856 K) and D65 (about 6504 K), checked
    against colour-science (luminous_flux with K_m = 683.002; CIE 15:2018 nominal CCTs)."""
    colour = pytest.importorskip("colour")
    sd = colour.SDS_ILLUMINANTS[illuminant]
    lux = float(m.weighted_quantities(sd.wavelengths, sd.values)["illuminance_lux"])
    assert lux == pytest.approx(colour.luminous_flux(sd, K_m=683.002), rel=1e-4)
    assert m.correlated_colour_temperature(sd.wavelengths, sd.values) == pytest.approx(cct, abs=3)


def test_vectorised_equals_per_spectrum():
    """Many spectra in one call give exactly what one call per spectrum gives."""
    wl = np.arange(250.0, 801.0)
    rng = np.random.default_rng(2)
    many = rng.uniform(0, 0.01, (5, wl.size))
    together = m.weighted_quantities(wl, many)
    for i in range(5):
        single = m.weighted_quantities(wl, many[i])
        for key in m.QUANTITIES:
            assert float(together[key][i]) == pytest.approx(float(single[key]), rel=1e-12)


@pytest.mark.parametrize(("uvi", "category"), [
    (0.0, "low"), (2.49, "low"), (2.5, "moderate"), (5.4, "moderate"), (5.5, "high"),
    (7.49, "high"), (7.5, "very high"), (10.49, "very high"), (10.5, "extreme")])
def test_who_categories(uvi, category):
    """WHO 2002 Global Solar UV Index: low 0-2, moderate 3-5, high 6-7, very high 8-10,
    extreme 11+; rounding to a whole number first is common practice."""
    assert m.uvi_category(uvi) == category


def test_keeper_limits():
    """ICNIRP 2004: t_max = 30 J/m² / E_S; IEC 62471 §4.3.2: UVA eye 1e4 J/m² up to 1000 s,
    10 W/m² beyond."""
    assert float(m.keeper_limit_s(0.001)) == pytest.approx(30000.0)
    assert math.isinf(float(m.keeper_limit_s(0.0)))
    assert float(m.uva_eye_limit_s(20.0)) == pytest.approx(500.0)
    assert math.isinf(float(m.uva_eye_limit_s(10.0)))


@pytest.mark.parametrize(("es", "uva", "group"), [
    (0.0005, 1, "exempt"), (0.001, 1, "risk group 1"), (0.0029, 1, "risk group 1"),
    (0.01, 1, "risk group 2"), (0.05, 1, "risk group 3"), (0.0001, 40, "risk group 2")])
def test_indicative_risk_groups(es, uva, group):
    """IEC 62471:2006 Table 6.1 limits (from memory, labelled indicative): actinic
    0.001/0.003/0.03 W/m², UVA 10/33/100 W/m²; the higher group wins."""
    assert m.risk_group(es, uva) == group


def test_peak_shape_of_gaussian():
    """A Gaussian of standard deviation σ has FWHM 2√(2 ln 2)σ (handbook); symmetric → 1."""
    wl = np.arange(250.0, 400.0, 0.25)
    e = np.exp(-0.5 * ((wl - 305.0) / 4.0) ** 2)
    peak, fwhm, asym = (float(x) for x in m.peak_shape(wl, e))
    assert peak == pytest.approx(305.0)
    assert fwhm == pytest.approx(2 * math.sqrt(2 * math.log(2)) * 4.0, rel=2e-3)
    assert asym == pytest.approx(1.0, rel=2e-3)


def test_peak_shape_of_split_gaussian():
    """Split Gaussian with σ_short = 6, σ_long = 3 nm: asymmetry = 2 (definition)."""
    wl = np.arange(250.0, 400.0, 0.1)
    sigma = np.where(wl < 310, 6.0, 3.0)
    e = np.exp(-0.5 * ((wl - 310.0) / sigma) ** 2)
    _, fwhm, asym = (float(x) for x in m.peak_shape(wl, e))
    assert asym == pytest.approx(2.0, rel=5e-3)
    assert fwhm == pytest.approx(math.sqrt(2 * math.log(2)) * 9.0, rel=5e-3)


def test_spectrum_metrics_keys_and_null_visible():
    """A UV-only spectrum has no illuminance or CCT (null), and a coverage note."""
    wl = np.arange(280.0, 400.5, 0.5)
    e = 1e-3 * np.exp(-0.5 * ((wl - 308) / 5) ** 2)
    with pytest.warns(m.CoverageWarning, match="illuminance_lux"):
        result = m.spectrum_metrics(Spectrum(wl, e, "led"))
    assert result["cct_k"] is None and result["illuminance_lux"] is None
    for key in ("uvi", "uvi_category", "uvc_w_m2", "uvb_w_m2", "uva_w_m2", "uva1_w_m2",
                "uva2_w_m2", "erythemal_w_m2", "vitamin_d_w_m2", "actinic_w_m2",
                "keeper_limit_s", "risk_group", "short_uvb_fraction", "vitd_to_erythemal_ratio",
                "sun_vitd_to_erythemal_ratio", "peak_nm", "fwhm_nm", "asymmetry"):
        assert key in result
    assert result["peak_nm"] == pytest.approx(308.0)


def test_batch_metrics_equal_single_spectrum_metrics():
    """The vectorised path and the one-spectrum path agree value by value (same method)."""
    wl = np.arange(250.0, 801.0)
    rng = np.random.default_rng(3)
    many = (np.exp(-0.5 * ((wl - 305) / 6) ** 2) * rng.uniform(1e-3, 1e-2, (3, 1))
            + 0.1 * (500 / wl) ** 5 / np.expm1(1.4388e7 / (wl * 3000.0))
            * np.expm1(1.4388e7 / (500 * 3000.0)) * rng.uniform(0.5, 2, (3, 1)))  # Planck 3000 K
    together = m.batch_metrics(wl, many)
    for i in range(3):
        single = m.spectrum_metrics(Spectrum(wl, many[i]))
        for key in ("uvi", "vitamin_d_w_m2", "cct_k", "fwhm_nm", "keeper_limit_s"):
            expected = float(together[key][i])
            if math.isnan(expected):
                assert single[key] is None
            else:
                assert single[key] == pytest.approx(expected, rel=1e-12)
        assert single["cct_k"] == pytest.approx(3000, abs=15)
