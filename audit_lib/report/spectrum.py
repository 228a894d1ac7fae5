"""Spectrum figure: the lamp's spectral irradiance with UV bands and action spectra."""

from __future__ import annotations

import numpy as np

from audit_lib.light.action_spectra import ACTION_SPECTRA, ACTION_SPECTRUM_RANGES_NM
from audit_lib.light.metrics import METRIC_LABELS, format_metric
from audit_lib.report.style import BAND_COLOURS, PALETTE, new_figure

#: Bands shaded behind the spectrum [nm] (CIE; ISO 21348).
BANDS_NM = {"UVC": (250.0, 280.0), "UVB": (280.0, 315.0), "UVA": (315.0, 400.0),
            "visible": (400.0, 780.0)}
_ACTION_STYLES = {
    "erythema (CIE S 007)": (PALETTE["vermillion"], "--"),
    "previtamin D3 (CIE 174)": (PALETTE["bluish green"], "-."),
    "actinic hazard (ICNIRP)": (PALETTE["reddish purple"], ":"),
    "photopic V(λ) (CIE 1924)": (PALETTE["orange"], (0, (5, 1, 1, 1))),
}


def plot_spectrum(spectrum, ax=None, *, log_scale: bool = False, sun=None,
                  xlim_nm: tuple[float, float] | None = None):
    """Plot a spectrum with shaded UV bands and the action spectra on a second axis.

    Parameters
    ----------
    spectrum : audit_lib.light.spectra.Spectrum
        Spectral irradiance [W m-2 nm-1], shown in mW m-2 nm-1.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new figure is made if None.
    log_scale : bool
        Logarithmic irradiance axis (shows short-wave leakage).
    sun : audit_lib.light.spectra.Spectrum, optional
        A sunlight reference to draw scaled to the same UVB irradiance, for comparison.
    xlim_nm : (float, float), optional
        Wavelength range shown [nm]; defaults to the spectrum's range within 250–800 nm.

    Returns
    -------
    matplotlib.figure.Figure
    """
    from matplotlib.ticker import FixedLocator, MaxNLocator, NullLocator

    if ax is None:  # twin axis of the weights on the right, the legend below the axes
        fig, ax = new_figure(7.5, 4.6, margins_in=(0.85, 1.15, 0.95, 0.4))
    else:
        fig = ax.figure
    wl = spectrum.wavelength_nm
    lo, hi = xlim_nm or (max(250.0, wl[0]), min(800.0, wl[-1]))
    for band, (a, b) in BANDS_NM.items():
        if b > lo and a < hi:
            ax.axvspan(max(a, lo), min(b, hi), color=BAND_COLOURS[band], alpha=0.15, lw=0)
            ax.text((max(a, lo) + min(b, hi)) / 2, 1.0, band, transform=ax.get_xaxis_transform(),
                    ha="center", va="bottom", fontsize=8)
    ax.plot(wl, spectrum.irradiance_w_m2_nm * 1e3, color=PALETTE["black"], lw=1.6,
            label=spectrum.name or "spectrum")
    if sun is not None:
        ax.plot(sun.wavelength_nm, sun.irradiance_w_m2_nm * 1e3, color=PALETTE["blue"], lw=1.0,
                alpha=0.8, label=sun.name or "sunlight")
    ax.set_xlim(lo, hi)
    ax.set_xlabel("wavelength [nm]")
    ax.set_ylabel("spectral irradiance [mW m⁻² nm⁻¹]")
    if log_scale:
        positive = spectrum.irradiance_w_m2_nm[spectrum.irradiance_w_m2_nm > 0] * 1e3
        if positive.size:
            ax.set_yscale("log")
            ax.set_ylim(max(positive.max() * 1e-6, positive.min()), positive.max() * 2)
    else:
        ax.set_ylim(bottom=0)
        ax.yaxis.set_major_locator(MaxNLocator(4))
    weights = ax.twinx()
    grid = np.linspace(lo, hi, 800)
    for name, function in ACTION_SPECTRA.items():
        a, b = ACTION_SPECTRUM_RANGES_NM[function]
        if b <= lo or a >= hi:
            continue
        colour, style = _ACTION_STYLES[name]
        weights.plot(grid, function(grid), color=colour, ls=style, lw=1.1, label=name)
    weights.set_yscale("log")
    weights.set_ylim(1e-5, 2)
    # decades 1e-4, 1e-2, 1 and no minor ticks: each tick is text and lines to draw
    weights.yaxis.set_major_locator(FixedLocator([1e-4, 1e-2, 1.0]))
    weights.yaxis.set_minor_locator(NullLocator())
    weights.set_ylabel("relative weight (action spectra) [-]")
    handles = ax.get_legend_handles_labels()
    extra = weights.get_legend_handles_labels()
    # below the axes, where it hides no curve and no band name
    ax.legend(handles[0] + extra[0], handles[1] + extra[1], fontsize=7, loc="upper center",
              bbox_to_anchor=(0.5, -0.16), ncols=3, frameon=False)
    return fig


def metrics_table(metrics: dict):
    """Return :func:`audit_lib.light.metrics.spectrum_metrics` as a display table.

    Parameters
    ----------
    metrics : dict
        Output of ``spectrum_metrics``.

    Returns
    -------
    pandas.io.formats.style.Styler
        Columns ``quantity``, ``value``, ``unit``; values formatted to 4 significant digits;
        the frame itself is ``.data``.
    """
    import pandas as pd


    rows = []
    for key, (label, unit) in METRIC_LABELS.items():
        text = format_metric(key, metrics.get(key))
        rows.append({"quantity": label, "value": text,
                     "unit": "" if text in ("n/a", "unlimited") else unit})
    table = pd.DataFrame(rows)
    return table.style.hide(axis="index").set_properties(
        subset=["quantity"], **{"text-align": "left"}
    )
