"""Emitter line shapes, Lambertian patterns, fitting and scaling."""

from __future__ import annotations

import math
from dataclasses import replace

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from audit_lib.errors import InputError
from audit_lib.light.spectra import Spectrum
from audit_lib.sources.emitters import (
    LINE_SHAPES,
    AngularPattern,
    EmitterType,
    PhosphorBand,
    emitter_spectrum,
    fit_line_shape,
    flux_for_reading,
    lambertian_order,
    line_shape,
    pattern_relative_intensity,
    pattern_solid_angle,
    read_angular_pattern,
    relative_spectrum,
    weigh_emitter,
)


def _half_max_points(peak, fwhm, asym, shape):
    def f(x):
        return line_shape(x, peak, fwhm, asym, shape) - 0.5

    left = optimize.brentq(f, peak - 10 * fwhm, peak)
    right = optimize.brentq(f, peak, peak + 10 * fwhm)
    return left, right


@pytest.mark.parametrize("shape", LINE_SHAPES)
@pytest.mark.parametrize("asym", [0.6, 1.0, 1.35, 2.5])
def test_line_shape_half_maximum_points_give_fwhm_and_asymmetry(shape, asym):
    """Definition of FWHM (full width at half maximum) and of the asymmetry factor
    (short-side / long-side half width) as stated in issue 3; roots found with scipy brentq."""
    peak, fwhm = 305.0, 12.0
    left, right = _half_max_points(peak, fwhm, asym, shape)
    assert right - left == pytest.approx(fwhm, rel=1e-9)
    assert (peak - left) / (right - peak) == pytest.approx(asym, rel=1e-9)
    assert line_shape(peak, peak, fwhm, asym, shape) == pytest.approx(1.0)
    grid = np.linspace(peak - 50, peak + 50, 20001)
    assert grid[np.argmax(line_shape(grid, peak, fwhm, asym, shape))] == pytest.approx(peak)


def test_symmetric_lorentzian_is_the_cauchy_distribution():
    """scipy.stats.cauchy with scale = HWHM is the Lorentzian; normalised to 1 at the peak."""
    wl = np.linspace(250, 360, 1101)
    expected = stats.cauchy.pdf(wl, loc=305, scale=6.0) * np.pi * 6.0
    np.testing.assert_allclose(line_shape(wl, 305, 12.0, shape="lorentzian"), expected,
                               rtol=1e-12)


def test_symmetric_gaussian_is_the_normal_distribution():
    """scipy.stats.norm with sigma = FWHM / (2 sqrt(2 ln 2)) (textbook relation)."""
    wl = np.linspace(250, 360, 1101)
    sigma = 12.0 / (2 * math.sqrt(2 * math.log(2)))
    expected = stats.norm.pdf(wl, 305, sigma) * sigma * math.sqrt(2 * math.pi)
    np.testing.assert_allclose(line_shape(wl, 305, 12.0, shape="gaussian"), expected, rtol=1e-12)


def test_sigmoid_lorentzian_reproduces_stancik_brauns_form():
    """Stancik & Brauns 2008 (Vib. Spectrosc. 47:66), eq. for the asymmetric Lorentzian:
    L = 1 / (1 + 4 ((x - x0) / gamma(x))^2), gamma(x) = 2 gamma0 / (1 + exp(a (x - x0))).
    Its true FWHM and asymmetry (found numerically) fed to line_shape give the same curve."""
    x0, gamma0, a = 310.0, 10.0, 0.08
    wl = np.linspace(260, 380, 4001)

    def paper(x):
        gamma = 2 * gamma0 / (1 + np.exp(a * (x - x0)))
        return 1 / (1 + 4 * ((x - x0) / gamma) ** 2)

    left = optimize.brentq(lambda x: paper(x) - 0.5, x0 - 50, x0)
    right = optimize.brentq(lambda x: paper(x) - 0.5, x0, x0 + 50)
    ours = line_shape(wl, x0, right - left, (x0 - left) / (right - x0), "sigmoid_lorentzian")
    np.testing.assert_allclose(ours, paper(wl), atol=1e-9)


def test_line_shape_rejects_unknown_shape_and_bad_width():
    with pytest.raises(InputError, match="unknown line shape 'voigt'"):
        line_shape(300, 300, 10, shape="voigt")
    with pytest.raises(InputError, match="FWHM must be positive"):
        line_shape(300, 300, 0)
    with pytest.raises(InputError, match="asymmetry must be positive"):
        line_shape(300, 300, 10, asymmetry=-1)


def test_lambertian_order_moreno_sun():
    """Moreno & Sun 2008 (Opt. Express 16:1808): m = -ln 2 / ln cos(theta_half);
    m = 1 at 120 deg (Lambertian); 4.819 at 60 deg (reference-data README, computed)."""
    assert lambertian_order(120.0) == pytest.approx(1.0, rel=1e-12)
    assert lambertian_order(60.0) == pytest.approx(4.819, abs=5e-4)
    for angle in (20.0, 45.0, 90.0, 150.0):
        m = lambertian_order(angle)
        # the definition: intensity is half at half the beam angle
        assert math.cos(math.radians(angle / 2)) ** m == pytest.approx(0.5, rel=1e-12)


