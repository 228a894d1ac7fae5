"""Emitter models: spectral line shapes, phosphor bands and angular patterns.

An emitter type (one kind of LED die, say "UVB 305 nm, 60 degree lens") is described by
its spectral shape (peak, FWHM, asymmetry, optional phosphor bands, or a measured shape),
its radiant flux and its angular pattern. Following the design's "weight first, place
second" rule, :func:`weigh_emitter` reduces the spectrum once to a few weighted numbers
per quantity; geometry (:mod:`audit_lib.sources.lamps`, :mod:`audit_lib.scene.maps`)
only scales them.

References
----------
Moreno, I. & Sun, C.-C. (2008). Modeling the radiation pattern of LEDs. Optics Express
16(3), 1808-1819 (generalised Lambertian pattern, m = -ln 2 / ln cos(theta_half)).
Stancik, A. L. & Brauns, E. B. (2008). A simple asymmetric lineshape for fitting infrared
absorption spectra. Vibrational Spectroscopy 47, 66-69 (sigmoidally varying width).
"""

from __future__ import annotations

import csv
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np

from audit_lib.errors import InputError
from audit_lib.light.metrics import weighted_quantities
from audit_lib.light.spectra import Spectrum

#: Wavelength grid of modelled emitter spectra [nm]: 200-830 nm in 0.5 nm steps.
MODEL_WAVELENGTH_NM = np.arange(200.0, 830.0 + 0.25, 0.5)

#: Line shapes understood by :func:`line_shape`.
LINE_SHAPES = ("lorentzian", "gaussian", "sigmoid_lorentzian", "sigmoid_gaussian")

_LN2 = np.log(2.0)


def _check_shape(shape: str) -> None:
    if shape not in LINE_SHAPES:
        raise InputError(
            f"unknown line shape {shape!r}",
            field="shape",
            hint="use one of " + ", ".join(repr(s) for s in LINE_SHAPES),
        )


def _half_widths(fwhm_nm: float, asymmetry: float) -> tuple[float, float]:
    if not np.isfinite(fwhm_nm) or fwhm_nm <= 0:
        raise InputError(f"FWHM must be positive, got {fwhm_nm!r}", field="fwhm_nm")
    if not np.isfinite(asymmetry) or asymmetry <= 0:
        raise InputError(
            f"asymmetry must be positive, got {asymmetry!r}",
            field="asymmetry",
            hint="short-side half width / long-side half width; 1 means symmetric",
        )
    long_side = fwhm_nm / (1.0 + asymmetry)
    return asymmetry * long_side, long_side


def _sigmoid_parameters(short_nm: float, long_nm: float) -> tuple[float, float]:
    """Width gamma0 [nm] and slope a [nm-1] of the Stancik & Brauns form.

    With gamma(x) = 2 gamma0 / (1 + exp(a x)) the half-maximum points lie where
    |x| = gamma(x) / 2, so gamma0 = h_s (1 + exp(-a h_s)) = h_l (1 + exp(a h_l)).
    """
    from scipy.optimize import brentq

    if np.isclose(short_nm, long_nm, rtol=1e-12):
        return short_nm * 2.0, 0.0

    def gap(a: float) -> float:
        return short_nm * (1 + np.exp(-a * short_nm)) - long_nm * (1 + np.exp(a * long_nm))

    bound = 60.0 / min(short_nm, long_nm)
    a = brentq(gap, -bound, bound, xtol=1e-14, rtol=1e-13)
    return short_nm * (1 + np.exp(-a * short_nm)), a


