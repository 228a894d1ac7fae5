"""Inverse questions: which mount height or emitter count brings a surface into its UVI range.

The one search of each kind in the library: report actions, the what-if planner and users
all call :func:`height_for_target` and :func:`emitter_count_for_target`.

Height: the lamp is moved vertically (x, y, tilt kept) over a grid of heights bounded by
the enclosure (never above its top, or above the lamp's present mount when that is already
above the top, e.g. on a mesh roof), the surface statistic is recomputed at each height
(cheap: weight first, place second; the other lamps are evaluated once) and the heights
whose statistic lies inside the range are reported. A scan, not a root search, so several
separate height bands (possible with tilted or off-centre lamps) are all found; an aimed-at
value inside the range is located by linear interpolation between scanned heights.

This module answers with numbers only; sentences for a report are built from them in
:mod:`audit_lib.judge.verdicts`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from audit_lib.errors import InputError
from audit_lib.scene.maps import Enclosure, evaluate_points, surface_grid
from audit_lib.sources.lamps import EmitterPosition, LedArray

#: Statistics of the surface UVI that :func:`height_for_target` can aim at.
HEIGHT_STATISTICS = ("max", "mean")
#: Lowest height scanned above the surface, and the scan step [m].
LOWEST_CLEARANCE_M = 0.05
HEIGHT_STEP_M = 0.01
#: With an aimed-at value, a first pass scans every 5th height; the heights between are
#: scanned only where that pass crosses the aim or an end of the range.
COARSE_EVERY = 5


@dataclass(frozen=True)
class HeightAnswer:
    """Answer of :func:`height_for_target`.

    Parameters
    ----------
    lamp : str
        Lamp id that was moved.
    surface : str
        Surface name.
    statistic : str
        ``"max"`` or ``"mean"`` of the surface UVI.
    uvi_range : tuple of float
        Target (lo, hi) [-].
    heights_m : numpy.ndarray
        Lamp heights scanned (lamp face above the floor), bounded by ``top_m`` [m]; with an
        aimed-at value, 1 cm steps only near the crossings of the aim and the range ends.
    uvi : numpy.ndarray
        The statistic at each height [-].
    achievable : bool
        Whether any scanned height gives a value inside the range.
    suggested_height_m : float
        Lamp face above the floor: where the statistic equals the aimed-at value when one
        was given and reachable inside the range; else the middle of the widest band of
        good heights; if none, the scanned height that comes closest [m].
    suggested_uvi : float
        The statistic at the suggested height [-].
    good_bands_m : tuple of tuple of float
        (lowest, highest) good height of each band [m].
    top_m : float
        Highest height allowed: the enclosure top (or the lamp's present mount if higher) [m].
    present_height_m : float
        The lamp face's present height above the floor [m].
    surface_z_m : float
        Height of the surface above the floor [m].
    side : str
        ``""`` when achievable; else ``"above"`` or ``"below"``: where the closest value
        still lies against the range.
    """

    lamp: str
    surface: str
    statistic: str
    uvi_range: tuple
    heights_m: np.ndarray
    uvi: np.ndarray
    achievable: bool
    suggested_height_m: float
    suggested_uvi: float
    good_bands_m: tuple
    top_m: float
    present_height_m: float
    surface_z_m: float
    side: str


def _question_range(statistic: str, uvi_range) -> tuple[float, float]:
    """Validate the statistic and the target range of an inverse question; return (lo, hi)."""
    if statistic not in HEIGHT_STATISTICS:
        raise InputError(
            f"unknown statistic {statistic!r}",
            field="statistic",
            hint="use one of " + ", ".join(HEIGHT_STATISTICS),
        )
    lo, hi = (float(v) for v in uvi_range)
    if not 0 <= lo <= hi:
        raise InputError(
            f"UVI range ({lo:g}, {hi:g}) must satisfy 0 <= lo <= hi", field="uvi_range"
        )
    return lo, hi


def _lamp_index(enclosure: Enclosure, lamp: str) -> int:
    index = [i for i, p in enumerate(enclosure.lamps) if p.id == lamp]
    if not index:
        raise InputError(
            f"no lamp {lamp!r} in enclosure {enclosure.name!r}",
            field="lamp",
            hint="lamps: " + ", ".join(p.id for p in enclosure.lamps),
        )
    return index[0]


def _failed_of(failed, lamp_id: str) -> tuple:
    return tuple(f for f in failed if f == lamp_id or f.startswith(f"{lamp_id}/"))


def _aimed_height(heights, values, aim, bands):
    """Height where the statistic crosses ``aim`` (linear between scanned heights) [m].

    The crossing inside the widest good band is preferred; None when the scan never
    crosses ``aim``.
    """
    diff = values - aim
    crossings = []
    for j in range(len(heights) - 1):
        a, b = diff[j], diff[j + 1]
        if a == 0:
            crossings.append(float(heights[j]))
        elif a * b < 0:
            crossings.append(float(heights[j] + (heights[j + 1] - heights[j]) * a / (a - b)))
    if len(heights) and diff[-1] == 0:
        crossings.append(float(heights[-1]))
    if not crossings:
        return None
    if bands:
        low, high = max(bands, key=lambda b: b[1] - b[0])
        inside = [h for h in crossings if low - HEIGHT_STEP_M <= h <= high + HEIGHT_STEP_M]
        crossings = inside or crossings
    return crossings[0]


def height_for_target(
    enclosure: Enclosure,
    lamp: str,
    surface: str,
    uvi_range,
    statistic: str = "max",
    heights_m=None,
    spacing_m: float = 0.02,
    *,
    aim_uvi: float | None = None,
    failed=(),
    scale: float = 1.0,
) -> HeightAnswer:
    """Mount height of one lamp that brings a surface's UVI into a range, within the enclosure.

    Parameters
    ----------
    enclosure : Enclosure
        The scene; other lamps stay where they are.
    lamp : str
        Id of the lamp to move.
    surface : str
        Surface name (the basking surface).
    uvi_range : tuple of float
        Target (lo, hi) [-].
    statistic : str, optional
        ``"max"`` (default) or ``"mean"`` of the surface UVI.
    heights_m : array_like, optional
        Heights to scan (lamp face above the floor) [m]; heights above the enclosure top
        are left out. Default: 1 cm steps from 5 cm above the surface to the top.
    spacing_m : float, optional
        Grid cell size on the surface [m].
    aim_uvi : float, optional
        Value inside the range to aim at (e.g. the range's middle) [-].
    failed : collection of str, optional
        Failure labels that are out (see :func:`audit_lib.scene.maps.evaluate_points`).
    scale : float, optional
        Factor on every modelled value: calibration to readings or a planned output share
        (all quantities are linear in lamp output) [-].

    Returns
    -------
    HeightAnswer
    """
    lo, hi = _question_range(statistic, uvi_range)
    index = _lamp_index(enclosure, lamp)
    placed = enclosure.lamps[index]
    s = enclosure.surface(surface)
    top = max(float(enclosure.height_m), float(placed.z_m))
    if heights_m is None:
        heights_m = np.arange(s.z_m + LOWEST_CLEARANCE_M, top, HEIGHT_STEP_M)
        heights_m = np.append(heights_m[heights_m < top - 1e-6], top)
    heights = np.sort(np.asarray(heights_m, float).ravel())
    heights = np.minimum(heights[heights <= top + 1e-9], top)
    if heights.size == 0:
        raise InputError(f"no heights to scan at or below the top ({top:.2f} m)",
                         field="heights_m", hint="give heights between the surface and the top")
    _, _, pts = surface_grid(s, spacing_m)
    reduce = np.max if statistic == "max" else np.mean
    others = tuple(p for i, p in enumerate(enclosure.lamps) if i != index)
    base = np.zeros(len(pts))
    if others:
        base = evaluate_points(replace(enclosure, lamps=others), pts, ("uvi",),
                               failed=failed).values["uvi"]
    own_failed = _failed_of(failed, lamp)

    def statistic_at(hs):
        if not enclosure.screens:
            # no screen planes: raising the lamp by d is lowering every point by d (the
            # geometry is relative), so all heights go in one call
            alone = replace(enclosure, lamps=(placed,))
            shifted = np.concatenate([pts - np.array([0.0, 0.0, h - placed.z_m]) for h in hs])
            own = evaluate_points(alone, shifted, ("uvi",), failed=own_failed).values["uvi"]
            return scale * reduce(base + own.reshape(len(hs), -1), axis=1)
        out = np.empty(len(hs))
        for j, h in enumerate(hs):
            moved = replace(enclosure, lamps=(replace(placed, z_m=float(h)),))
            own = evaluate_points(moved, pts, ("uvi",), failed=own_failed).values["uvi"]
            out[j] = scale * reduce(base + own)
        return out

    if aim_uvi is not None and heights.size > 2 * COARSE_EVERY:
        # coarse pass (every COARSE_EVERY-th height and the top), then every height inside
        # the coarse steps where the statistic crosses the aim or the range's ends
        coarse = np.unique(np.r_[np.arange(0, heights.size, COARSE_EVERY), heights.size - 1])
        known = dict(zip(coarse.tolist(), statistic_at(heights[coarse]), strict=True))
        wanted = set()
        for a, b in zip(coarse[:-1], coarse[1:], strict=True):
            va, vb = known[int(a)], known[int(b)]
            if any((va - t) * (vb - t) <= 0 for t in (float(aim_uvi), lo, hi)):
                wanted.update(range(int(a) + 1, int(b)))
        fine = np.array(sorted(wanted - set(known)), dtype=int)
        if fine.size:
            known.update(zip(fine.tolist(), statistic_at(heights[fine]), strict=True))
        keep = np.array(sorted(known), dtype=int)
        heights, values = heights[keep], np.array([known[int(k)] for k in keep])
    else:
        values = statistic_at(heights)
    good = (values >= lo) & (values <= hi)
    bands = _bands(heights, good)
    best = None
    if aim_uvi is not None and bands:
        best = _aimed_height(heights, values, float(aim_uvi), bands)
    if best is None and bands:
        low, high = max(bands, key=lambda b: b[1] - b[0])
        best = 0.5 * (low + high)
    side = ""
    if best is None:
        j = int(np.argmin(np.where(values < lo, lo - values, values - hi)))
        best = float(heights[j])
        side = "above" if values[j] > hi else "below"
    return HeightAnswer(
        lamp,
        surface,
        statistic,
        (lo, hi),
        heights,
        values,
        bool(bands),
        float(best),
        float(np.interp(best, heights, values)),
        tuple(bands),
        top,
        float(placed.z_m),
        float(s.z_m),
        side,
    )


def _bands(heights: np.ndarray, good: np.ndarray) -> list[tuple[float, float]]:
    bands = []
    start = None
    for h, g in zip(heights, good, strict=True):
        if g and start is None:
            start = last = h
        elif g:
            last = h
        elif start is not None:
            bands.append((float(start), float(last)))
            start = None
    if start is not None:
        bands.append((float(start), float(last)))
    return bands


@dataclass(frozen=True)
class CountAnswer:
    """Answer of :func:`emitter_count_for_target`.

    Parameters
    ----------
    lamp, emitter_type, surface, statistic : str
        What was varied and measured.
    uvi_range : tuple of float
        Target (lo, hi) [-].
    counts : numpy.ndarray
        Emitter counts scanned.
    uvi : numpy.ndarray
        The statistic for each count [-].
    achievable : bool
        Whether any count gives a value inside the range.
    suggested_count : int
        Smallest good count; if none, the count that comes closest.
    present_count : int
        Emitters of that type in the lamp now.
    side : str
        ``""`` when achievable; else ``"above"`` or ``"below"``: where the closest value
        still lies against the range.
    """

    lamp: str
    emitter_type: str
    surface: str
    statistic: str
    uvi_range: tuple
    counts: np.ndarray
    uvi: np.ndarray
    achievable: bool
    suggested_count: int
    present_count: int
    side: str


def emitter_count_for_target(
    enclosure: Enclosure,
    lamp: str,
    emitter_type: str,
    surface: str,
    uvi_range,
    statistic: str = "max",
    max_count: int | None = None,
    spacing_m: float = 0.02,
) -> CountAnswer:
    """Number of emitters of one type in an LED array that brings a surface into range.

    The emitters of ``emitter_type`` are replaced by N emitters spread evenly along the
    x extent the type occupies now, in one row at their mean y (other types stay);
    N runs from 1 to ``max_count`` (default four times the present count).

    Parameters
    ----------
    enclosure : Enclosure
        The scene.
    lamp : str
        Id of an LED-array lamp.
    emitter_type : str
        Emitter type whose count is varied.
    surface : str
        Surface name.
    uvi_range : tuple of float
        Target (lo, hi) [-].
    statistic : str, optional
        ``"max"`` or ``"mean"`` of the surface UVI.
    max_count : int, optional
        Largest count tried.
    spacing_m : float, optional
        Grid cell size [m].

    Returns
    -------
    CountAnswer
    """
    lo, hi = _question_range(statistic, uvi_range)
    index = [i for i, p in enumerate(enclosure.lamps) if p.id == lamp]
    if not index or not isinstance(enclosure.lamps[index[0]].lamp, LedArray):
        raise InputError(
            f"no LED-array lamp {lamp!r} in enclosure {enclosure.name!r}",
            field="lamp",
            hint="LED arrays: "
            + ", ".join(p.id for p in enclosure.lamps if isinstance(p.lamp, LedArray)),
        )
    placed = enclosure.lamps[index[0]]
    array = placed.lamp
    mine = [e for e in array.emitters if e.type == emitter_type]
    if not mine:
        raise InputError(
            f"lamp {lamp!r} has no emitters of type {emitter_type!r}",
            field="emitter_type",
            hint="types: " + ", ".join(sorted({e.type for e in array.emitters})),
        )
    others = tuple(e for e in array.emitters if e.type != emitter_type)
    xs = [e.x_m for e in mine]
    y = float(np.mean([e.y_m for e in mine]))
    counts = np.arange(1, (max_count or 4 * len(mine)) + 1)
    _, _, pts = surface_grid(enclosure.surface(surface), spacing_m)
    reduce = np.max if statistic == "max" else np.mean
    values = np.empty(counts.size)
    lamps = list(enclosure.lamps)
    for j, n in enumerate(counts):
        x = np.linspace(min(xs), max(xs), n) if n > 1 else np.array([np.mean(xs)])
        new = tuple(
            EmitterPosition(emitter_type, float(v), y, name=f"{emitter_type}-{i + 1}")
            for i, v in enumerate(x)
        )
        lamps[index[0]] = replace(placed, lamp=replace(array, emitters=others + new))
        scene = replace(enclosure, lamps=tuple(lamps))
        values[j] = reduce(evaluate_points(scene, pts, ("uvi",)).values["uvi"])
    good = (values >= lo) & (values <= hi)
    side = ""
    if good.any():
        best = int(counts[np.argmax(good)])
    else:
        j = int(np.argmin(np.where(values < lo, lo - values, values - hi)))
        best = int(counts[j])
        side = "above" if values[j] > hi else "below"
    return CountAnswer(
        lamp,
        emitter_type,
        surface,
        statistic,
        (lo, hi),
        counts,
        values,
        bool(good.any()),
        best,
        len(mine),
        side,
    )
