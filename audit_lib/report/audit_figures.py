"""Figures of one enclosure's audit: surface maps, the day's UV Index beside the sun's, spectra.

Each function takes an :class:`audit_lib.pipeline.audit.EnclosureAudit` and returns a matplotlib
figure drawn from the record's numbers, in the project's style (:mod:`audit_lib.report.style`:
Okabe-Ito colours, the cividis colour map, fixed margins).
"""

from __future__ import annotations

import math

import numpy as np

from audit_lib.report.daily import plot_daily_uvi, plot_monthly_doses
from audit_lib.report.decay import plot_lamp_decay
from audit_lib.report.maps import MAP_LABELS, plot_coverage_distribution, plot_surface_map
from audit_lib.report.spectrum import plot_spectrum
from audit_lib.report.style import place_axes


def plot_maps(audit, quantity: str = "uvi"):
    """One panel per surface (:func:`audit_lib.report.maps.plot_surface_map`), one colour bar.

    Lamps are outlined, failed emitters crossed out and, for the UV Index, the ends of the
    zone's basking maximum range drawn as contours.

    Parameters
    ----------
    audit : EnclosureAudit
        The audit.
    quantity : str
        A map quantity (``uvi``, ``vitamin_d_w_m2``, ``uvb_w_m2``, ``illuminance_lux``).
    """
    import matplotlib.pyplot as plt


    maps = list(audit.maps.values())
    cols = min(2, len(maps))
    rows = math.ceil(len(maps) / cols)
    fig, axes = plt.subplots(rows, cols, figsize=(4.4 * cols, 3.2 * rows), dpi=96,
                             squeeze=False)
    # fixed margins [in]: tick and axis labels left and below, titles above, the bar right
    place_axes(fig, 0.6, 0.5, 1.05, 0.35, wspace=0.3, hspace=0.35)
    vmax = max(float(np.nanmax(m.values[quantity])) for m in maps) or 1.0
    uvi_range = (audit.zone.max_uvi_low, audit.zone.max_uvi_high) \
        if quantity == "uvi" and audit.zone is not None else None
    for ax, m in zip(axes.flat, maps, strict=False):
        plot_surface_map(m, quantity, uvi_range, audit.scene, ax, vmax=vmax, colorbar=False)
    for ax in list(axes.flat)[len(maps):]:
        ax.set_visible(False)
    # one bar for the shared scale (one per panel repeated it and cost a third of the drawing)
    used = list(axes.flat)[:len(maps)]
    width, height = fig.get_size_inches()
    cax = fig.add_axes([1.0 - 0.85 / width, 0.5 / height, 0.12 / width,
                        1.0 - 0.85 / height])
    bar = fig.colorbar(used[0].images[0], cax=cax)
    bar.set_label(MAP_LABELS.get(quantity, quantity))
    return fig


def plot_daily(audit):
    """UV Index through the audit day at the basking maximum, the zone's ranges and the sun.

    The clear-sky sun at the site is scaled so its peak sits in the zone's maximum range
    (:func:`audit_lib.report.daily.plot_daily_uvi`), to compare shapes, not levels.
    """
    daily = audit.daily
    curves = {"enclosure, basking maximum": daily["enclosure_uvi"]} \
        if "enclosure_uvi" in daily else {}
    sun = daily.reset_index()[["time_h", "sun_uvi"]].rename(columns={"sun_uvi": "uvi"})
    ax = plot_daily_uvi(curves, zone=audit.zone, sun=sun,
                        sun_label=f"sun at {audit.natural['latitude_deg']:.1f}°, clear sky",
                        title=f"UV Index through {audit.audit_date.isoformat()}")
    return ax.figure


def plot_monthly(audit):
    """Daily erythemal dose and hours of light by month (:mod:`audit_lib.report.daily`)."""
    if audit.monthly is None:
        return None
    result = plot_monthly_doses(audit.monthly, title="At the basking maximum")
    return getattr(result, "figure", result)


def plot_lamp_decays(audit):
    """Each lamp's readings over time with both decay fits and the forecast."""
    return [plot_lamp_decay(d, today=audit.audit_date) for d in audit.decays]


def plot_failure_study(audit):
    """Basking coverage over the Monte Carlo failure trials (None without LED arrays)."""
    if audit.failure_study is None:
        return None
    return plot_coverage_distribution(audit.failure_study)


def plot_lamp_spectra(audit):
    """Each lamp model's spectrum with bands and action spectra (one figure per model)."""
    return [plot_spectrum(spectrum) for spectrum in audit.lamp_spectra.values()]


#: PNG of each lamp spectrum figure drawn in this process, by the spectrum's content.
_SPECTRUM_PNGS: dict[str, bytes] = {}


def lamp_spectrum_images(audit) -> list:
    """:func:`plot_lamp_spectra` as PNG images, each drawn once per process.

    A lamp model's spectrum is the same in every enclosure that uses it, so a batch worker
    draws each model's figure once and reuses the PNG (keyed by a hash of the spectrum's
    name and values, so a changed spectrum is drawn again).

    Returns
    -------
    list of IPython.display.Image
    """
    import hashlib

    import matplotlib.pyplot as plt
    from IPython.display import Image

    images = []
    for spectrum in audit.lamp_spectra.values():
        digest = hashlib.sha256(repr(spectrum.name).encode())
        digest.update(np.ascontiguousarray(spectrum.wavelength_nm).tobytes())
        digest.update(np.ascontiguousarray(spectrum.irradiance_w_m2_nm).tobytes())
        key = digest.hexdigest()
        if key not in _SPECTRUM_PNGS:
            fig = plot_spectrum(spectrum)
            _SPECTRUM_PNGS[key] = png_bytes(fig)
            plt.close(fig)
        images.append(Image(data=_SPECTRUM_PNGS[key], format="png"))
    return images


def png_bytes(fig) -> bytes | None:
    """Render a figure to PNG with a single draw (None for a figure without axes).

    ``savefig`` on a figure with a layout engine draws twice (once to lay it out, once to
    paint); drawing once into the Agg canvas and encoding its pixel buffer gives the same
    pixels in about a quarter less time. zlib level 1: files about 10 % larger than
    level 6, encoded about three times faster.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure, drawn at its own dpi with its own face colour.
    """
    import io

    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from PIL import Image

    if not fig.axes:
        return None
    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    canvas.draw()
    pixels = canvas.buffer_rgba()
    image = Image.frombuffer("RGBA", (pixels.shape[1], pixels.shape[0]), pixels, "raw",
                             "RGBA", 0, 1)
    out = io.BytesIO()
    image.save(out, format="png", compress_level=1, dpi=(fig.dpi, fig.dpi))
    return out.getvalue()


def prepare_figures() -> None:
    """Make inline figures cheaper to produce (in a Jupyter kernel; else nothing).

    Figures are shown as PNG made by :func:`png_bytes` (one draw instead of two, fast
    zlib level): about a third less time per figure than the inline backend's default
    ("tight" bounding box, which costs one more full draw), measured on the report's figures.
    """
    try:
        from IPython import get_ipython
        from matplotlib.figure import Figure
        from matplotlib_inline.config import InlineBackend
    except ImportError:
        return
    shell = get_ipython()
    if shell is None:
        return
    InlineBackend.instance().print_figure_kwargs = {"bbox_inches": None,
                                                    "pil_kwargs": {"compress_level": 1}}
    # registered after the inline backend's own formatter (set up when pyplot is imported)
    shell.display_formatter.formatters["image/png"].for_type(Figure, png_bytes)