def line_shape(
    wavelength_nm,
    peak_nm: float,
    fwhm_nm: float,
    asymmetry: float = 1.0,
    shape: str = "gaussian",
) -> np.ndarray:
    """Relative spectral shape of an emission line, 1 at its peak.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths [nm].
    peak_nm : float
        Wavelength of the maximum [nm].
    fwhm_nm : float
        True full width at half maximum of the returned curve [nm].
    asymmetry : float, optional
        Short-side half width divided by long-side half width [-]; > 1 skews the
        output towards shorter wavelengths. Default 1 (symmetric).
    shape : str, optional
        ``"gaussian"`` (default) or ``"lorentzian"`` (split forms: each side its own half
        width), or ``"sigmoid_gaussian"`` / ``"sigmoid_lorentzian"`` (width varying smoothly
        across the peak, Stancik & Brauns 2008, converted so that the FWHM and
        asymmetry are the true ones). Gaussian is the default because an LED's emission
        falls off exponentially away from its peak: the ideal band-to-band line is
        sqrt(E - Eg) exp(-(E - Eg)/kT) (Boltzmann tail; Schubert, Light-Emitting Diodes,
        2nd ed. 2006, ch. 5) and alloy broadening adds a near-Gaussian spread, so LED
        spectra are commonly modelled as Gaussian or split Gaussian lines (Ohno 2005,
        Opt. Eng. 44:111302). A Lorentzian's 1/x^2 tail has no physical basis that far
        from the peak and puts spurious power tens of nm away -- e.g. UVC and short UVB
        below a UVB LED -- inflating the short-wave share and the actinic hazard.

    Returns
    -------
    numpy.ndarray
        Relative spectral shape [-], maximum 1 at ``peak_nm``.

    Notes
    -----
    Split forms: Lorentzian 1 / (1 + (x/h)^2), Gaussian exp(-ln 2 (x/h)^2), with
    x = wavelength - peak and h the short- or long-side half width; half maximum falls
    exactly at x = -h_s and x = +h_l. The Stancik & Brauns width
    gamma(x) = 2 gamma0 / (1 + exp(a x)) is solved for (gamma0, a) from the same two
    half widths with :func:`scipy.optimize.brentq`.
    """
    _check_shape(shape)
    x = np.asarray(wavelength_nm, dtype=float) - float(peak_nm)
    short_nm, long_nm = _half_widths(float(fwhm_nm), float(asymmetry))
    if shape.startswith("sigmoid_"):
        gamma0, a = _sigmoid_parameters(short_nm, long_nm)
        with np.errstate(over="ignore"):
            half = gamma0 / (1.0 + np.exp(np.clip(a * x, -700, 700)))
    else:
        half = np.where(x < 0, short_nm, long_nm)
    u = x / half
    if shape.endswith("lorentzian"):
        return 1.0 / (1.0 + u * u)
    return np.exp(-_LN2 * u * u)


def lambertian_order(beam_angle_deg: float) -> float:
    """Order m of the generalised Lambertian pattern I = I0 cos^m(theta).

    Parameters
    ----------
    beam_angle_deg : float
        Full angle at half intensity [deg], 0 < angle < 180.

    Returns
    -------
    float
        m = -ln 2 / ln cos(theta_half), theta_half = beam_angle / 2 [-]
        (Moreno & Sun 2008, Opt. Express 16:1808, eq. 3). m = 1 at 120 degrees.
    """
    angle = float(beam_angle_deg)
    if not 0.0 < angle < 180.0:
        raise InputError(
            f"beam angle must be between 0 and 180 degrees, got {beam_angle_deg!r}",
            field="beam_angle_deg",
            hint="give the full angle at half intensity from the datasheet",
        )
    return -_LN2 / np.log(np.cos(np.radians(angle / 2.0)))


@dataclass(frozen=True)
class AngularPattern:
    """A tabulated radiant intensity pattern, symmetric about the emitter axis.

    Parameters
    ----------
    angle_deg : array_like
        Angles from the axis, increasing from 0 [deg]; intensity is 0 beyond the last.
    relative_intensity : array_like
        Intensity relative to the maximum [-].
    name : str, optional
        Label used in messages.
    """

    angle_deg: np.ndarray
    relative_intensity: np.ndarray
    name: str = ""

    def __post_init__(self) -> None:
        angle = np.asarray(self.angle_deg, dtype=float)
        rel = np.asarray(self.relative_intensity, dtype=float)
        if angle.ndim != 1 or angle.shape != rel.shape or angle.size < 2:
            raise InputError(
                "angular pattern needs two equal-length columns with at least two rows",
                field=self.name or "pattern",
            )
        if angle[0] != 0 or np.any(np.diff(angle) <= 0) or angle[-1] > 180:
            raise InputError(
                "pattern angles must start at 0 and increase strictly up to at most 180 deg",
                field=self.name or "angle_deg",
            )
        if np.any(rel < 0) or rel.max() <= 0:
            raise InputError(
                "relative intensity must be non-negative with a positive maximum",
                field=self.name or "relative_intensity",
            )
        object.__setattr__(self, "angle_deg", angle)
        object.__setattr__(self, "relative_intensity", rel / rel.max())


