"""Lamp decay figures: readings, fitted models, target and forecast replacement date."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from audit_lib.report.style import FIGURE_DPI, FIGURE_RC, PALETTE, new_figure, place_axes

#: Longest stretch drawn past the last reading when a forecast lies far ahead [days].
MAX_FUTURE_DAYS = 6 * 365


def _dates(installed_on, daily_hours: float, hours) -> pd.DatetimeIndex:
    days = np.asarray(hours, dtype=float) / float(daily_hours)
    return pd.Timestamp(installed_on) + pd.to_timedelta(days, unit="D")


def plot_decay(points: pd.DataFrame, fit, *, installed_on, daily_hours: float,
               threshold: float | None = None, forecast=None, today=None, ax=None,
               title: str = "", unit_label: str = "UV Index [-]"):
    """Plot one lamp's readings against date with both fitted decay models.

    Parameters
    ----------
    points : pandas.DataFrame
        Columns ``hours`` [h] and ``value`` (e.g. from
        :func:`audit_lib.history.decay.select_decay_points`).
    fit : audit_lib.history.decay.DecayFit
        The fit of those points; the better model is drawn solid, the other dashed.
    installed_on : date-like
        Install day of the lamp (lamp hours 0).
    daily_hours : float
        Hours on per day, to turn lamp hours into dates [h].
    threshold : float, optional
        Lowest acceptable value (lower end of the zone's range), drawn as a line [unit].
    forecast : audit_lib.history.decay.Forecast, optional
        Forecast date and 68 % band, drawn as a line and a shaded span.
    today : date-like, optional
        Marks the day of the audit.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new figure is made if None.
    title : str
        Figure title (enclosure and lamp).
    unit_label : str
        Label of the value axis.

    Returns
    -------
    matplotlib.figure.Figure
    """
    import matplotlib.dates as mdates
    from matplotlib.ticker import MaxNLocator

    if ax is None:
        fig, ax = new_figure(7.5, 3.8)
    else:
        fig = ax.figure
    hours = points["hours"].to_numpy(float)
    values = points["value"].to_numpy(float)
    ax.plot(_dates(installed_on, daily_hours, hours), values, "o", color=PALETTE["black"],
            label="readings", zorder=3)
    last_h = hours.max() if hours.size else 0.0
    end_h = last_h
    if forecast is not None and math.isfinite(forecast.hours):
        end_h = max(end_h, forecast.hours)
    end_h = min(end_h * 1.05 + daily_hours * 60, last_h + MAX_FUTURE_DAYS * daily_hours)
    grid = np.linspace(0.0, end_h, 300)
    styles = {"exponential": PALETTE["blue"], "linear": PALETTE["bluish green"]}
    for name, model in fit.fits.items():
        best = name == fit.best
        label = f"{name} fit"
        if best:  # AIC differences under about 2: no real preference (Burnham & Anderson)
            label += (f" (better, ΔAIC {fit.delta_aic:.1f})" if fit.delta_aic >= 2
                      else f" (used; ΔAIC {fit.delta_aic:.1f}: no clear preference)")
        ax.plot(_dates(installed_on, daily_hours, grid), model.predict(grid),
                color=styles[name], ls="-" if best else "--", lw=1.8 if best else 1.0,
                label=label)
    if threshold is not None:
        ax.axhline(threshold, color=PALETTE["vermillion"], lw=1.2, ls=":",
                   label=f"target minimum {threshold:.3g}")
    if forecast is not None and pd.notna(forecast.date):
        ax.axvline(forecast.date, color=PALETTE["vermillion"], lw=1.2,
                   label=f"below target {forecast.date.date().isoformat()}")
        if pd.notna(forecast.date_early) and pd.notna(forecast.date_late):
            ax.axvspan(forecast.date_early, forecast.date_late, color=PALETTE["vermillion"],
                       alpha=0.12, lw=0, label="68 % band")
    if today is not None:
        ax.axvline(pd.Timestamp(today), color="#777777", lw=1.0, ls="-.", label="audit day")
    ax.set_ylim(bottom=0)
    # a handful of year-month ticks, level: every tick label is text to lay out and draw
    locator = mdates.AutoDateLocator(minticks=3, maxticks=6)
    ax.xaxis.set_major_locator(locator)
    ax.xaxis.set_major_formatter(mdates.DateFormatter("%Y-%m"))
    ax.yaxis.set_major_locator(MaxNLocator(5))
    ax.set_xlabel("date")
    ax.set_ylabel(unit_label)
    title = title or "lamp output over time"
    note = {"not enough data": "not enough data to fit", "no decay": "no decay seen"}
    if fit.state in note and note[fit.state] not in title and fit.state not in title:
        title += f" ({note[fit.state]})"
    ax.set_title(title, fontsize=10)
    ax.legend(fontsize=7, loc="lower left", framealpha=0.9)
    return fig


def plot_lamp_decay(result, *, today=None, ax=None, unit_label: str = "UV Index [-]"):
    """Plot a :class:`audit_lib.history.decay.LampDecay` (see :func:`plot_decay`).

    Parameters
    ----------
    result : audit_lib.history.decay.LampDecay
        From :func:`audit_lib.history.decay.analyse_lamp_decay`.
    today : date-like, optional
        Marks the day of the audit.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into.
    unit_label : str
        Label of the value axis.

    Returns
    -------
    matplotlib.figure.Figure
    """
    target = result.target if math.isfinite(result.target) else None
    return plot_decay(result.points, result.fit, installed_on=result.installed_on,
                      daily_hours=result.daily_hours, threshold=target,
                      forecast=result.forecast, today=today, ax=ax,
                      title=f"{result.lamp}: {result.state}", unit_label=unit_label)


def plot_lamp_decays(results, *, today=None, unit_label: str = "UV Index [-]"):
    """Several lamps' decays in one figure, one panel per lamp (:func:`plot_lamp_decay`).

    Parameters
    ----------
    results : sequence of audit_lib.history.decay.LampDecay
        The lamps, top to bottom.
    today : date-like, optional
        Marks the day of the audit.
    unit_label : str
        Label of the value axes.

    Returns
    -------
    matplotlib.figure.Figure or None
        None without lamps.
    """
    import matplotlib.pyplot as plt

    if not results:
        return None
    panel_in, top_in, bottom_in, gap_in = 3.0, 0.4, 0.6, 0.75
    height = top_in + bottom_in + len(results) * panel_in + (len(results) - 1) * gap_in
    with plt.rc_context(FIGURE_RC):
        fig, axes = plt.subplots(len(results), 1, figsize=(7.5, height), dpi=FIGURE_DPI,
                                 squeeze=False)
    place_axes(fig, 0.85, bottom_in, 0.3, top_in, hspace=gap_in / panel_in)
    for ax, result in zip(axes[:, 0], results, strict=True):
        plot_lamp_decay(result, today=today, ax=ax, unit_label=unit_label)
    return fig
