"""A lamp's light on its own axis, near or far, from its point-source groups.

The view point is on the lamp axis (straight below the lamp centre, -z of the lamp frame)
at a distance from the lamp face, on a plane facing the lamp. Every source of every group
counts with its own distance, pattern and angle of incidence (inverse-square and cosine
laws of point sources, the finite-line-source elements of a tube), so the figure is right
near an extended lamp too -- unlike the far-field
:func:`audit_lib.sources.lamps.lamp_spectrum`. It is the same sum that
:mod:`audit_lib.scene.geometry` does for many points (a test checks the two agree); this
module serves the lamp-level questions that need no enclosure: a whole-fitting reference
reading and the risk group at a stated distance.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from audit_lib.errors import InputError
from audit_lib.light.metrics import QUANTITIES
from audit_lib.light.spectra import Spectrum
from audit_lib.sources.emitters import pattern_relative_intensity
from audit_lib.sources.lamps import LINE_ELEMENT, LedArray, SourceGroup, lamp_sources


def _check_distance(distance_m: float, name: str) -> float:
    d = float(distance_m)
    if not np.isfinite(d) or d <= 0:
        raise InputError(f"distance must be positive, got {distance_m!r}",
                         field=f"{name}.distance_m", hint="a lamp-to-sensor distance, e.g. 0.3 m")
    return d


def group_axis_factor(group: SourceGroup, distance_m: float) -> float:
    """Sum over a group's sources of weight x pattern x cos(incidence) / r^n on the axis.

    Parameters
    ----------
    group : SourceGroup
        Sources in the lamp frame (from :func:`audit_lib.sources.lamps.lamp_sources`).
    distance_m : float
        Distance below the lamp face (z = 0 of the lamp frame) [m].

    Returns
    -------
    float
        Factor that turns the group's values at 1 m (``quantities``, ``spectral``) into
        irradiance at the view point [-].
    """
    point = np.array([0.0, 0.0, -distance_m])
    ray = point[None, :] - group.positions_m
    r = np.maximum(np.linalg.norm(ray, axis=1), 1e-12)
    cos_incidence = np.maximum(-ray[:, 2] / r, 0.0)  # receiving plane faces the lamp (+z)
    cos_axis = np.sum(ray * group.axes, axis=1) / r
    if isinstance(group.pattern, str):
        if group.pattern != LINE_ELEMENT:
            raise ValueError(f"unknown pattern marker {group.pattern!r}")
        relative = np.sqrt(np.maximum(1.0 - cos_axis**2, 0.0))
    else:
        relative = pattern_relative_intensity(group.pattern, cos_axis)
    return float(np.sum(group.weights * relative * cos_incidence
                        / r**group.distance_exponent))


def spectrum_on_axis(lamp, distance_m: float) -> Spectrum:
    """Spectral irradiance of a whole lamp on its axis at ``distance_m`` from its face.

    Parameters
    ----------
    lamp : LedArray, TubeLamp, PointLamp or MeasuredLamp
        The lamp (a measured lamp needs its spectrum).
    distance_m : float
        Distance below the lamp face on its axis [m].

    Returns
    -------
    Spectrum
        [W m-2 nm-1] on the union of the groups' wavelength grids.
    """
    d = _check_distance(distance_m, lamp.name)
    groups = lamp_sources(lamp)
    if any(g.spectral is None for g in groups):
        raise InputError(f"lamp {lamp.name!r} has no spectrum", field=f"{lamp.name}.spectrum",
                         hint="give the lamp model a spectrum file or emission bands")
    grid = np.unique(np.concatenate([g.wavelength_nm for g in groups]))
    total = np.zeros_like(grid)
    for g in groups:
        total += group_axis_factor(g, d) * np.interp(grid, g.wavelength_nm, g.spectral,
                                                     left=0.0, right=0.0)
    return Spectrum(grid, total, name=lamp.name, source=f"lamp model on its axis at {d:g} m")


def quantity_on_axis(lamp, quantity: str, distance_m: float) -> float:
    """One weighted quantity of a whole lamp on its axis at ``distance_m`` (UVI, W m-2, lx)."""
    if quantity not in QUANTITIES:
        raise InputError(f"unknown quantity {quantity!r}", field="quantity",
                         hint="one of " + ", ".join(QUANTITIES))
    d = _check_distance(distance_m, lamp.name)
    return float(sum(group_axis_factor(g, d) * g.quantities.get(quantity, np.nan)
                     for g in lamp_sources(lamp)))


def scale_to_reading(lamp: LedArray, quantity: str, value: float, distance_m: float) -> LedArray:
    """An LED array whose emitter outputs are scaled together to match one whole-fitting reading.

    The reading is taken on the fitting's axis, ``distance_m`` below its face, with every
    emitter lit. The ratio between emitter types (their ``radiant_flux_w`` or per-emitter
    references) is kept; all are multiplied by one factor.

    Parameters
    ----------
    lamp : LedArray
        The fitting, with emitter outputs in the right ratio (any common scale).
    quantity : str
        A key of :func:`audit_lib.light.metrics.weighted_quantities` (``"uvi"`` ...).
    value : float
        The reading, in the quantity's unit.
    distance_m : float
        Fitting-to-sensor distance on its axis [m].

    Returns
    -------
    LedArray
    """
    if not isinstance(lamp, LedArray):
        raise InputError(f"a whole-fitting reference applies to LED arrays, not "
                         f"{type(lamp).__name__}", field=f"{lamp.name}.reference")
    now = quantity_on_axis(lamp, quantity, distance_m)
    if not np.isfinite(now) or now <= 0:
        raise InputError(f"the emitters of {lamp.name!r} give no {quantity}; cannot scale the "
                         "fitting to a reading of it", field=f"{lamp.name}.reference")
    factor = float(value) / now
    types = tuple(replace(t, radiant_flux_w=t.radiant_flux_w * factor)
                  for t in lamp.emitter_types)
    return replace(lamp, emitter_types=types)