def read_angular_pattern(path) -> AngularPattern:
    """Read a datasheet-style pattern CSV with columns ``angle_deg,relative_intensity``.

    Lines starting with ``#`` are comments. Intensities are rescaled to a maximum of 1.

    Parameters
    ----------
    path : str or PathLike
        CSV file.

    Returns
    -------
    AngularPattern
    """
    path = Path(path)
    rows = []
    with path.open(newline="", encoding="utf-8") as fh:
        lines = [(i, ln) for i, ln in enumerate(fh, 1) if ln.strip() and not ln.startswith("#")]
    reader = csv.reader([ln for _, ln in lines])
    header = [h.strip() for h in next(reader, [])]
    if header[:2] != ["angle_deg", "relative_intensity"]:
        raise InputError(
            f"expected header 'angle_deg,relative_intensity', got {','.join(header)!r}",
            path=path,
            line=lines[0][0] if lines else None,
            hint="angles in degrees from the axis, intensity relative to the maximum",
        )
    for (line, _), row in zip(lines[1:], reader, strict=True):
        try:
            rows.append((float(row[0]), float(row[1])))
        except (ValueError, IndexError):
            raise InputError(f"not two numbers: {','.join(row)!r}", path=path, line=line) from None
    data = np.array(rows, dtype=float).reshape(-1, 2)
    try:
        return AngularPattern(data[:, 0], data[:, 1], name=path.stem)
    except InputError as exc:
        raise InputError(exc.message, path=path, field=exc.field, hint=exc.hint) from None


def pattern_relative_intensity(pattern: AngularPattern | float, cos_theta) -> np.ndarray:
    """Relative intensity [-] at angle theta from the axis, given cos(theta).

    Parameters
    ----------
    pattern : AngularPattern or float
        A tabulated pattern, or the Lambertian order m of cos^m(theta) [-].
    cos_theta : array_like
        Cosine of the angle from the emitter axis [-].

    Returns
    -------
    numpy.ndarray
        Relative intensity [-]; 0 behind a cos^m emitter (theta > 90 deg).
    """
    c = np.asarray(cos_theta)
    if isinstance(pattern, AngularPattern):
        theta = np.degrees(np.arccos(np.clip(c, -1.0, 1.0)))
        return np.interp(theta, pattern.angle_deg, pattern.relative_intensity, right=0.0)
    m = float(pattern)
    out = np.maximum(c, 0.0)
    if m == 1.0:
        return out
    return out**m


def pattern_solid_angle(pattern: AngularPattern | float) -> float:
    """Effective solid angle Omega = integral of I/I0 over the sphere [sr].

    The on-axis intensity is I0 = flux / Omega. For cos^m(theta), Omega = 2 pi / (m + 1)
    (Moreno & Sun 2008); a tabulated pattern (linear between its rows) is integrated
    over 2 pi sin(theta) d(theta) with Simpson's rule on a fine grid.

    Parameters
    ----------
    pattern : AngularPattern or float
        Tabulated pattern or Lambertian order m [-].

    Returns
    -------
    float
        Effective solid angle [sr].
    """
    if isinstance(pattern, AngularPattern):
        from scipy.integrate import simpson

        edges = np.radians(pattern.angle_deg)
        total = 0.0
        for a, b, ia, ib in zip(
            edges[:-1],
            edges[1:],
            pattern.relative_intensity[:-1],
            pattern.relative_intensity[1:],
            strict=True,
        ):  # exact for the piecewise-linear table up to Simpson's error on sin
            theta = np.linspace(a, b, 513)
            rel = ia + (ib - ia) * (theta - a) / (b - a)
            total += simpson(rel * 2 * np.pi * np.sin(theta), x=theta)
        return float(total)
    return 2.0 * np.pi / (float(pattern) + 1.0)


