"""Lamp models: LED arrays, linear tubes, compact point lamps and measured lamps.

Every lamp is reduced by :func:`lamp_sources` to groups of point sources in the lamp's
own frame (origin at the lamp centre, x along its length, light going towards -z).
Each group carries the weighted quantities of its emitter type at 1 m in the direction
of maximum intensity ("weight first"); :mod:`audit_lib.scene.geometry` only scales them with
pattern x cos(incidence) / r^n ("place second").

References
----------
Moreno & Sun (2008), Opt. Express 16:1808 (LED patterns). Line source: the aspect-factor
method of lighting handbooks (e.g. IES Lighting Handbook, "finite line sources"):
an element of a diffuse tube has intensity I' cos(theta) per unit length, theta measured
from the perpendicular to the tube, so a bare tube of length L emits pi^2 I' L in total.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from audit_lib.errors import AuditWarning, InputError
from audit_lib.light.metrics import QUANTITIES
from audit_lib.light.spectra import Spectrum
from audit_lib.sources.emitters import (
    AngularPattern,
    EmitterType,
    emitter_order,
    lambertian_order,
    pattern_solid_angle,
    spectral_flux,
    weigh_spectral,
)

#: An isotropic pattern (equal intensity in every direction, Omega = 4 pi).
ISOTROPIC = AngularPattern(np.array([0.0, 180.0]), np.array([1.0, 1.0]), name="isotropic")

#: Marker for the pattern of a tube element (sin of the angle to the tube axis).
LINE_ELEMENT = "line_element"

#: Distance laws understood by :func:`fit_distance_law`.
DISTANCE_LAWS = ("power", "offset_square")


class OutsideMeasuredRangeWarning(AuditWarning):
    """A measured lamp was asked for values at distances it was not measured at."""


@dataclass(frozen=True)
class EmitterPosition:
    """Where one emitter sits in an LED array, in the lamp frame.

    Parameters
    ----------
    type : str
        Name of an :class:`~audit_lib.sources.emitters.EmitterType` of the array.
    x_m, y_m : float
        Position along and across the lamp [m].
    z_m : float, optional
        Height above the lamp face [m] (negative is below).
    tilt_deg : float, optional
        Angle of the emitter axis from the lamp axis (straight down) [deg].
    azimuth_deg : float, optional
        Direction of that tilt in the lamp plane, 0 = towards +x [deg].
    name : str, optional
        Label used for failures; default ``"<type>-<index>"``.
    """

    type: str
    x_m: float
    y_m: float
    z_m: float = 0.0
    tilt_deg: float = 0.0
    azimuth_deg: float = 0.0
    name: str = ""


@dataclass(frozen=True)
class LedArray:
    """An LED array: emitters of one or several types at given positions.

    Parameters
    ----------
    name : str
        Lamp model name.
    emitter_types : tuple of EmitterType
        The emitter types used.
    emitters : tuple of EmitterPosition
        Every emitter with its position and orientation.
    """

    name: str
    emitter_types: tuple[EmitterType, ...]
    emitters: tuple[EmitterPosition, ...]

    def __post_init__(self) -> None:
        object.__setattr__(self, "emitter_types", tuple(self.emitter_types))
        object.__setattr__(self, "emitters", tuple(self.emitters))
        known = {t.name for t in self.emitter_types}
        for i, e in enumerate(self.emitters):
            if e.type not in known:
                raise InputError(
                    f"emitter type {e.type!r} is not defined",
                    field=f"{self.name}.emitters[{i}].type",
                    hint="defined types: " + ", ".join(sorted(known)),
                )


def line_of_emitters(
    types: list[str] | tuple[str, ...], pitch_m: float, rows: int = 1, row_pitch_m: float = 0.0
) -> tuple[EmitterPosition, ...]:
    """Emitter positions for a bar: ``types`` repeated along x, centred on the origin.

    Parameters
    ----------
    types : sequence of str
        Emitter type name for each position along the bar, in order.
    pitch_m : float
        Spacing along the bar [m].
    rows : int, optional
        Number of parallel rows across the bar.
    row_pitch_m : float, optional
        Spacing between rows [m].

    Returns
    -------
    tuple of EmitterPosition
        Named ``"<type>-<index>"`` with a running index.
    """
    out = []
    n = len(types)
    for r in range(rows):
        y = (r - (rows - 1) / 2) * row_pitch_m
        for i, t in enumerate(types):
            x = (i - (n - 1) / 2) * pitch_m
            out.append(EmitterPosition(t, x, y, name=f"{t}-{len(out) + 1}"))
    return tuple(out)


@dataclass(frozen=True)
class TubeLamp:
    """A linear tube (fluorescent or similar) as a finite diffuse line source.

    Give either ``radiant_flux_w`` of the bare tube (then only the spectrum's shape is
    used), or ``reference_distance_m`` (the spectrum was measured below the middle of the
    lamp, at that distance, in its fitting). There is no reflector factor: a uniform gain on
    the front half-space would not shape the beam, and a reading taken under the fitting
    already holds the reflector's gain; to model a tube in a reflector, give a reading.

    Parameters
    ----------
    name : str
        Lamp model name.
    length_m : float
        Emitting length [m].
    spectrum : Spectrum
        Spectral shape, or the absolute spectrum at ``reference_distance_m``.
    radiant_flux_w : float, optional
        Total optical output of the bare tube over the spectrum's range [W].
    reference_distance_m : float, optional
        Distance below the tube middle where ``spectrum`` was measured [m].
    n_segments : int, optional
        Number of point sources the tube is split into for maps.
    """

    name: str
    length_m: float
    spectrum: object
    radiant_flux_w: float | None = None
    reference_distance_m: float | None = None
    n_segments: int = 60


@dataclass(frozen=True)
class PointLamp:
    """A compact lamp treated as one point source.

    Parameters
    ----------
    name : str
        Lamp model name.
    spectrum : Spectrum
        Spectral shape, or the absolute spectrum on axis at ``reference_distance_m``.
    radiant_flux_w : float, optional
        Total optical output [W] (then only the spectrum's shape is used).
    reference_distance_m : float, optional
        On-axis distance at which ``spectrum`` was measured [m].
    beam_angle_deg : float, optional
        Full angle at half intensity of a reflector lamp [deg]; default isotropic.
    pattern : AngularPattern, optional
        Tabulated pattern (overrides ``beam_angle_deg``).
    """

    name: str
    spectrum: object
    radiant_flux_w: float | None = None
    reference_distance_m: float | None = None
    beam_angle_deg: float | None = None
    pattern: AngularPattern | None = None


@dataclass(frozen=True)
class DistanceFit:
    """A distance law fitted to on-axis readings (see :func:`fit_distance_law`).

    Parameters
    ----------
    law : str
        ``"power"``: value = coefficient * d^-exponent;
        ``"offset_square"``: value = coefficient * (d + offset_m)^-2.
    coefficient : float
        Value at 1 m from the (virtual) source, unit of the readings x m^exponent.
    exponent : float
        Distance exponent [-].
    offset_m : float
        Distance of the virtual point source behind the lamp face [m].
    residual_rms : float
        Root-mean-square residual of the fit, unit of the readings.
    relative_residual : float
        RMS of (fitted - measured) / measured [-].
    min_distance_m, max_distance_m : float
        Measured range [m].
    """

    law: str
    coefficient: float
    exponent: float
    offset_m: float
    residual_rms: float
    relative_residual: float
    min_distance_m: float
    max_distance_m: float

    def predict(self, distance_m) -> np.ndarray:
        """Fitted value at lamp-to-sensor distance ``distance_m`` [m]."""
        d = np.asarray(distance_m, float) + self.offset_m
        return self.coefficient * d ** (-self.exponent)


def fit_distance_law(distance_m, values, law: str = "power") -> DistanceFit:
    """Fit a distance law to readings taken on the lamp axis.

    ``"power"`` is a straight line in log-log (ordinary least squares on ln value vs.
    ln distance); ``"offset_square"`` fits the inverse-square law of a point source
    sitting ``offset_m`` behind the lamp face (:func:`scipy.optimize.least_squares` on
    relative residuals). The inverse-square law is that of a point source; extended
    lamps fall off more slowly near the lamp (lighting handbooks, "five-times rule",
    common practice).

    Parameters
    ----------
    distance_m : array_like
        Lamp-to-sensor distances [m].
    values : array_like
        Readings (any quantity linear in irradiance: UVI, W m-2, lux).
    law : str, optional
        One of :data:`DISTANCE_LAWS`.

    Returns
    -------
    DistanceFit
    """
    d = np.asarray(distance_m, float)
    v = np.asarray(values, float)
    if law not in DISTANCE_LAWS:
        raise InputError(
            f"unknown distance law {law!r}",
            field="law",
            hint="use one of " + ", ".join(DISTANCE_LAWS),
        )
    if d.shape != v.shape or d.ndim != 1:
        raise InputError("distances and values must be two lists of equal length", field="readings")
    if np.unique(d).size < 2 or np.any(d <= 0) or np.any(v <= 0):
        raise InputError(
            "need readings at two or more different positive distances, all values > 0",
            field="readings",
            hint="measure on the lamp axis at several distances, e.g. 20, 30, 40 cm",
        )
    if law == "power":
        slope, intercept = np.polyfit(np.log(d), np.log(v), 1)
        coefficient, exponent, offset = float(np.exp(intercept)), float(-slope), 0.0
    else:
        from scipy.optimize import least_squares

        start = [float(np.sqrt(v[0]) * d[0]), 0.0]

        def rel(p):
            return (p[0] ** 2 / (d + p[1]) ** 2 - v) / v

        res = least_squares(rel, start, bounds=([0, -0.9 * d.min()], [np.inf, 10 * d.max()]))
        coefficient, exponent, offset = float(res.x[0] ** 2), 2.0, float(res.x[1])
    fit = DistanceFit(law, coefficient, exponent, offset, 0.0, 0.0, float(d.min()), float(d.max()))
    pred = fit.predict(d)
    return DistanceFit(
        law,
        coefficient,
        exponent,
        offset,
        residual_rms=float(np.sqrt(np.mean((pred - v) ** 2))),
        relative_residual=float(np.sqrt(np.mean(((pred - v) / v) ** 2))),
        min_distance_m=float(d.min()),
        max_distance_m=float(d.max()),
    )


@dataclass(frozen=True)
class MeasuredLamp:
    """A lamp known only from readings on its axis at several distances.

    Off axis it is treated as a point source with a cos^m pattern (from
    ``beam_angle_deg``) at ``offset_m`` behind the lamp face; the other quantities
    follow from ``spectrum`` (only its shape is used). Without a spectrum only the
    measured quantity is mapped (the others are NaN).

    Parameters
    ----------
    name : str
        Lamp name.
    distance_m : tuple of float
        Lamp-to-sensor distances on the axis [m].
    values : tuple of float
        Readings at those distances, in the quantity's unit.
    quantity : str, optional
        What was measured: a key of ``metrics.weighted_quantities`` (default ``"uvi"``).
    spectrum : Spectrum, optional
        The lamp's spectral shape.
    beam_angle_deg : float, optional
        Full angle at half intensity used off axis [deg] (120 = Lambertian).
    law : str, optional
        Distance law to fit, see :func:`fit_distance_law`.
    """

    name: str
    distance_m: tuple[float, ...]
    values: tuple[float, ...]
    quantity: str = "uvi"
    spectrum: object | None = None
    beam_angle_deg: float = 120.0
    law: str = "power"

    def __post_init__(self) -> None:
        object.__setattr__(self, "distance_m", tuple(float(x) for x in self.distance_m))
        object.__setattr__(self, "values", tuple(float(x) for x in self.values))


def measured_lamp_from_readings(readings, lamp: str, **kwargs) -> MeasuredLamp:
    """Build a :class:`MeasuredLamp` from a readings table (see ``readings.read_readings``).

    Uses the rows of ``lamp`` that give ``distance_m``, for the quantity with the most
    such rows (or ``quantity=`` if given); on repeated distances the mean is used.

    Parameters
    ----------
    readings : pandas.DataFrame
        Columns ``lamp``, ``distance_m``, ``quantity``, ``value_si``.
    lamp : str
        Lamp id.
    **kwargs
        Passed on to :class:`MeasuredLamp` (``quantity``, ``spectrum``, ...).

    Returns
    -------
    MeasuredLamp
    """
    rows = readings[(readings["lamp"] == lamp) & readings["distance_m"].notna()]
    if rows.empty:
        raise InputError(
            f"no readings with a distance for lamp {lamp!r}",
            field="distance_m",
            hint="readings of a measured lamp need the lamp-to-sensor distance",
        )
    quantity = kwargs.pop("quantity", None) or rows["quantity"].value_counts().index[0]
    rows = rows[rows["quantity"] == quantity]
    mean = rows.groupby("distance_m")["value_si"].mean()
    return MeasuredLamp(
        lamp, tuple(mean.index), tuple(mean.to_numpy()), quantity=quantity, **kwargs
    )


@dataclass(frozen=True)
class SourceGroup:
    """Point sources of one emitter type in the lamp frame (see :func:`lamp_sources`).

    Parameters
    ----------
    type_name : str
        Emitter type (or lamp) name.
    labels : tuple of str
        Failure unit of each source (emitter name; a whole tube is one unit).
    positions_m : numpy.ndarray
        (n, 3) positions [m].
    axes : numpy.ndarray
        (n, 3) unit vectors: direction of maximum intensity (tube axis for tubes).
    weights : numpy.ndarray
        (n,) scale of each source relative to ``quantities`` [-] (segment length [m]
        for tube elements).
    pattern : AngularPattern, float or str
        Tabulated pattern, Lambertian order m, or :data:`LINE_ELEMENT`.
    quantities : dict of str to float
        Weighted quantities at 1 m in the direction of maximum intensity, unit weight.
    wavelength_nm, spectral : numpy.ndarray or None
        The spectral distribution that gave ``quantities`` (for spectral screens).
    distance_exponent : float
        n in 1/r^n (2 = inverse-square law).
    valid_range_m : tuple of float or None
        Distances where a measured lamp's law holds [m].
    """

    type_name: str
    labels: tuple[str, ...]
    positions_m: np.ndarray
    axes: np.ndarray
    weights: np.ndarray
    pattern: object
    quantities: dict
    wavelength_nm: np.ndarray | None = None
    spectral: np.ndarray | None = None
    distance_exponent: float = 2.0
    valid_range_m: tuple[float, float] | None = None
    extra: dict = field(default_factory=dict)


def _axis(tilt_deg: float, azimuth_deg: float) -> np.ndarray:
    t, a = np.radians(tilt_deg), np.radians(azimuth_deg)
    return np.array([np.sin(t) * np.cos(a), np.sin(t) * np.sin(a), -np.cos(t)])


def _led_sources(lamp: LedArray) -> list[SourceGroup]:
    groups = []
    for etype in lamp.emitter_types:
        placed = [(i, e) for i, e in enumerate(lamp.emitters) if e.type == etype.name]
        if not placed:
            continue
        wl, flux = spectral_flux(etype)
        order = emitter_order(etype)
        spectral = flux / pattern_solid_angle(order)
        groups.append(
            SourceGroup(
                type_name=etype.name,
                labels=tuple(e.name or f"{e.type}-{i + 1}" for i, e in placed),
                positions_m=np.array([[e.x_m, e.y_m, e.z_m] for _, e in placed], float),
                axes=np.array([_axis(e.tilt_deg, e.azimuth_deg) for _, e in placed]),
                weights=np.ones(len(placed)),
                pattern=order,
                quantities=weigh_spectral(wl, spectral),
                wavelength_nm=wl,
                spectral=spectral,
            )
        )
    return groups


def _spectrum_arrays(spectrum) -> tuple[np.ndarray, np.ndarray]:
    return (
        np.asarray(spectrum.wavelength_nm, float),
        np.asarray(spectrum.irradiance_w_m2_nm, float),
    )


def _scaled(lamp, on_axis_per_flux_watt: float, geometry_at_reference: float):
    """Spectral intensity of a lamp from its flux or from its reference spectrum."""
    wl, values = _spectrum_arrays(lamp.spectrum)
    if (lamp.radiant_flux_w is None) == (lamp.reference_distance_m is None):
        raise InputError(
            "give exactly one of radiant_flux_w and reference_distance_m",
            field=f"{lamp.name}",
            hint="radiant_flux_w scales the spectrum's shape; reference_distance_m says where "
            "the spectrum was measured",
        )
    if lamp.radiant_flux_w is not None:
        area = np.trapezoid(values, wl)
        if area <= 0:
            raise InputError("lamp spectrum has no positive area", field=f"{lamp.name}.spectrum")
        return wl, values / area * lamp.radiant_flux_w * on_axis_per_flux_watt
    if lamp.reference_distance_m <= 0:
        raise InputError("reference distance must be positive", field=f"{lamp.name}")
    return wl, values * geometry_at_reference


def _tube_sources(lamp: TubeLamp) -> list[SourceGroup]:
    length, n = float(lamp.length_m), int(lamp.n_segments)
    if length <= 0 or n < 1:
        raise InputError("tube needs length_m > 0 and n_segments >= 1", field=lamp.name)
    d = lamp.reference_distance_m or 1.0
    beta = np.arctan(length / (2 * d))
    # below the middle: E = 2 (I'/D) 1/2 (beta + sin beta cos beta), handbook aspect factor
    wl, per_length = _scaled(
        lamp, 1.0 / (np.pi**2 * length), d / (beta + np.sin(beta) * np.cos(beta))
    )
    x = (np.arange(n) + 0.5) / n * length - length / 2
    return [
        SourceGroup(
            type_name=lamp.name,
            labels=(lamp.name,) * n,
            positions_m=np.column_stack([x, np.zeros(n), np.zeros(n)]),
            axes=np.tile([1.0, 0.0, 0.0], (n, 1)),
            weights=np.full(n, length / n),
            pattern=LINE_ELEMENT,
            quantities=weigh_spectral(wl, per_length),
            wavelength_nm=wl,
            spectral=per_length,
        )
    ]


def _point_sources(lamp: PointLamp) -> list[SourceGroup]:
    if lamp.pattern is not None:
        order = lamp.pattern
    elif lamp.beam_angle_deg is not None:

        order = lambertian_order(lamp.beam_angle_deg)
    else:
        order = ISOTROPIC
    d = lamp.reference_distance_m or 1.0
    wl, intensity = _scaled(lamp, 1.0 / pattern_solid_angle(order), d**2)
    return [
        SourceGroup(
            type_name=lamp.name,
            labels=(lamp.name,),
            positions_m=np.zeros((1, 3)),
            axes=np.array([[0.0, 0.0, -1.0]]),
            weights=np.ones(1),
            pattern=order,
            quantities=weigh_spectral(wl, intensity),
            wavelength_nm=wl,
            spectral=intensity,
        )
    ]


def _measured_sources(lamp: MeasuredLamp) -> list[SourceGroup]:

    if lamp.quantity not in QUANTITIES:
        raise InputError(
            f"unknown quantity {lamp.quantity!r} for the readings of lamp {lamp.name!r}",
            field=f"{lamp.name}.quantity",
            hint="one of " + ", ".join(QUANTITIES),
        )
    fit = fit_distance_law(lamp.distance_m, lamp.values, lamp.law)
    wl = spectral = None
    if lamp.spectrum is not None:
        wl, values = _spectrum_arrays(lamp.spectrum)
        weighed = weigh_spectral(wl, values)
        if weighed.get(lamp.quantity, 0.0) <= 0:
            raise InputError(
                f"the spectrum of {lamp.name!r} gives no {lamp.quantity}",
                field=f"{lamp.name}.spectrum",
            )
        scale = fit.coefficient / weighed[lamp.quantity]
        spectral = values * scale
        quantities = {k: v * scale for k, v in weighed.items()}
    else:
        quantities = {lamp.quantity: fit.coefficient}
    return [
        SourceGroup(
            type_name=lamp.name,
            labels=(lamp.name,),
            positions_m=np.array([[0.0, 0.0, fit.offset_m]]),
            axes=np.array([[0.0, 0.0, -1.0]]),
            weights=np.ones(1),
            pattern=lambertian_order(lamp.beam_angle_deg),
            quantities=quantities,
            wavelength_nm=wl,
            spectral=spectral,
            distance_exponent=fit.exponent,
            valid_range_m=(
                fit.min_distance_m + fit.offset_m,
                fit.max_distance_m + fit.offset_m,
            ),
            extra={"fit": fit},
        )
    ]


def lamp_sources(lamp) -> list[SourceGroup]:
    """Point-source groups of a lamp in its own frame (weight first).

    Parameters
    ----------
    lamp : LedArray, TubeLamp, PointLamp or MeasuredLamp
        The lamp model.

    Returns
    -------
    list of SourceGroup
    """
    for kind, build in (
        (LedArray, _led_sources),
        (TubeLamp, _tube_sources),
        (PointLamp, _point_sources),
        (MeasuredLamp, _measured_sources),
    ):
        if isinstance(lamp, kind):
            return build(lamp)
    raise InputError(
        f"not a lamp model: {type(lamp).__name__}",
        hint="use LedArray, TubeLamp, PointLamp or MeasuredLamp",
    )


def warn_outside_range(lamp_name: str, distance_m: np.ndarray, valid: tuple[float, float]):
    """Warn when distances leave a measured lamp's range; return the mask of such points.

    Parameters
    ----------
    lamp_name : str
        Lamp name for the message.
    distance_m : numpy.ndarray
        Distances from the virtual source [m].
    valid : tuple of float
        Measured range, same reference [m].

    Returns
    -------
    numpy.ndarray of bool
        True where the value is extrapolated.
    """
    lo, hi = valid
    outside = (distance_m < lo * 0.999) | (distance_m > hi * 1.001)
    if np.any(outside):
        warnings.warn(
            f"lamp {lamp_name!r} was measured from {lo:.3g} to {hi:.3g} m; "
            f"{outside.mean():.0%} of the points asked for lie outside that range "
            f"({distance_m.min():.3g}-{distance_m.max():.3g} m): extrapolated values",
            OutsideMeasuredRangeWarning,
            stacklevel=3,
        )
    return outside


def lamp_spectrum(lamp, distance_m: float = 1.0):
    """Far-field spectral irradiance on the lamp axis at ``distance_m``.

    Each source counts with its maximum intensity over distance^2 (point-source
    approximation, good beyond about five times the lamp size; common practice),
    so the shape is right and the level approximate near extended lamps.

    Parameters
    ----------
    lamp : LedArray, TubeLamp, PointLamp or MeasuredLamp
        The lamp (a measured lamp needs its spectrum).
    distance_m : float, optional
        Distance [m].

    Returns
    -------
    Spectrum
        [W m-2 nm-1].
    """
    groups = lamp_sources(lamp)
    if any(g.spectral is None for g in groups):
        raise InputError(f"lamp {lamp.name!r} has no spectrum", field=f"{lamp.name}.spectrum")
    grid = np.unique(np.concatenate([g.wavelength_nm for g in groups]))
    total = np.zeros_like(grid)
    for g in groups:
        scale = np.sum(g.weights) / distance_m**g.distance_exponent
        total += scale * np.interp(grid, g.wavelength_nm, g.spectral, left=0.0, right=0.0)
    return Spectrum(grid, total, name=lamp.name, source="lamp model, far field on axis")
