"""Point-source geometry: how much of each source reaches each point of a surface.

For a source of intensity I(theta) = I_max * p(theta) at distance r from a surface
element whose normal makes the angle i with the incoming ray, the irradiance is
E = I_max p(theta) cos(i) / r^2 (inverse-square and cosine laws of photometry; e.g.
Ryer, Light Measurement Handbook, 1997, ch. 8; any lighting handbook). This module
computes the factor p(theta) cos(i) / r^n per source and point, so that a map is one
matrix product of the sources' weighted quantities with these factors.

Points are processed in blocks so temporaries stay small. The general path is float64;
the fast path (level receiver, emitters pointing straight down, cos^m pattern) is float32.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from audit_lib.sources.emitters import AngularPattern, pattern_relative_intensity
from audit_lib.sources.lamps import LINE_ELEMENT, SourceGroup

_BLOCK = 4096


@dataclass(frozen=True)
class ScreenPlane:
    """A horizontal screen as the kernel sees it.

    Parameters
    ----------
    z_m : float
        Height of the screen plane [m].
    bounds_m : tuple of float or None
        (x_min, x_max, y_min, y_max) [m]; None = unbounded.
    """

    z_m: float
    bounds_m: tuple[float, float, float, float] | None = None


@dataclass
class GroupFactors:
    """Geometry factors of one source group over a set of points.

    Parameters
    ----------
    factor : numpy.ndarray or None
        (n_sources, n_points) weight x p(theta) x cos(i) / r^n [m-n]; None when the
        caller did not ask to keep it.
    alive_sum : numpy.ndarray
        (n_points,) ``alive @ factor``: the factor summed over working sources.
    total : numpy.ndarray
        (n_points,) the factor summed over all sources.
    factor_cos : numpy.ndarray
        (n_points,) sum over sources of factor x cos(i), for the mean incidence angle.
    distance_m : numpy.ndarray or None
        (n_sources, n_points) distances [m], kept only for measured lamps.
    screen_masks : list of numpy.ndarray or bool
        Per screen: True/False if every/no ray crosses it, else a (n_sources, n_points)
        boolean mask of rays that cross it.
    """

    factor: np.ndarray | None
    alive_sum: np.ndarray
    total: np.ndarray
    factor_cos: np.ndarray
    distance_m: np.ndarray | None
    screen_masks: list


def _pattern(group: SourceGroup, cos_t: np.ndarray) -> np.ndarray:
    """Relative intensity from cos(angle to the axis); overwrites ``cos_t`` when it can."""
    if isinstance(group.pattern, str):
        if group.pattern != LINE_ELEMENT:
            raise ValueError(f"unknown pattern marker {group.pattern!r}")
        np.multiply(cos_t, cos_t, out=cos_t)  # sin of the angle to the tube axis
        np.subtract(1.0, cos_t, out=cos_t)
        np.maximum(cos_t, 0.0, out=cos_t)
        return np.sqrt(cos_t, out=cos_t)
    if isinstance(group.pattern, AngularPattern):
        return pattern_relative_intensity(group.pattern, cos_t)
    m = float(group.pattern)
    np.maximum(cos_t, 0.0, out=cos_t)
    return cos_t if m == 1.0 else np.power(cos_t, m, out=cos_t)


def group_factors(
    group: SourceGroup,
    points_m: np.ndarray,
    normal=(0.0, 0.0, 1.0),
    screens: tuple[ScreenPlane, ...] = (),
    alive=None,
    keep: bool = True,
) -> GroupFactors:
    """Geometry factors of every source of a group at every point.

    Parameters
    ----------
    group : SourceGroup
        Sources in the enclosure frame.
    points_m : numpy.ndarray
        (n_points, 3) receiving points [m].
    normal : array_like, optional
        Unit normal of the receiving surface (default facing up) [-].
    screens : tuple of ScreenPlane, optional
        Screens whose crossings are recorded.
    alive : array_like, optional
        (n_sources,) 1 for working, 0 for failed sources; default all working.
    keep : bool, optional
        Keep the (n_sources, n_points) factor; the fast path can skip it when only
        the sums are needed.

    Returns
    -------
    GroupFactors
    """
    pts = np.asarray(points_m, float)
    n_pts = pts.shape[0]
    pos, axes = group.positions_m, group.axes
    n_src = pos.shape[0]
    if tuple(normal) == _UP:
        nx, ny, nz = _UP
    else:
        nx, ny, nz = (float(c) for c in np.asarray(normal, float) / np.linalg.norm(normal))
    alive = np.ones(n_src) if alive is None else np.asarray(alive, float)
    if _straight_down(group, (nx, ny, nz), pts) and all(sc.bounds_m is None for sc in screens):
        gf = _straight_down_factors(group, pts, alive, keep)
        zp = pts[0, 2]
        for sc in screens:  # unbounded plane: crossing depends on heights only
            crossing = (pos[:, 2] - sc.z_m) * (zp - sc.z_m) < 0
            gf.screen_masks.append(
                bool(crossing[0])
                if np.all(crossing == crossing[0])
                else np.broadcast_to(crossing[:, None], (n_src, n_pts))
            )
        return gf
    keep = keep or group.valid_range_m is not None  # measured lamps need it for range flags
    factor = np.empty((n_src, n_pts)) if keep else None
    alive_sum = np.empty(n_pts)
    total = np.empty(n_pts)
    factor_cos = np.empty(n_pts)
    keep_r = group.valid_range_m is not None
    distance = np.empty((n_src, n_pts)) if keep_r else None
    masks = [np.empty((n_src, n_pts), bool) for _ in screens]
    sx, sy, sz = (pos[:, i : i + 1] for i in range(3))
    ax, ay, az = (axes[:, i : i + 1] for i in range(3))
    w = np.asarray(group.weights, float)[:, None]
    n_exp = float(group.distance_exponent)
    width0 = min(_BLOCK, n_pts)
    dx, dy, dz, r2, inv_r, cos_i, cos_t, tmp = (np.empty((n_src, width0)) for _ in range(8))
    spare = None if keep else np.empty((n_src, width0))
    for start in range(0, n_pts, _BLOCK):
        sl = slice(start, min(start + _BLOCK, n_pts))
        k = sl.stop - sl.start
        bx, by, bz, br2, binv, bci, bct, btmp = (
            a[:, :k] for a in (dx, dy, dz, r2, inv_r, cos_i, cos_t, tmp)
        )
        np.subtract(pts[None, sl, 0], sx, out=bx)
        np.subtract(pts[None, sl, 1], sy, out=by)
        np.subtract(pts[None, sl, 2], sz, out=bz)
        np.multiply(bx, bx, out=br2)
        np.multiply(by, by, out=btmp)
        br2 += btmp
        np.multiply(bz, bz, out=btmp)
        br2 += btmp
        np.maximum(br2, 1e-12, out=br2)
        np.sqrt(br2, out=binv)
        if keep_r:
            distance[:, sl] = binv
        np.divide(1.0, binv, out=binv)
        _dot(bx, by, bz, -nx, -ny, -nz, out=bci, tmp=btmp)
        bci *= binv
        np.maximum(bci, 0.0, out=bci)
        _dot(bx, by, bz, ax, ay, az, out=bct, tmp=btmp)
        bct *= binv
        rel = _pattern(group, bct)
        block = factor[:, sl] if keep else spare[:, :k]
        if n_exp == 2.0:
            np.multiply(binv, binv, out=block)
        else:
            np.power(binv, n_exp, out=block)
        block *= rel
        block *= bci
        block *= w
        np.matmul(alive, block, out=alive_sum[sl])
        block.sum(axis=0, out=total[sl])
        np.multiply(block, bci, out=btmp)
        factor_cos[sl] = btmp.sum(axis=0)
        for mask, screen in zip(masks, screens, strict=True):
            mask[:, sl] = _crosses(screen, sx, sy, sz, bx, by, bz)
    out_masks = []
    for mask in masks:
        if mask.all():
            out_masks.append(True)
        elif not mask.any():
            out_masks.append(False)
        else:
            out_masks.append(mask)
    return GroupFactors(factor, alive_sum, total, factor_cos, distance, out_masks)


_UP = (0.0, 0.0, 1.0)
#: Per source group (by identity, held here): whether its sources suit the fast path, their
#: single-precision positions and, per receiver height, the height terms. Sized for the
#: groups of a few scenes; emptied when it grows past :data:`_FAST_PARTS_MAX`.
_fast_parts_of: dict = {}
_FAST_PARTS_MAX = 512


def _fast_parts(group: SourceGroup) -> dict | None:
    """The fast path's per-group terms (None: the group's sources do not suit it)."""
    hit = _fast_parts_of.get(id(group))
    if hit is not None and hit[0] is group:
        return hit[1]
    parts = None
    if (not isinstance(group.pattern, (str, AngularPattern))
            and group.distance_exponent == 2.0
            and group.valid_range_m is None
            and bool(np.all(group.axes == np.array([0.0, 0.0, -1.0])))):
        f32 = np.float32
        parts = {"sx": group.positions_m[:, 0:1].astype(f32),
                 "sy": group.positions_m[:, 1:2].astype(f32), "levels": {}}
    if len(_fast_parts_of) >= _FAST_PARTS_MAX:
        _fast_parts_of.clear()
    _fast_parts_of[id(group)] = (group, parts)
    return parts


def _straight_down(group: SourceGroup, normal, pts) -> bool:
    """True when the fast path applies: facing up, axes straight down, cos^m, 1/r^2."""
    return (
        normal == _UP
        and pts.size > 0
        and _fast_parts(group) is not None
        and bool(np.all(pts[:, 2] == pts[0, 2]))
    )


def _level_terms(group: SourceGroup, parts: dict, z_m) -> tuple:
    """Height terms of the fast path for receivers at height ``z_m``, kept per group."""
    key = float(z_m)
    terms = parts["levels"].get(key)
    if terms is None:
        f32 = np.float32
        m = float(group.pattern)
        h = group.positions_m[:, 2:3] - z_m
        lit = h > 0
        scale = np.where(lit, np.asarray(group.weights, float)[:, None] * np.abs(h) ** (m + 1),
                         0.0)
        terms = (scale.astype(f32), (h * h).astype(f32), np.abs(h).astype(f32),
                 f32(-(m + 3.0) / 2.0))
        if len(parts["levels"]) >= 64:
            parts["levels"].clear()
        parts["levels"][key] = terms
    return terms


def _straight_down_factors(
    group: SourceGroup, pts: np.ndarray, alive: np.ndarray, keep: bool
) -> GroupFactors:
    """Fast path: with the axis along -z and a level receiver, cos(theta) = cos(i) = h/r.

    The factor w cos^m(theta) cos(i) / r^2 becomes w h^(m+1) r^-(m+3), one power per
    element instead of a general pattern evaluation. Computed in single precision
    (relative error about 1e-6, far below any meter's uncertainty) for speed.
    """
    n_src, n_pts = group.positions_m.shape[0], pts.shape[0]
    f32 = np.float32
    parts = _fast_parts(group)
    scale, h2, abs_h, exponent = _level_terms(group, parts, pts[0, 2])
    factor = np.empty((n_src, n_pts)) if keep else None
    factor_cos = np.empty(n_pts)
    alive_sum = np.empty(n_pts)
    total = np.empty(n_pts)
    sx, sy = parts["sx"], parts["sy"]
    px, py = pts[:, 0].astype(f32), pts[:, 1].astype(f32)
    alive32 = alive.astype(f32)
    # preallocated single-precision buffers: fresh temporaries cost more than the arithmetic
    width0 = min(_BLOCK, n_pts)
    a, b, c = (np.empty((n_src, width0), f32) for _ in range(3))
    for start in range(0, n_pts, _BLOCK):
        sl = slice(start, min(start + _BLOCK, n_pts))
        width = sl.stop - sl.start
        r2, tmp, block = a[:, :width], b[:, :width], c[:, :width]
        np.subtract(px[None, sl], sx, out=r2)
        np.multiply(r2, r2, out=r2)
        np.subtract(py[None, sl], sy, out=tmp)
        np.multiply(tmp, tmp, out=tmp)
        r2 += tmp
        r2 += h2
        np.power(r2, exponent, out=block)
        block *= scale
        if keep:
            factor[:, sl] = block
        alive_sum[sl] = alive32 @ block
        total[sl] = block.sum(axis=0)
        np.sqrt(r2, out=r2)
        np.divide(abs_h, r2, out=r2)
        r2 *= block
        factor_cos[sl] = r2.sum(axis=0)
    return GroupFactors(factor, alive_sum, total, factor_cos, None, [])


def _dot(bx, by, bz, cx, cy, cz, out, tmp) -> np.ndarray:
    """Write cx * bx + cy * by + cz * bz into ``out`` (c scalars or (n, 1) columns)."""
    np.multiply(bx, cx, out=out)
    np.multiply(by, cy, out=tmp)
    out += tmp
    np.multiply(bz, cz, out=tmp)
    out += tmp
    return out


def _crosses(screen: ScreenPlane, sx, sy, sz, dx, dy, dz) -> np.ndarray:
    """True where the segment source -> point crosses the screen plane inside its bounds."""
    zs = screen.z_m
    with np.errstate(divide="ignore", invalid="ignore"):
        t = (zs - sz) / dz
    crossing = (t > 0) & (t < 1)
    if screen.bounds_m is None:
        return crossing
    x0, x1, y0, y1 = screen.bounds_m
    xi = sx + t * dx
    yi = sy + t * dy
    return crossing & (xi >= x0) & (xi <= x1) & (yi >= y0) & (yi <= y1)
