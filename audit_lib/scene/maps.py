"""Irradiance maps over enclosure surfaces, area statistics and point queries.

Maps superpose point sources (:mod:`audit_lib.scene.geometry`): every weighted quantity is
linear in spectral irradiance, so a map is the sum over sources of the source's weighted
quantities times its geometry factor ("weight first, place second", design.md). The
records (:class:`Enclosure`, :class:`Surface`, :class:`Screen`, :class:`PlacedLamp`) live
in :mod:`audit_lib.scene.enclosure` and are re-exported here.

Not modelled: shading of one surface by another, reflections from walls and substrate,
the angle dependence of screen transmission (normal-incidence values are used).
"""

from __future__ import annotations

import math
import sys
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from audit_lib.errors import InputError
from audit_lib.light.metrics import MAP_QUANTITIES
from audit_lib.scene.enclosure import (  # noqa: F401  (re-exported)
    SURFACE_KINDS,
    Enclosure,
    PlacedLamp,
    Scene,
    Screen,
    Surface,
    mesh_transmission,
    placed_groups,
    rotation_matrix,
)
from audit_lib.scene.geometry import ScreenPlane, group_factors
from audit_lib.sources.emitters import weigh_spectral
from audit_lib.sources.lamps import SourceGroup, warn_outside_range


def _screen_factor(screen: Screen, group: SourceGroup, quantities) -> np.ndarray:
    """Per-quantity transmission of a screen for one source group [-]."""
    if screen.transmission is not None:
        return np.full(len(quantities), float(screen.transmission))
    if group.spectral is None:
        raise InputError(
            f"screen {screen.name!r} has a spectral transmittance but lamp source "
            f"{group.type_name!r} has no spectrum",
            field=f"{screen.name}.transmittance",
            hint="give the lamp a spectrum, or give the screen one transmission value",
        )

    tr = np.interp(group.wavelength_nm, screen.wavelength_nm, screen.transmittance, 0.0, 0.0)
    through = weigh_spectral(group.wavelength_nm, group.spectral * tr)
    bare = weigh_spectral(group.wavelength_nm, group.spectral)
    return np.array([through[q] / bare[q] if bare[q] > 0 else 0.0 for q in quantities])


@dataclass
class Evaluation:
    """Quantities at a set of points (internal record of :func:`evaluate_points`).

    Parameters
    ----------
    values : dict of str to numpy.ndarray
        (n_points,) per quantity.
    incidence_deg : numpy.ndarray
        (n_points,) flux-weighted mean angle of incidence [deg].
    extrapolated : numpy.ndarray
        (n_points,) True where a measured lamp is outside its measured range.
    labels : tuple of str
        Failure unit of each row of ``contributions``.
    contributions : dict of str to numpy.ndarray
        (n_sources, n_points) per quantity, only when asked for.
    """

    values: dict
    incidence_deg: np.ndarray
    extrapolated: np.ndarray
    labels: tuple = ()
    contributions: dict = field(default_factory=dict)