@dataclass(frozen=True)
class PhosphorBand:
    """A broad phosphor emission band of a phosphor-converted emitter.

    Parameters
    ----------
    peak_nm : float
        Band maximum [nm].
    fwhm_nm : float
        Band full width at half maximum [nm].
    share : float
        Share of the emitter's radiant flux emitted in this band [-].
    asymmetry : float, optional
        Short-side / long-side half width [-].
    shape : str, optional
        Line shape (see :func:`line_shape`), default ``"gaussian"``.
    """

    peak_nm: float
    fwhm_nm: float
    share: float
    asymmetry: float = 1.0
    shape: str = "gaussian"


@dataclass(frozen=True)
class EmitterType:
    """One kind of emitter (LED die with its lens), with spectrum, flux and pattern.

    Parameters
    ----------
    name : str
        Identifier used by lamps to place emitters of this type.
    peak_nm : float
        Peak wavelength of the pump line [nm].
    fwhm_nm : float
        FWHM of the pump line [nm].
    radiant_flux_w : float
        Total optical output of one emitter over 200-830 nm [W].
    asymmetry : float, optional
        Short-side / long-side half width of the pump line [-].
    shape : str, optional
        Line shape of the pump line (see :func:`line_shape`); default ``"gaussian"``.
    beam_angle_deg : float, optional
        Full angle at half intensity [deg]; 120 = Lambertian. Ignored if ``pattern``.
    pattern : AngularPattern, optional
        Tabulated angular pattern (e.g. from :func:`read_angular_pattern`).
    phosphor_bands : tuple of PhosphorBand, optional
        Phosphor bands; their shares are taken from the pump's output.
    spectrum : Spectrum, optional
        A measured spectral shape; replaces the line model when given (only its shape
        is used, the flux comes from ``radiant_flux_w``).
    """

    name: str
    peak_nm: float
    fwhm_nm: float
    radiant_flux_w: float
    asymmetry: float = 1.0
    shape: str = "gaussian"
    beam_angle_deg: float = 120.0
    pattern: AngularPattern | None = None
    phosphor_bands: tuple[PhosphorBand, ...] = field(default_factory=tuple)
    spectrum: object | None = None

    def __post_init__(self) -> None:
        object.__setattr__(self, "phosphor_bands", tuple(self.phosphor_bands))
        if not np.isfinite(self.radiant_flux_w) or self.radiant_flux_w < 0:
            raise InputError(
                f"radiant flux must be zero or positive, got {self.radiant_flux_w!r}",
                field=f"{self.name}.radiant_flux_w",
                hint="optical output of one emitter in watts",
            )
        total = sum(b.share for b in self.phosphor_bands)
        if any(b.share < 0 for b in self.phosphor_bands) or total > 1:
            raise InputError(
                f"phosphor shares must be >= 0 and add up to at most 1, got {total:g}",
                field=f"{self.name}.phosphor_bands",
            )


def emitter_order(emitter: EmitterType) -> AngularPattern | float:
    """The emitter's pattern: its tabulated pattern or its Lambertian order m [-]."""
    if emitter.pattern is not None:
        return emitter.pattern
    return lambertian_order(emitter.beam_angle_deg)


