"""Inverse questions: which mount height brings a basking surface into its UVI range.

The lamp is moved vertically (x, y, tilt kept) over a grid of heights, the surface map
is recomputed at each (cheap: weight first, place second) and the heights whose
statistic lies inside the range are reported. A scan, not a root search, so several
separate height bands (possible with tilted or off-centre lamps) are all found.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from audit_lib.errors import InputError
from audit_lib.scene.maps import Enclosure, evaluate_points, surface_grid
from audit_lib.sources.lamps import EmitterPosition, LedArray

#: Statistics of the surface UVI that :func:`height_for_target` can aim at.
HEIGHT_STATISTICS = ("max", "mean")


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
        Lamp heights scanned (lamp face above the floor) [m].
    uvi : numpy.ndarray
        The statistic at each height [-].
    achievable : bool
        Whether any scanned height gives a value inside the range.
    suggested_height_m : float
        Middle of the widest band of good heights; if none, the height that comes
        closest [m].
    good_bands_m : tuple of tuple of float
        (lowest, highest) good height of each band [m].
    message : str
        One sentence for the report.
    """

    lamp: str
    surface: str
    statistic: str
    uvi_range: tuple
    heights_m: np.ndarray
    uvi: np.ndarray
    achievable: bool
    suggested_height_m: float
    good_bands_m: tuple
    message: str


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


def height_for_target(
    enclosure: Enclosure,
    lamp: str,
    surface: str,
    uvi_range,
    statistic: str = "max",
    heights_m=None,
    spacing_m: float = 0.02,
) -> HeightAnswer:
    """Mount height of one lamp that brings a surface's UVI into a range.

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
        Heights to scan [m]; default 1 cm steps from 5 cm above the surface to the
        enclosure height (mounting above a mesh top is given explicitly).
    spacing_m : float, optional
        Grid cell size on the surface [m].

    Returns
    -------
    HeightAnswer
    """
    lo, hi = _question_range(statistic, uvi_range)
    index = [i for i, p in enumerate(enclosure.lamps) if p.id == lamp]
    if not index:
        raise InputError(
            f"no lamp {lamp!r} in enclosure {enclosure.name!r}",
            field="lamp",
            hint="lamps: " + ", ".join(p.id for p in enclosure.lamps),
        )
    s = enclosure.surface(surface)
    if heights_m is None:
        heights_m = np.arange(s.z_m + 0.05, enclosure.height_m + 1e-9, 0.01)
    heights = np.sort(np.asarray(heights_m, float).ravel())
    if heights.size == 0:
        raise InputError("no heights to scan", field="heights_m")
    _, _, pts = surface_grid(s, spacing_m)
    reduce = np.max if statistic == "max" else np.mean
    values = np.empty(heights.size)
    lamps = list(enclosure.lamps)
    for j, h in enumerate(heights):
        lamps[index[0]] = replace(enclosure.lamps[index[0]], z_m=float(h))
        moved = replace(enclosure, lamps=tuple(lamps))
        values[j] = reduce(evaluate_points(moved, pts, ("uvi",)).values["uvi"])
    good = (values >= lo) & (values <= hi)
    bands = _bands(heights, good)
    what = f"{statistic} UVI on {surface!r}"
    if bands:
        low, high = max(bands, key=lambda b: b[1] - b[0])
        best = 0.5 * (low + high)
        message = (
            f"Lamp {lamp!r} at {low:.2f}-{high:.2f} m above the floor gives a {what} within "
            f"{lo:g}-{hi:g}; suggested {best:.2f} m."
        )
    else:
        j = int(np.argmin(np.where(values < lo, lo - values, values - hi)))
        best = float(heights[j])
        side = "above" if values[j] > hi else "below"
        message = (
            f"No height from {heights.min():.2f} to {heights.max():.2f} m brings the {what} "
            f"into {lo:g}-{hi:g}; the closest is {values[j]:.2f} at {best:.2f} m, still {side} "
            f"the range: "
            + (
                "use a weaker lamp, fewer emitters or a screen."
                if side == "above"
                else "use a stronger lamp or more emitters."
            )
        )
    return HeightAnswer(
        lamp,
        surface,
        statistic,
        (lo, hi),
        heights,
        values,
        bool(bands),
        float(best),
        tuple(bands),
        message,
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
    message : str
        One sentence for the report.
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
    message: str


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
    what = f"{statistic} UVI on {surface!r}"
    if good.any():
        best = int(counts[np.argmax(good)])
        message = (
            f"{best} emitter(s) of type {emitter_type!r} in lamp {lamp!r} give a {what} "
            f"within {lo:g}-{hi:g} (now {len(mine)})."
        )
    else:
        j = int(np.argmin(np.where(values < lo, lo - values, values - hi)))
        best = int(counts[j])
        message = (
            f"No count from 1 to {counts[-1]} emitters of type {emitter_type!r} brings the "
            f"{what} into {lo:g}-{hi:g}; closest {values[j]:.2f} with {best}: change the "
            "mounting height or the emitter type."
        )
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
        message,
    )