def evaluate_points(
    enclosure: Enclosure,
    points_m: np.ndarray,
    quantities=None,
    normal=(0.0, 0.0, 1.0),
    failed=(),
    per_source: tuple[str, ...] = (),
) -> Evaluation:
    """Weighted quantities at arbitrary points by superposition of all sources.

    Parameters
    ----------
    enclosure : Enclosure
        The scene.
    points_m : numpy.ndarray
        (n_points, 3) points [m].
    quantities : sequence of str, optional
        Keys of ``metrics.weighted_quantities``; default ``metrics.MAP_QUANTITIES``.
    normal : array_like, optional
        Receiver normal, default facing up [-].
    failed : collection of str, optional
        Failure units (labels, see :func:`placed_groups`) that are out.
    per_source : tuple of str, optional
        Quantities for which per-source contributions are returned.

    Returns
    -------
    Evaluation
    """
    if quantities is None:

        quantities = MAP_QUANTITIES
    quantities = tuple(quantities)
    failed = set(failed)
    pts = np.asarray(points_m, float).reshape(-1, 3)
    planes = tuple(ScreenPlane(s.z_m, s.bounds_m) for s in enclosure.screens)
    values = {q: np.zeros(len(pts)) for q in quantities}
    num_cos = np.zeros(len(pts))
    den = np.zeros(len(pts))
    extrapolated = np.zeros(len(pts), bool)
    labels: list[str] = []
    contributions = {q: [] for q in per_source}
    for q in per_source:
        if q not in quantities:
            raise InputError(f"per-source quantity {q!r} is not among the quantities asked for")
    groups = placed_groups(enclosure)
    unknown = failed - {lab for _, g in groups for lab in g.labels}
    if unknown:
        raise InputError(
            "unknown emitter(s) given as failed: " + ", ".join(sorted(unknown)),
            field="failed",
            hint="labels look like '<lamp id>/<emitter name>' for LED arrays",
        )
    for placed, g in groups:
        alive = (np.array([lab not in failed for lab in g.labels], float) if failed
                 else np.ones(len(g.labels)))
        gf = group_factors(g, pts, normal, planes, alive, keep=bool(per_source))
        if gf.factor is None and any(m is not True and m is not False for m in gf.screen_masks):
            gf = group_factors(g, pts, normal, planes, alive, keep=True)
        q_vec = np.array([g.quantities.get(q, np.nan) for q in quantities])
        full = np.ones(len(quantities))
        partial = []
        for screen, mask in zip(enclosure.screens, gf.screen_masks, strict=True):
            if mask is False:
                continue
            t = _screen_factor(screen, g, quantities)
            if mask is True:
                full *= t
            else:
                partial.append((mask, t))
        base = gf.alive_sum
        for k, q in enumerate(quantities):
            if partial:
                f = np.ones_like(gf.factor)
                for mask, t in partial:
                    f *= np.where(mask, t[k], 1.0)
                per = gf.factor * f
                values[q] += q_vec[k] * full[k] * (alive @ per)
            else:
                per = None
                values[q] += q_vec[k] * full[k] * base
            if q in contributions:
                per = gf.factor if per is None else per
                contributions[q].append(q_vec[k] * full[k] * per * alive[:, None])
        labels.extend(g.labels)
        w_ref = _finite_or_one(q_vec[0])
        num_cos += w_ref * gf.factor_cos
        den += w_ref * gf.total
        if g.valid_range_m is not None:
            lit = gf.factor > 0
            if lit.any():
                warn_outside_range(placed.id, gf.distance_m[lit], g.valid_range_m)
            extrapolated |= _outside(gf.distance_m, g.valid_range_m, lit)
    with np.errstate(invalid="ignore", divide="ignore"):
        mean_cos = np.where(den > 0, num_cos / den, np.nan)
    incidence = np.degrees(np.arccos(np.clip(mean_cos, -1.0, 1.0)))
    return Evaluation(
        values,
        incidence,
        extrapolated,
        tuple(labels),
        {q: np.vstack(c) if c else np.zeros((0, len(pts))) for q, c in contributions.items()},
    )


def _finite_or_one(value) -> float:
    """``numpy.nan_to_num(value, nan=1.0) or 1.0`` for one number (without its overhead)."""
    value = float(value)
    if math.isnan(value) or value == 0.0:
        return 1.0
    if math.isinf(value):
        return math.copysign(sys.float_info.max, value)
    return value


def _outside(distance_m, valid, lit) -> np.ndarray:
    lo, hi = valid
    return np.any(((distance_m < lo * 0.999) | (distance_m > hi * 1.001)) & lit, axis=0)


@dataclass
class SurfaceMap:
    """Maps of weighted quantities over one surface.

    Parameters
    ----------
    surface : Surface
        The surface.
    x_m, y_m : numpy.ndarray
        Cell-centre coordinates [m], shapes (nx,) and (ny,).
    values : dict of str to numpy.ndarray
        (ny, nx) map per quantity (UVI [-], W m-2, lux).
    incidence_deg : numpy.ndarray
        (ny, nx) flux-weighted mean angle of incidence [deg].
    extrapolated : numpy.ndarray
        (ny, nx) True where a measured lamp is used outside its measured range.
    failed : tuple of str
        Failure units that were out for this map.
    """

    surface: Surface
    x_m: np.ndarray
    y_m: np.ndarray
    values: dict
    incidence_deg: np.ndarray
    extrapolated: np.ndarray
    failed: tuple = ()


def surface_grid(surface: Surface, spacing_m: float = 0.01, shape=None):
    """Cell-centre grid over a surface.

    Parameters
    ----------
    surface : Surface
        The surface.
    spacing_m : float, optional
        Target cell size [m] (cells are equal-area; the count is rounded up).
    shape : tuple of int, optional
        (ny, nx) instead of ``spacing_m``.

    Returns
    -------
    x_m, y_m, points_m : numpy.ndarray
        (nx,), (ny,) and (ny * nx, 3) [m].
    """
    if shape is None and spacing_m <= 0:
        raise InputError("grid spacing must be positive", field="spacing_m")
    if shape is None:
        return _surface_grid(surface, float(spacing_m), None)
    return _surface_grid(surface, 0.0, tuple(int(v) for v in shape))


