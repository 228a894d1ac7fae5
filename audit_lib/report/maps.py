"""Map figures: a surface map with UV Index range contours, lamp outlines and emitters.

Colours follow :mod:`audit_lib.report.style`: the cividis colour map (perceptually
uniform and readable with colour-vision deficiency; Nuñez, Anderton & Renslow 2018,
PLoS ONE 13:e0199239) and Okabe-Ito colours for lines and markers.
"""

from __future__ import annotations

import numpy as np

from audit_lib.report.style import MAP_COLORMAP, PALETTE, new_figure
from audit_lib.scene.maps import placed_groups, rotation_matrix
from audit_lib.sources.lamps import LedArray, TubeLamp

#: Axis labels of the map quantities (units in square brackets).
MAP_LABELS = {
    "uvi": "UV Index [-]",
    "vitamin_d_w_m2": "vitamin-D-weighted irradiance [W m-2]",
    "uvb_w_m2": "UVB irradiance [W m-2]",
    "illuminance_lux": "illuminance [lx]",
    "uva_w_m2": "UVA irradiance [W m-2]",
    "actinic_w_m2": "actinic hazard irradiance E_S [W m-2]",
}

_MARGIN_M = 0.01

#: Largest gap between the vitamin-D maps and the UV Index maps times one factor, as a share
#: of the vitamin-D colour scale, under which the vitamin-D maps are not drawn [-]: 1 % is
#: two or three of the colour map's 256 steps, a difference the eye does not see.
VITAMIN_D_SHAPE_TOLERANCE = 0.01


def vitamin_d_per_uvi(maps) -> tuple[float, float]:
    """Vitamin-D-weighted irradiance per UV Index unit over maps, and how far from one factor.

    Both are weighted integrals of the same spectral irradiance (erythemal weighting, CIE S
    007/ISO 17166, times 40 m2 W-1 for the UV Index, WHO 2002 "Global Solar UV Index"; the
    previtamin D3 action spectrum, CIE 174:2006). Where every UV lamp shares one spectrum
    the spectrum only changes in scale from cell to cell, so the two maps differ by one
    factor, the ratio of the two weighted integrals of that spectrum; lamps with different
    spectra make the ratio vary over the surface.

    Parameters
    ----------
    maps : iterable of audit_lib.scene.maps.SurfaceMap
        Maps with ``uvi`` and ``vitamin_d_w_m2`` values.

    Returns
    -------
    tuple of float
        The least-squares factor k [W m-2 per UV Index unit] (0 without UV), and the largest
        ``|vitamin-D - k x UV Index|`` over all cells as a share of the largest vitamin-D
        value [-] (0 when both maps are zero).
    """
    uvi = np.concatenate([np.ravel(m.values["uvi"]) for m in maps])
    vitamin_d = np.concatenate([np.ravel(m.values["vitamin_d_w_m2"]) for m in maps])
    known = np.isfinite(uvi) & np.isfinite(vitamin_d)
    uvi, vitamin_d = uvi[known], vitamin_d[known]
    if not uvi.size:
        return 0.0, 0.0
    squares = float(np.dot(uvi, uvi))
    factor = float(np.dot(uvi, vitamin_d)) / squares if squares > 0 else 0.0
    scale = float(np.max(np.abs(vitamin_d)))
    gap = float(np.max(np.abs(vitamin_d - factor * uvi))) / scale if scale > 0 else 0.0
    return factor, gap


def lamp_outline(placed) -> np.ndarray:
    """Outline of a placed lamp seen from above, as a closed (n, 2) polygon [m].

    LED arrays: the rectangle around their emitters plus 1 cm; tubes: their length by
    3 cm; other lamps: a 6 cm square. Tilt and azimuth are applied, then projected on
    the floor plane.

    Parameters
    ----------
    placed : audit_lib.scene.maps.PlacedLamp
        The lamp in place.

    Returns
    -------
    numpy.ndarray
        (5, 2) x, y corners [m], first corner repeated.
    """
    lamp = placed.lamp
    if isinstance(lamp, LedArray):
        xy = np.array([[e.x_m, e.y_m] for e in lamp.emitters])
        x0, y0 = xy.min(axis=0) - _MARGIN_M
        x1, y1 = xy.max(axis=0) + _MARGIN_M
    elif isinstance(lamp, TubeLamp):
        x0, x1, y0, y1 = -lamp.length_m / 2, lamp.length_m / 2, -0.015, 0.015
    else:
        x0, x1, y0, y1 = -0.03, 0.03, -0.03, 0.03
    corners = np.array([[x0, y0, 0], [x1, y0, 0], [x1, y1, 0], [x0, y1, 0], [x0, y0, 0]])
    rot = rotation_matrix(placed.azimuth_deg, placed.tilt_deg)
    world = corners @ rot.T + np.array([placed.x_m, placed.y_m, placed.z_m])
    return world[:, :2]