def relative_spectrum(emitter: EmitterType, wavelength_nm=None) -> tuple[np.ndarray, np.ndarray]:
    """Spectral shape of an emitter normalised to unit integral.

    Parameters
    ----------
    emitter : EmitterType
        The emitter.
    wavelength_nm : array_like, optional
        Grid [nm]; default :data:`MODEL_WAVELENGTH_NM`.

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Wavelengths [nm] and spectral shape [nm-1] integrating to 1 over the grid.
    """
    wl = MODEL_WAVELENGTH_NM if wavelength_nm is None else np.asarray(wavelength_nm, float)
    if emitter.spectrum is not None:
        s = emitter.spectrum
        shape = np.interp(wl, s.wavelength_nm, s.irradiance_w_m2_nm, left=0.0, right=0.0)
        area = np.trapezoid(shape, wl)
        if area <= 0:
            raise InputError("measured emitter spectrum has no positive area", field=emitter.name)
        return wl, shape / area
    pump = line_shape(wl, emitter.peak_nm, emitter.fwhm_nm, emitter.asymmetry, emitter.shape)
    parts = [(1.0 - sum(b.share for b in emitter.phosphor_bands), pump)]
    for b in emitter.phosphor_bands:
        parts.append((b.share, line_shape(wl, b.peak_nm, b.fwhm_nm, b.asymmetry, b.shape)))
    total = np.zeros_like(wl)
    for share, curve in parts:
        if share > 0:
            total += share * curve / np.trapezoid(curve, wl)
    return wl, total


def spectral_flux(emitter: EmitterType, wavelength_nm=None) -> tuple[np.ndarray, np.ndarray]:
    """Spectral radiant flux of one emitter [W nm-1] on a wavelength grid [nm]."""
    wl, shape = relative_spectrum(emitter, wavelength_nm)
    return wl, emitter.radiant_flux_w * shape


def weigh_spectral(wavelength_nm, spectral_values) -> dict[str, float]:
    """Weighted quantities of a spectral distribution (a thin call of ``metrics``).

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths [nm].
    spectral_values : array_like
        Spectral irradiance [W m-2 nm-1] (or any quantity per nm that scales like it).

    Returns
    -------
    dict of str to float
        The keys of :func:`audit_lib.light.metrics.weighted_quantities`.
    """
    out = weighted_quantities(np.asarray(wavelength_nm, float), np.asarray(spectral_values, float))
    return {k: float(v) for k, v in out.items()}


def weigh_emitter(emitter: EmitterType) -> dict[str, float]:
    """Weighted quantities of one emitter on axis at 1 m, normal incidence.

    "Weight first, place second": the emitter's spectral flux times its on-axis
    intensity factor 1/Omega gives its spectral irradiance at 1 m on axis; every other
    position scales this by pattern x cos(incidence) / r^2 (inverse-square and cosine
    laws of a point source).

    Parameters
    ----------
    emitter : EmitterType
        The emitter.

    Returns
    -------
    dict of str to float
        Weighted quantities at 1 m on axis (UVI, W m-2, lux as in ``metrics``).
    """
    wl, flux = spectral_flux(emitter)
    return weigh_spectral(wl, flux / pattern_solid_angle(emitter_order(emitter)))


def flux_for_reading(
    emitter: EmitterType, value: float, distance_m: float, quantity: str = "uvi"
) -> EmitterType:
    """Return a copy of ``emitter`` whose radiant flux gives ``value`` at ``distance_m``.

    The reading is taken on the emitter axis at normal incidence (inverse-square law).

    Parameters
    ----------
    emitter : EmitterType
        Emitter whose spectral shape and pattern are kept.
    value : float
        Measured value in the quantity's unit (UVI [-], W m-2, lux).
    distance_m : float
        Emitter-to-sensor distance [m].
    quantity : str, optional
        A key of :func:`audit_lib.light.metrics.weighted_quantities`.

    Returns
    -------
    EmitterType
        Same emitter with ``radiant_flux_w`` rescaled.
    """
    if distance_m <= 0:
        raise InputError(f"distance must be positive, got {distance_m!r}", field="distance_m")
    unit = replace(emitter, radiant_flux_w=1.0)
    per_watt = weigh_emitter(unit)
    if quantity not in per_watt:
        raise InputError(
            f"unknown quantity {quantity!r}", field="quantity", hint="one of " + ", ".join(per_watt)
        )
    at_one_watt = per_watt[quantity] / distance_m**2
    if at_one_watt <= 0:
        raise InputError(
            f"this emitter's spectrum gives no {quantity}; cannot scale to a reading of it",
            field="quantity",
        )
    return replace(emitter, radiant_flux_w=float(value) / at_one_watt)