@lru_cache(maxsize=256)
def _surface_grid(surface: Surface, spacing_m: float, shape):
    """:func:`surface_grid`, kept per surface and grid.

    Read-only arrays: the same surfaces are gridded again for every placement the what-if
    planner tries.
    """
    w = surface.x_max_m - surface.x_min_m
    d = surface.y_max_m - surface.y_min_m
    if shape is None:
        shape = tuple(max(1, int(np.ceil(length / spacing_m - 1e-9))) for length in (d, w))
    ny, nx = (int(v) for v in shape)
    x = surface.x_min_m + (np.arange(nx) + 0.5) * w / nx
    y = surface.y_min_m + (np.arange(ny) + 0.5) * d / ny
    xx, yy = np.meshgrid(x, y)
    pts = np.column_stack([xx.ravel(), yy.ravel(), np.full(xx.size, surface.z_m)])
    for a in (x, y, pts):
        a.flags.writeable = False
    return x, y, pts


def compute_maps(
    enclosure: Enclosure,
    quantities=None,
    spacing_m: float = 0.01,
    surfaces=None,
    shape=None,
    failed=(),
) -> dict[str, SurfaceMap]:
    """Maps of weighted quantities over the enclosure's surfaces.

    Parameters
    ----------
    enclosure : Enclosure
        The scene.
    quantities : sequence of str, optional
        Default ``metrics.MAP_QUANTITIES`` (UVI, vitamin-D-weighted, UVB, illuminance).
    spacing_m : float, optional
        Grid cell size [m].
    surfaces : sequence of str, optional
        Surface names; default all (floor included).
    shape : tuple of int, optional
        (ny, nx) grid per surface instead of ``spacing_m``.
    failed : collection of str, optional
        Failure units that are out.

    Returns
    -------
    dict of str to SurfaceMap
        Keyed by surface name.
    """
    chosen = (
        enclosure.all_surfaces if surfaces is None else [enclosure.surface(n) for n in surfaces]
    )
    out = {}
    for s in chosen:
        x, y, pts = surface_grid(s, spacing_m, shape)
        ev = evaluate_points(enclosure, pts, quantities, failed=failed)
        grid = (len(y), len(x))
        out[s.name] = SurfaceMap(
            s,
            x,
            y,
            {q: v.reshape(grid) for q, v in ev.values.items()},
            ev.incidence_deg.reshape(grid),
            ev.extrapolated.reshape(grid),
            tuple(sorted(failed)),
        )
    return out


@dataclass(frozen=True)
class SurfaceStatistics:
    """Area statistics of one surface map (see :func:`surface_statistics`).

    Parameters
    ----------
    surface : str
        Surface name.
    kind : str
        Surface kind.
    area_m2 : float
        Surface area [m2].
    maximum, mean, minimum : dict of str to float
        Per quantity, in its unit.
    uniformity : dict of str to float
        Minimum / mean per quantity [-] (common practice in lighting design).
    uvi_range : tuple of float or None
        Target UVI range used [-].
    share_in_uvi_range : float
        Share of the area with lo <= UVI <= hi [-] (NaN without a range).
    refuge_below_uvi : float or None
        Refuge threshold used [-].
    share_refuge : float
        Share of the area with UVI below the refuge threshold [-] (NaN without one).
    share_extrapolated : float
        Share of the area where a measured lamp was extrapolated [-].
    """

    surface: str
    kind: str
    area_m2: float
    maximum: dict
    mean: dict
    minimum: dict
    uniformity: dict
    uvi_range: tuple | None
    share_in_uvi_range: float
    refuge_below_uvi: float | None
    share_refuge: float
    share_extrapolated: float


