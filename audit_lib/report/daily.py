"""Figures of the day: UV Index through the day with the zone's target band and the sun.

Colours are the Okabe-Ito palette of :mod:`audit_lib.report.style`; every curve also differs by
line style and the two target bands by hatching, so nothing rests on colour alone.
"""

from __future__ import annotations

import numpy as np

from audit_lib.report.style import PALETTE, new_figure

_LINE_STYLES = ("-", "--", "-.", ":")
_LINE_COLOURS = ("blue", "vermillion", "bluish green", "reddish purple")


def sun_scale_for_zone(sun_uvi, zone) -> float:
    """Factor that puts the clear-sky curve's peak at the middle of the zone's maximum range.

    Parameters
    ----------
    sun_uvi : array_like
        Clear-sky UV Index through the day [-].
    zone : audit_lib.judge.targets.Zone
        Target zone.

    Returns
    -------
    float
        Scale factor [-] (1 when the sun never rises).
    """
    peak = float(np.max(sun_uvi)) if np.size(sun_uvi) else 0.0
    if peak <= 0:
        return 1.0
    return 0.5 * (zone.max_uvi_low + zone.max_uvi_high) / peak


def plot_daily_uvi(curves, *, zone=None, sun=None, sun_label="sun, clear sky", ax=None,
                   title=""):  # fmt: skip
    """UV Index through the day, with the zone's target ranges and the sun's curve.

    Parameters
    ----------
    curves : pandas.Series, dict of str to pandas.Series, or pandas.DataFrame
        UV Index [-] indexed by local clock hours (e.g. :func:`audit_lib.day.dose.uvi_series`);
        several named curves (basking spot, animal, refuge) or columns share the axes.
    zone : audit_lib.judge.targets.Zone, optional
        Shades the mean-exposure range and the maximum range, labelled with their status.
    sun : pandas.DataFrame, optional
        ``time_h`` and ``uvi`` columns (:func:`audit_lib.light.sun.clear_sky_uvi_day`); drawn
        scaled so that its peak sits in the middle of the zone's maximum range (Madronich
        2007 shape), with the scale factor in the legend.
    sun_label : str
        Legend text for the sun's curve (e.g. the latitude and date).
    ax : matplotlib.axes.Axes, optional
        Axes to draw on; a new figure otherwise.
    title : str
        Axes title.

    Returns
    -------
    matplotlib.axes.Axes
    """
    if ax is None:  # the legend beside the axes; room above for a title only with one
        _, ax = new_figure(9.0, 4.0, margins_in=(0.85, 0.6, 3.1, 0.4 if title else 0.2))
    if hasattr(curves, "columns"):  # a DataFrame: one curve per column
        curves = {str(c): curves[c] for c in curves.columns}
    elif not isinstance(curves, dict):
        curves = {getattr(curves, "name", None) or "UV Index": curves}
    top = 0.0
    if zone is not None:
        mark = "" if zone.status == "read" else f" ({zone.status})"
        ax.axhspan(zone.max_uvi_low, zone.max_uvi_high, facecolor=PALETTE["sky blue"],
                   alpha=0.18, hatch="//", edgecolor=PALETTE["sky blue"], linewidth=0,
                   label=f"zone {zone.zone} maximum {zone.max_uvi_low:g}-{zone.max_uvi_high:g}"
                   f"{mark}")  # fmt: skip
        ax.axhspan(zone.mean_uvi_low, zone.mean_uvi_high, facecolor=PALETTE["bluish green"],
                   alpha=0.25, hatch="..", edgecolor=PALETTE["bluish green"], linewidth=0,
                   label=f"zone {zone.zone} mean {zone.mean_uvi_low:g}-{zone.mean_uvi_high:g}"
                   f"{mark}")  # fmt: skip
        top = zone.max_uvi_high
    if sun is not None:
        scale = sun_scale_for_zone(sun["uvi"], zone) if zone is not None else 1.0
        label = f"{sun_label} (scaled x {scale:.2f})" if zone is not None else sun_label
        ax.plot(sun["time_h"], np.asarray(sun["uvi"]) * scale, color=PALETTE["black"],
                linestyle=(0, (5, 3)), linewidth=1.3, label=label)  # fmt: skip
        top = max(top, float(np.max(sun["uvi"])) * scale)
    for i, (name, series) in enumerate(curves.items()):
        colour = PALETTE[_LINE_COLOURS[i % len(_LINE_COLOURS)]]
        style = _LINE_STYLES[i % len(_LINE_STYLES)]
        ax.plot(series.index, series.to_numpy(), color=colour, linestyle=style, linewidth=2.0,
                label=str(name))  # fmt: skip
        top = max(top, float(series.max()))
    ax.set_xlim(0, 24)
    ax.set_xticks(range(0, 25, 6))
    ax.set_ylim(0, max(1.0, top * 1.1))
    ax.set_xlabel("local time [h]")
    ax.set_ylabel("UV Index [-]")
    ax.grid(True, color="#dddddd", linewidth=0.6)
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize="small", frameon=False)
    if title:
        ax.set_title(title)
    return ax


def plot_monthly_doses(table, *, ax=None, title=""):
    """Daily erythemal dose month by month, beside the clear-sky sun's.

    The hours of light are left to the month-by-month table (a second value axis for them
    cost as much to draw as the dose axes).

    Parameters
    ----------
    table : pandas.DataFrame
        :func:`audit_lib.day.dose.monthly_table` output (``sed``, optionally
        ``sun_clear_sky_sed``).
    ax : matplotlib.axes.Axes, optional
        Axes to draw on.
    title : str
        Axes title.

    Returns
    -------
    matplotlib.axes.Axes
        The dose axes.
    """
    from matplotlib.collections import PolyCollection
    from matplotlib.ticker import MaxNLocator

    if ax is None:  # the legend beside the axes; room above for a title only with one
        _, ax = new_figure(9.0, 4.0, margins_in=(0.85, 0.6, 2.1, 0.4 if title else 0.2))
    months = np.asarray(table.index, dtype=int)
    # the bars as one collection: twelve separate patches cost more to make than to draw
    doses = table["sed"].to_numpy(float)
    bars = PolyCollection([[(m - 0.3, 0.0), (m + 0.3, 0.0), (m + 0.3, d), (m - 0.3, d)]
                           for m, d in zip(months, doses, strict=True)],
                          facecolors=PALETTE["blue"], edgecolors="none",
                          label="enclosure [SED/day]")
    ax.add_collection(bars)
    top = float(np.nanmax(doses, initial=0.0))
    if "sun_clear_sky_sed" in table:
        ax.plot(months, table["sun_clear_sky_sed"], color=PALETTE["black"], linestyle="--",
                marker="o", markersize=3, label="sun, clear sky [SED/day]")  # fmt: skip
        top = max(top, float(np.nanmax(table["sun_clear_sky_sed"], initial=0.0)))
    ax.set_xlim(months.min() - 0.6, months.max() + 0.6)
    ax.set_ylim(0, max(1.0, top) * 1.05)
    ax.set_xticks(months)
    ax.set_xticklabels(["J", "F", "M", "A", "M", "J", "J", "A", "S", "O", "N", "D"][: len(months)])
    ax.yaxis.set_major_locator(MaxNLocator(5))
    ax.set_xlabel("month")
    ax.set_ylabel("erythemal dose [SED per day]")
    ax.legend(loc="upper left", bbox_to_anchor=(1.01, 1.0), fontsize="small", frameon=False)
    if title:
        ax.set_title(title)
    return ax