@dataclass(frozen=True)
class LineFit:
    """Result of :func:`fit_line_shape`.

    Parameters
    ----------
    peak_nm, fwhm_nm, asymmetry : float
        Fitted line parameters [nm], [nm], [-] (meanings as in :func:`line_shape`).
    amplitude : float
        Fitted value at the peak, in the spectrum's unit [W m-2 nm-1].
    shape : str
        Line shape that was fitted.
    residual_rms : float
        Root-mean-square residual over the fitted range [W m-2 nm-1].
    relative_residual : float
        ``residual_rms`` divided by ``amplitude`` [-].
    """

    peak_nm: float
    fwhm_nm: float
    asymmetry: float
    amplitude: float
    shape: str
    residual_rms: float
    relative_residual: float


def fit_line_shape(
    spectrum, shape: str = "gaussian", lo_nm: float = 250.0, hi_nm: float = 420.0
) -> LineFit:
    """Fit peak, FWHM and asymmetry of one emission line to a measured spectrum.

    Least squares (:func:`scipy.optimize.least_squares`, trust-region reflective) of
    ``amplitude * line_shape(...)`` to the spectrum between ``lo_nm`` and ``hi_nm``;
    the asymmetry is fitted on a log scale. Start values come from the highest sample
    and its half-maximum crossings.

    Parameters
    ----------
    spectrum : Spectrum
        Measured spectrum (``wavelength_nm``, ``irradiance_w_m2_nm``).
    shape : str, optional
        Line shape to fit (see :func:`line_shape`).
    lo_nm, hi_nm : float, optional
        Wavelength range to fit [nm].

    Returns
    -------
    LineFit
        Parameters and the fit residual.
    """
    from scipy.optimize import least_squares

    _check_shape(shape)
    wl = np.asarray(spectrum.wavelength_nm, float)
    y = np.asarray(spectrum.irradiance_w_m2_nm, float)
    keep = (wl >= lo_nm) & (wl <= hi_nm)
    wl, y = wl[keep], y[keep]
    if wl.size < 5 or not np.any(y > 0):
        raise InputError(
            f"fewer than 5 positive samples between {lo_nm:g} and {hi_nm:g} nm",
            field=getattr(spectrum, "name", "") or "spectrum",
            hint="widen lo_nm/hi_nm to cover the emission line",
        )
    i = int(np.argmax(y))
    above = np.nonzero(y >= y[i] / 2)[0]
    width0 = max(wl[above[-1]] - wl[above[0]], 2 * float(np.median(np.diff(wl))))

    def model(p):
        return p[3] * line_shape(wl, p[0], p[1], np.exp(p[2]), shape)

    start = np.array([wl[i], width0, 0.0, y[i]])
    lower = [wl[0], 1e-3, np.log(0.1), 0.0]
    upper = [wl[-1], wl[-1] - wl[0], np.log(10.0), 10 * y[i]]
    res = least_squares(lambda p: model(p) - y, start, bounds=(lower, upper), x_scale="jac")
    rms = float(np.sqrt(np.mean(res.fun**2)))
    p = res.x
    return LineFit(
        peak_nm=float(p[0]),
        fwhm_nm=float(p[1]),
        asymmetry=float(np.exp(p[2])),
        amplitude=float(p[3]),
        shape=shape,
        residual_rms=rms,
        relative_residual=rms / float(p[3]) if p[3] > 0 else float("inf"),
    )


def emitter_spectrum(emitter: EmitterType, distance_m: float = 1.0):
    """Spectral irradiance of one emitter on its axis at ``distance_m`` (inverse-square law).

    Parameters
    ----------
    emitter : EmitterType
        The emitter.
    distance_m : float, optional
        Distance on the axis [m].

    Returns
    -------
    Spectrum
        [W m-2 nm-1] on :data:`MODEL_WAVELENGTH_NM`.
    """
    if distance_m <= 0:
        raise InputError(f"distance must be positive, got {distance_m!r}", field="distance_m")
    wl, flux = spectral_flux(emitter)
    values = flux / pattern_solid_angle(emitter_order(emitter)) / distance_m**2
    return Spectrum(wl, values, name=emitter.name, source="emitter model")