def surface_statistics(
    surface_map: SurfaceMap, uvi_range=None, refuge_below_uvi: float | None = None
) -> SurfaceStatistics:
    """Maximum, mean, minimum, uniformity and area shares of a surface map.

    Grid cells are equal-area, so area shares are shares of cells.

    Parameters
    ----------
    surface_map : SurfaceMap
        A map from :func:`compute_maps`.
    uvi_range : tuple of float, optional
        (lo, hi) target UVI range for the basking area [-].
    refuge_below_uvi : float, optional
        UVI below which a cell counts as UV refuge [-].

    Returns
    -------
    SurfaceStatistics
    """
    vals = surface_map.values
    maximum = {q: float(np.max(v)) for q, v in vals.items()}
    mean = {q: float(np.mean(v)) for q, v in vals.items()}
    minimum = {q: float(np.min(v)) for q, v in vals.items()}
    uniformity = {q: minimum[q] / mean[q] if mean[q] > 0 else float("nan") for q in vals}
    uvi = vals.get("uvi")
    share_in = share_refuge = float("nan")
    if uvi_range is not None:
        lo, hi = (float(v) for v in uvi_range)
        if lo > hi:
            raise InputError(f"UVI range ({lo:g}, {hi:g}) is reversed", field="uvi_range")
        if uvi is None:
            raise InputError("a UVI range needs the 'uvi' quantity in the map", field="uvi_range")
        share_in = float(np.mean((uvi >= lo) & (uvi <= hi)))
    if refuge_below_uvi is not None:
        if uvi is None:
            raise InputError("a refuge threshold needs the 'uvi' quantity", field="refuge")
        share_refuge = float(np.mean(uvi < float(refuge_below_uvi)))
    s = surface_map.surface
    return SurfaceStatistics(
        s.name,
        s.kind,
        s.area_m2,
        maximum,
        mean,
        minimum,
        uniformity,
        None if uvi_range is None else tuple(float(v) for v in uvi_range),
        share_in,
        refuge_below_uvi,
        share_refuge,
        float(np.mean(surface_map.extrapolated)),
    )


def statistics_table(maps: Mapping[str, SurfaceMap], uvi_range=None, refuge_below_uvi=None):
    """Long table of surface statistics: one row per surface and quantity.

    Parameters
    ----------
    maps : mapping of str to SurfaceMap
        Output of :func:`compute_maps`.
    uvi_range : tuple of float, optional
        Target UVI range [-].
    refuge_below_uvi : float, optional
        Refuge threshold [-].

    Returns
    -------
    pandas.DataFrame
        Columns ``surface``, ``kind``, ``quantity``, ``maximum``, ``mean``, ``minimum``,
        ``uniformity``, ``share_in_uvi_range``, ``share_refuge``, ``area_m2``.
    """
    import pandas as pd

    rows = []
    for m in maps.values():
        st = surface_statistics(m, uvi_range, refuge_below_uvi)
        for q in st.maximum:
            rows.append(
                {
                    "surface": st.surface,
                    "kind": st.kind,
                    "quantity": q,
                    "maximum": st.maximum[q],
                    "mean": st.mean[q],
                    "minimum": st.minimum[q],
                    "uniformity": st.uniformity[q],
                    "share_in_uvi_range": st.share_in_uvi_range,
                    "share_refuge": st.share_refuge,
                    "area_m2": st.area_m2,
                }
            )
    return pd.DataFrame(rows)


def point_values(enclosure: Enclosure, positions, quantities=None, normal=(0.0, 0.0, 1.0),
                 failed=()):
    """Weighted quantities at named positions (where the keeper measured).

    Parameters
    ----------
    enclosure : Enclosure
        The scene.
    positions : mapping of str to (x, y, z) or pandas.DataFrame
        Named points [m]; a DataFrame needs columns ``position``, ``x_m``, ``y_m``, ``z_m``.
    quantities : sequence of str, optional
        Default ``metrics.MAP_QUANTITIES``.
    normal : array_like, optional
        Sensor normal, default facing up [-].
    failed : iterable of str, optional
        Failed emitter or lamp labels, left out as in :func:`compute_maps`.

    Returns
    -------
    pandas.DataFrame
        Columns ``position``, ``x_m``, ``y_m``, ``z_m``, one per quantity,
        ``incidence_deg`` and ``extrapolated``.
    """
    import pandas as pd

    if isinstance(positions, Mapping):
        frame = pd.DataFrame(
            [(k, *map(float, v)) for k, v in positions.items()],
            columns=["position", "x_m", "y_m", "z_m"],
        )
    else:
        missing = {"position", "x_m", "y_m", "z_m"} - set(positions.columns)
        if missing:
            raise InputError(
                "positions table lacks column(s) " + ", ".join(sorted(missing)), field="positions"
            )
        frame = positions[["position", "x_m", "y_m", "z_m"]].reset_index(drop=True).copy()
    if frame[["x_m", "y_m", "z_m"]].isna().any().any():
        raise InputError("positions need x_m, y_m and z_m", field="positions")
    ev = evaluate_points(
        enclosure, frame[["x_m", "y_m", "z_m"]].to_numpy(float), quantities, normal=normal,
        failed=failed,
    )
    for q, v in ev.values.items():
        frame[q] = v
    frame["incidence_deg"] = ev.incidence_deg
    frame["extrapolated"] = ev.extrapolated
    return frame