@pytest.mark.parametrize("angle", [0.0, 180.0, -10.0])
def test_lambertian_order_rejects_impossible_angles(angle):
    with pytest.raises(InputError, match="beam angle must be between 0 and 180 degrees"):
        lambertian_order(angle)


@pytest.mark.parametrize("beam", [120.0, 60.0, 25.0])
def test_pattern_integrates_to_flux_over_hemisphere(beam):
    """Radiant flux = integral of I(theta) over the hemisphere, 2 pi sin(theta) d(theta)
    (definition of radiant intensity; scipy.integrate.quad)."""
    flux_w = 0.37
    m = lambertian_order(beam)
    i0 = flux_w / pattern_solid_angle(m)
    total, _ = integrate.quad(
        lambda t: i0 * math.cos(t) ** m * 2 * math.pi * math.sin(t), 0, math.pi / 2
    )
    assert total == pytest.approx(flux_w, rel=1e-10)


def test_tabulated_pattern_from_csv(tmp_path):
    """A cos^m table read from CSV has the solid angle 2 pi / (m + 1) (Moreno & Sun 2008)."""
    m = lambertian_order(60.0)
    angles = np.arange(0, 91, 1.0)
    path = tmp_path / "narrow.csv"
    lines = ["# invented datasheet pattern", "angle_deg,relative_intensity"]
    lines += [f"{a:g},{50 * math.cos(math.radians(a)) ** m:.9f}" for a in angles]
    path.write_text("\n".join(lines) + "\n")
    pattern = read_angular_pattern(path)
    assert pattern.relative_intensity.max() == 1.0
    assert pattern_solid_angle(pattern) == pytest.approx(2 * math.pi / (m + 1), rel=1e-3)
    c = np.cos(np.radians([0, 30, 60, 89.5, 120]))
    np.testing.assert_allclose(
        pattern_relative_intensity(pattern, c), pattern_relative_intensity(m, c), atol=2e-4
    )


def test_pattern_csv_errors_name_file_and_line(tmp_path):
    path = tmp_path / "bad.csv"
    path.write_text("angle,intensity\n0,1\n")
    with pytest.raises(InputError, match=r"bad\.csv:1: expected header"):
        read_angular_pattern(path)
    path.write_text("angle_deg,relative_intensity\n0,1\n10,x\n")
    with pytest.raises(InputError, match=r"bad\.csv:3: not two numbers"):
        read_angular_pattern(path)
    with pytest.raises(InputError, match="must start at 0"):
        AngularPattern(np.array([5.0, 10.0]), np.array([1.0, 0.5]))


def test_relative_spectrum_has_unit_area_and_phosphor_shares():
    """Shares are shares of radiant flux: integral over each band = its share (by construction
    of a normalised mixture; checked with the trapezoid rule)."""
    e = EmitterType(
        "white", 450, 20, 1.0, shape="gaussian", phosphor_bands=(PhosphorBand(600, 60, 0.6),)
    )
    wl, rel = relative_spectrum(e)
    assert np.trapezoid(rel, wl) == pytest.approx(1.0, rel=1e-9)
    blue = wl < 520
    assert np.trapezoid(np.where(blue, rel, 0), wl) == pytest.approx(0.4, abs=0.01)


def test_flux_for_reading_uses_inverse_square_law_on_axis():
    """Inverse-square law of a point source on its axis: E(d) = I / d^2, I = flux / Omega with
    Omega = 2 pi / (m + 1) (Moreno & Sun 2008)."""
    e = EmitterType("uvb", 305, 12, 0.001, beam_angle_deg=60)
    scaled = flux_for_reading(e, 3.0, 0.3, "uvi")
    assert weigh_emitter(scaled)["uvi"] / 0.3**2 == pytest.approx(3.0, rel=1e-12)
    s = emitter_spectrum(scaled, 0.3)
    flux = (
        np.trapezoid(s.irradiance_w_m2_nm, s.wavelength_nm)
        * 0.3**2
        * pattern_solid_angle(lambertian_order(60))
    )
    assert flux == pytest.approx(scaled.radiant_flux_w, rel=1e-9)
    with pytest.raises(InputError, match="unknown quantity 'uvx'"):
        flux_for_reading(e, 1.0, 0.3, "uvx")
    red = EmitterType("red", 630, 10, 0.1, shape="gaussian")
    with pytest.raises(InputError, match="gives no uvb_w_m2"):
        flux_for_reading(red, 1.0, 0.3, "uvb_w_m2")