def plot_surface_map(
    surface_map,
    quantity: str = "uvi",
    uvi_range=None,
    enclosure=None,
    ax=None,
    *,
    vmax: float | None = None,
    show_emitters: bool = True,
    title: str | None = None,
    colorbar: bool = True,
    legend: bool = True,
):
    """Draw one surface map with target-range contours and the lamps above it.

    Parameters
    ----------
    surface_map : audit_lib.scene.maps.SurfaceMap
        Map from :func:`audit_lib.scene.maps.compute_maps`.
    quantity : str, optional
        Quantity to show (a key of ``surface_map.values``).
    uvi_range : tuple of float, optional
        (lo, hi) UV Index range drawn as contours (lo dashed, hi solid) [-].
    enclosure : audit_lib.scene.maps.Enclosure, optional
        Draws lamp outlines and emitter positions (failed emitters crossed out).
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new figure otherwise.
    vmax : float, optional
        Top of the colour scale (to share a scale between panels).
    show_emitters : bool, optional
        Mark each LED emitter position.
    title : str, optional
        Panel title; default the surface name and height.
    colorbar : bool, optional
        Draw this panel's colour bar (off when panels share one bar).
    legend : bool, optional
        Explain the contours, failed emitters and hatching in a legend (off where the text
        beside the figure explains them; the contours carry their values).

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.ticker import MaxNLocator

    if ax is None:
        s = surface_map.surface
        aspect = (s.y_max_m - s.y_min_m) / (s.x_max_m - s.x_min_m)
        fig, ax = new_figure(7.0, max(2.6, min(6.0, 5.6 * aspect + 1.0)),
                             right_in=0.3 if not colorbar else 1.3)
    else:
        fig = ax.figure
    m = surface_map
    s = m.surface
    values = m.values[quantity]
    extent = (s.x_min_m, s.x_max_m, s.y_min_m, s.y_max_m)
    top = vmax if vmax is not None else float(np.nanmax(values)) or 1.0
    image = ax.imshow(
        values,
        origin="lower",
        extent=extent,
        cmap=MAP_COLORMAP,
        vmin=0.0,
        vmax=top,
        aspect="equal",
        interpolation="nearest",
    )
    if colorbar:
        bar = fig.colorbar(image, ax=ax, shrink=0.9)
        bar.set_label(MAP_LABELS.get(quantity, quantity))
    if uvi_range is not None and "uvi" in m.values and min(values.shape) > 1:
        _range_contours(ax, m, uvi_range)
    if enclosure is not None:
        _draw_lamps(ax, enclosure, m, show_emitters)
    if np.any(m.extrapolated):
        ax.contourf(
            m.x_m,
            m.y_m,
            m.extrapolated.astype(float),
            levels=[0.5, 1.5],
            hatches=["//"],
            colors="none",
        )
        ax.plot([], [], color="grey", label="measured lamp extrapolated (hatched)")
    ax.set_xlim(extent[0], extent[1])
    ax.set_ylim(extent[2], extent[3])
    # at most five round ticks a side: every tick is a label to lay out and draw
    ax.xaxis.set_major_locator(MaxNLocator(4, steps=[1, 2, 2.5, 5, 10]))
    ax.yaxis.set_major_locator(MaxNLocator(4, steps=[1, 2, 2.5, 5, 10]))
    ax.set_xlabel("x [m]")
    ax.set_ylabel("y [m]")
    ax.set_title(title or f"{s.name} (z = {s.z_m:.2f} m)" + _failed_note(m))
    if legend and ax.get_legend_handles_labels()[0]:
        ax.legend(loc="upper right", fontsize=7, framealpha=0.85)
    return fig


def _failed_note(m) -> str:
    return f", {len(m.failed)} emitter(s) out" if m.failed else ""


def _range_contours(ax, m, uvi_range) -> None:
    lo, hi = uvi_range
    uvi = m.values["uvi"]
    for level, style, colour, label in (
        (lo, "--", PALETTE["sky blue"], f"UVI {lo:g} (low end of range)"),
        (hi, "-", PALETTE["vermillion"], f"UVI {hi:g} (high end of range)"),
    ):
        if level is None or not (np.nanmin(uvi) < level < np.nanmax(uvi)):
            continue
        cs = ax.contour(
            m.x_m, m.y_m, uvi, levels=[level], colors=[colour], linewidths=1.6, linestyles=[style]
        )
        ax.clabel(cs, fmt=f"{level:g}", fontsize=7)
        ax.plot([], [], color=colour, ls=style, label=label)


def _draw_lamps(ax, enclosure, m, show_emitters: bool) -> None:
    s = m.surface
    for placed in enclosure.lamps:
        outline = lamp_outline(placed)
        ax.plot(outline[:, 0], outline[:, 1], color="white", lw=2.4)
        ax.plot(outline[:, 0], outline[:, 1], color=PALETTE["black"], lw=1.0)
        cx, cy = outline[:-1].mean(axis=0)
        # the name above the outline, or below it when the outline reaches the panel's top
        # (the label would be cut off by the panel's edge)
        above = outline[:, 1].max() < s.y_max_m - 0.12 * (s.y_max_m - s.y_min_m)
        ax.annotate(
            placed.id,
            (cx, outline[:, 1].max() if above else outline[:, 1].min()),
            textcoords="offset points",
            xytext=(0, 3 if above else -3),
            ha="center",
            va="bottom" if above else "top",
            fontsize=7,
            color=PALETTE["black"],
            bbox={"boxstyle": "round,pad=0.15", "fc": "white", "ec": "none", "alpha": 0.8},
        )
    if not show_emitters:
        return
    failed = set(m.failed)
    for placed, g in placed_groups(enclosure):
        if not isinstance(placed.lamp, LedArray):
            continue
        out = np.array([lab in failed for lab in g.labels])
        xy = g.positions_m[:, :2]
        ax.plot(
            xy[~out, 0],
            xy[~out, 1],
            ls="none",
            marker="o",
            ms=2.5,
            mfc=PALETTE["yellow"],
            mec=PALETTE["black"],
            mew=0.5,
        )
        if out.any():
            ax.plot(
                xy[out, 0],
                xy[out, 1],
                ls="none",
                marker="x",
                ms=6,
                mew=1.8,
                color=PALETTE["vermillion"],
                label="emitter out",
            )


def plot_coverage_distribution(result, ax=None):
    """Histogram of basking coverage over Monte Carlo failure trials.

    Parameters
    ----------
    result : audit_lib.scene.failures.MonteCarloResult
        Output of :func:`audit_lib.scene.failures.monte_carlo_failures`.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into.

    Returns
    -------
    matplotlib.figure.Figure
    """
    if ax is None:
        fig, ax = new_figure(6.5, 3.2)
    else:
        fig = ax.figure
    share = 100 * result.coverage
    bins = np.linspace(0, 100, 51)
    # one filled outline, not one bar per bin (50 patches to make and draw)
    ax.hist(share, bins=bins, color=PALETTE["blue"], alpha=0.85, histtype="stepfilled")
    ax.axvline(
        100 * result.baseline_coverage,
        color=PALETTE["bluish green"],
        lw=2,
        label=f"all working: {100 * result.baseline_coverage:.0f} %",
    )
    ax.axvline(
        100 * result.coverage_threshold,
        color=PALETTE["vermillion"],
        ls="--",
        lw=2,
        label=f"threshold {100 * result.coverage_threshold:.0f} %: "
        f"P(below) = {result.probability_below:.1%}",
    )
    lo, hi = result.uvi_range
    ax.set_xlabel(f"share of {result.surface!r} with UVI {lo:g}-{hi:g} [%]")
    ax.set_ylabel(f"trials (of {result.coverage.size})")
    ax.legend(fontsize=8)
    return fig
