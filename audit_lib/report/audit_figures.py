"""Figures of one enclosure's audit: surface maps, the day's UV Index beside the sun's, spectra.

Each function takes an :class:`audit_lib.audit.EnclosureAudit` and returns a matplotlib
figure drawn from the record's numbers, in the project's style (:mod:`audit_lib.report.style`:
Okabe-Ito colours, the cividis colour map, constrained layout).
"""

from __future__ import annotations

import math

import numpy as np

from audit_lib.report.style import MAP_COLORMAP, PALETTE, new_figure

QUANTITY_LABELS = {
    "uvi": "UV Index [-]",
    "vitamin_d_w_m2": "vitamin-D-weighted irradiance [W m-2]",
    "uvb_w_m2": "UVB irradiance [W m-2]",
    "illuminance_lux": "illuminance [lx]",
}


def plot_maps(audit, quantity: str = "uvi"):
    """One panel per surface: the map of ``quantity`` with UV Index range contours.

    Parameters
    ----------
    audit : EnclosureAudit
        The audit.
    quantity : str
        A map quantity (``uvi``, ``vitamin_d_w_m2``, ``uvb_w_m2``, ``illuminance_lux``).
    """
    import matplotlib.pyplot as plt

    maps = list(audit.maps.values())
    n = len(maps)
    cols = min(3, n)
    rows = math.ceil(n / cols)
    fig, axes = plt.subplots(rows, cols, figsize=(3.0 * cols + 0.8, 2.8 * rows), dpi=96,
                             layout="constrained", squeeze=False)
    vmax = max(float(np.nanmax(m.values[quantity])) for m in maps) or 1.0
    image = None
    for ax, m in zip(axes.flat, maps, strict=False):
        extent = (m.surface.x_min_m, m.surface.x_max_m, m.surface.y_min_m, m.surface.y_max_m)
        image = ax.imshow(m.values[quantity], origin="lower", extent=extent, cmap=MAP_COLORMAP,
                          vmin=0.0, vmax=vmax, aspect="equal", interpolation="nearest")
        if quantity == "uvi" and audit.zone is not None and m.values["uvi"].size > 3:
            levels = sorted({audit.zone.max_uvi_low, audit.zone.max_uvi_high})
            if min(m.values["uvi"].shape) > 1:
                cs = ax.contour(m.x_m, m.y_m, m.values["uvi"], levels=levels,
                                colors=[PALETTE["orange"], PALETTE["vermillion"]][:len(levels)],
                                linewidths=1.2)
                ax.clabel(cs, fmt="%.1f", fontsize=7)
        for lamp in audit.scene.lamps:
            if extent[0] <= lamp.x_m <= extent[1] and extent[2] <= lamp.y_m <= extent[3]:
                ax.plot(lamp.x_m, lamp.y_m, marker="x", color="white", markersize=7, mew=2)
        ax.set_title(f"{m.surface.name} (z = {m.surface.z_m:.2f} m)", fontsize=9)
        ax.set_xlabel("x [m]", fontsize=8)
        ax.set_ylabel("y [m]", fontsize=8)
        ax.tick_params(labelsize=7)
    for ax in list(axes.flat)[n:]:
        ax.set_visible(False)
    if image is not None:
        fig.colorbar(image, ax=axes, shrink=0.85, label=QUANTITY_LABELS.get(quantity, quantity))
    return fig


def plot_daily(audit):
    """UV Index through the audit day at the basking maximum, the target band, the sun's curve."""
    fig, ax = new_figure(7.5, 3.4)
    daily = audit.daily
    if audit.zone is not None:
        ax.axhspan(audit.zone.max_uvi_low, audit.zone.max_uvi_high, color=PALETTE["bluish green"],
                   alpha=0.15, label=f"zone {audit.zone.zone} basking maximum range")
        ax.axhspan(audit.zone.mean_uvi_low, audit.zone.mean_uvi_high, color=PALETTE["sky blue"],
                   alpha=0.15, label=f"zone {audit.zone.zone} mean exposure range")
    if "enclosure_uvi" in daily:
        ax.plot(daily.index, daily["enclosure_uvi"], color=PALETTE["blue"], lw=2,
                label="enclosure, basking maximum")
    ax.plot(daily.index, daily["sun_uvi"], color=PALETTE["orange"], lw=1.5, ls="--",
            label=f"clear-sky sun at {audit.natural['latitude_deg']:.1f}° latitude")
    ax.set_xlim(0, 24)
    ax.set_xticks(range(0, 25, 3))
    ax.set_xlabel("local time [h]")
    ax.set_ylabel("UV Index [-]")
    ax.set_ylim(bottom=0)
    ax.grid(alpha=0.3)
    ax.legend(fontsize=8, loc="upper left")
    ax.set_title(f"UV Index through {audit.audit_date.isoformat()}", fontsize=10)
    return fig


def plot_monthly(audit):
    """Daily erythemal dose at the basking maximum by month, beside the clear-sky sun's."""
    fig, ax = new_figure(7.5, 3.0)
    table = audit.monthly
    months = np.arange(1, 13)
    if table is not None:
        ax.bar(months - 0.2, table["sed"], width=0.4, color=PALETTE["blue"],
               label="enclosure, basking maximum")
        if "sun_clear_sky_sed" in table:
            ax.bar(months + 0.2, table["sun_clear_sky_sed"], width=0.4,
                   color=PALETTE["orange"], label="clear-sky sun at the site")
    ax.set_xticks(months)
    ax.set_xlabel("month")
    ax.set_ylabel("daily dose [SED]")
    ax.grid(axis="y", alpha=0.3)
    ax.legend(fontsize=8)
    return fig


def plot_lamp_spectra(audit):
    """Each lamp model's spectrum with bands and action spectra (one figure per model)."""
    from audit_lib.report.spectrum import plot_spectrum

    return [plot_spectrum(spectrum) for spectrum in audit.lamp_spectra.values()]