def test_fit_recovers_synthetic_emitter_parameters():
    """Least-squares fit (scipy.optimize.least_squares) of a synthetic line with 0.5 % noise
    recovers the parameters it was made with; the residual matches the noise level."""
    rng = np.random.default_rng(7)
    wl = np.arange(260.0, 360.0, 0.5)
    for shape, (peak, fwhm, asym) in {
        "lorentzian": (305.4, 11.3, 1.3),
        "gaussian": (296.8, 8.0, 0.8),
        "sigmoid_lorentzian": (312.0, 15.0, 1.6),
    }.items():
        clean = 0.02 * line_shape(wl, peak, fwhm, asym, shape)
        noisy = clean + rng.normal(0, 1e-4, wl.size)
        fit = fit_line_shape(Spectrum(wl, noisy), shape=shape)
        assert fit.peak_nm == pytest.approx(peak, abs=0.05)
        assert fit.fwhm_nm == pytest.approx(fwhm, rel=0.01)
        assert fit.asymmetry == pytest.approx(asym, rel=0.02)
        assert fit.residual_rms == pytest.approx(1e-4, rel=0.2)
        assert fit.relative_residual < 0.01


def test_fit_needs_samples_in_range():
    s = Spectrum(np.array([500.0, 600.0, 700.0]), np.array([1.0, 2.0, 1.0]), name="white")
    with pytest.raises(InputError, match="fewer than 5 positive samples between 250 and 420 nm"):
        fit_line_shape(s)


def test_emitter_type_validation():
    with pytest.raises(InputError, match="radiant flux must be zero or positive"):
        EmitterType("x", 305, 10, -1.0)
    with pytest.raises(InputError, match="phosphor shares must be >= 0 and add up to at most 1"):
        EmitterType("x", 450, 20, 1.0, phosphor_bands=(PhosphorBand(560, 100, 1.2),))
    e = EmitterType("x", 305, 10, 1.0)
    assert replace(e, radiant_flux_w=2.0).radiant_flux_w == 2.0


def _physical_uvb_led_line(grid_nm, peak_nm=310.0, fwhm_nm=12.0):
    """An LED line from semiconductor physics, on ``grid_nm`` [nm], peak 1.

    Ideal band-to-band emission sqrt(E - Eg) exp(-(E - Eg)/kT) at 300 K (Schubert,
    Light-Emitting Diodes, 2nd ed. 2006, ch. 5) convolved with a Gaussian spread of the
    band gap (alloy broadening; Chen et al., "Spectral shape and broadening of emission from
    AlGaInP light-emitting diodes", found that spread nearly Gaussian), the spread chosen so
    the line has the wanted FWHM in wavelength.
    """
    from scipy.optimize import brentq

    hc, kt, step = 1239.84198, 0.025852, 1e-4  # eV nm, eV at 300 K, eV

    def line(sigma):
        x = np.arange(0.0, 60 * kt, step)
        g = np.arange(-8 * sigma, 8 * sigma + step / 2, step)
        conv = np.convolve(np.sqrt(x) * np.exp(-x / kt), np.exp(-0.5 * (g / sigma) ** 2))
        offset = np.arange(conv.size) * step - 8 * sigma
        energy = hc / peak_nm + offset - offset[np.argmax(conv)]
        wl, per_nm = hc / energy, conv * energy**2 / hc  # dE/dlambda = E^2 / hc
        order = np.argsort(wl)
        return wl[order], per_nm[order]

    def width(sigma):
        wl, y = line(sigma)
        above = wl[y >= y.max() / 2]
        return above.max() - above.min() - fwhm_nm

    wl, y = line(brentq(width, 0.005, 0.2))
    out = np.interp(grid_nm, wl, y, left=0.0, right=0.0)
    return out / out.max()


def test_gaussian_default_is_closer_to_a_physical_led_line_than_lorentzian():
    """Why Gaussian is the default line shape: for a 310 nm, 12 nm FWHM UVB LED modelled from
    semiconductor physics (Schubert 2006 ideal line, Gaussian alloy broadening), the Gaussian
    of the same peak and FWHM gets the short-wave UVB share (280-290 nm) and the actinic
    hazard E_S far closer than the Lorentzian, whose 1/x^2 tail inflates both (issue 12)."""
    from audit_lib.light.metrics import weighted_quantities

    grid = np.arange(200.0, 830.5, 0.5)

    def figures(y):
        q = weighted_quantities(grid, y / np.trapezoid(y, grid))
        return np.array([float(q["short_uvb_w_m2"] / q["uvb_w_m2"]), float(q["actinic_w_m2"])])

    physical = figures(_physical_uvb_led_line(grid))
    default = figures(line_shape(grid, 310.0, 12.0))
    lorentz = figures(line_shape(grid, 310.0, 12.0, shape="lorentzian"))
    assert np.all(np.abs(np.log(default / physical)) < np.abs(np.log(lorentz / physical)))
    assert default[1] == pytest.approx(physical[1], rel=0.15)  # E_S within 15 %
    assert lorentz[1] > 2 * physical[1]  # the Lorentzian more than doubles E_S
    np.testing.assert_allclose(default, figures(line_shape(grid, 310.0, 12.0, shape="gaussian")))
