"""Figures of one enclosure's audit: surface maps, the day's UV Index beside the sun's, spectra.

Each function takes an :class:`audit_lib.pipeline.audit.EnclosureAudit` and returns a matplotlib
figure drawn from the record's numbers, in the project's style (:mod:`audit_lib.report.style`:
Okabe-Ito colours, the cividis colour map, fixed margins).
"""

from __future__ import annotations

import math

import numpy as np

from audit_lib.report import formats as fmt
from audit_lib.report.daily import plot_daily_uvi, plot_monthly_doses
from audit_lib.report.decay import plot_lamp_decays as plot_decay_panels
from audit_lib.report.maps import (
    MAP_LABELS,
    VITAMIN_D_SHAPE_TOLERANCE,
    plot_coverage_distribution,
    plot_surface_map,
    vitamin_d_per_uvi,
)
from audit_lib.report.spectrum import plot_spectrum
from audit_lib.report.style import FIGURE_DPI, FIGURE_RC, place_axes


def plot_maps(audit, quantity: str = "uvi"):
    """One panel per surface (:func:`audit_lib.report.maps.plot_surface_map`), one colour bar.

    Lamps are outlined, failed emitters crossed out and, for the UV Index, the ends of the
    zone's basking maximum range drawn as contours labelled with their values (dashed: low
    end, solid: high end). No legends: the workbook's text above the maps explains the marks.

    Parameters
    ----------
    audit : EnclosureAudit
        The audit.
    quantity : str
        A map quantity (``uvi``, ``vitamin_d_w_m2``, ``uvb_w_m2``, ``illuminance_lux``).
    """
    import matplotlib.pyplot as plt
    from matplotlib.ticker import MaxNLocator

    maps = list(audit.maps.values())
    cols = min(2, len(maps))
    rows = math.ceil(len(maps) / cols)
    vmax = max(float(np.nanmax(m.values[quantity])) for m in maps) or 1.0
    uvi_range = (audit.zone.max_uvi_low, audit.zone.max_uvi_high) \
        if quantity == "uvi" and audit.zone is not None else None
    width, height = 4.4 * cols, 3.2 * rows
    with plt.rc_context(FIGURE_RC):
        fig = plt.figure(figsize=(width, height), dpi=FIGURE_DPI)
        # fixed margins [in]: tick and axis labels left and below, titles above, the bar right
        place_axes(fig, 0.6, 0.5, 1.05, 0.35, wspace=0.3, hspace=0.35)
        grid = fig.add_gridspec(rows, cols)
        # only as many panels as surfaces: an unused, hidden panel still costs its making
        axes = [fig.add_subplot(grid[i // cols, i % cols]) for i in range(len(maps))]
        # one bar for the shared scale (one per panel repeated it, a third of the drawing)
        cax = fig.add_axes([1.0 - 0.85 / width, 0.5 / height, 0.12 / width,
                            1.0 - 0.85 / height])
    for i, (ax, m) in enumerate(zip(axes, maps, strict=True)):
        plot_surface_map(m, quantity, uvi_range, audit.scene, ax, vmax=vmax, colorbar=False,
                         legend=False)
        # axis labels on the outer panels only (all panels are in metres)
        if i % cols:
            ax.set_ylabel("")
        if i + cols < len(maps):
            ax.set_xlabel("")
    bar = fig.colorbar(axes[0].images[0], cax=cax)
    bar.locator = MaxNLocator(5, steps=[1, 2, 2.5, 5, 10])
    bar.update_ticks()
    bar.set_label(MAP_LABELS.get(quantity, quantity))
    return fig


def vitamin_d_maps(audit):
    """The vitamin-D-weighted irradiance maps where their pattern differs from the UV Index's.

    Where the vitamin-D maps are the UV Index maps times one factor to within
    :data:`audit_lib.report.maps.VITAMIN_D_SHAPE_TOLERANCE` of their colour scale
    (:func:`audit_lib.report.maps.vitamin_d_per_uvi`: every UV lamp has one spectrum), they
    would repeat the UV Index maps, so one sentence gives the factor instead.

    Returns
    -------
    matplotlib.figure.Figure or audit_lib.report.formats.HTMLBlock
        The maps (:func:`plot_maps`; closed to pyplot, so a notebook shows it once, as the
        cell's value), or the sentence.
    """
    import matplotlib.pyplot as plt

    factor, gap = vitamin_d_per_uvi(audit.maps.values())
    if gap > VITAMIN_D_SHAPE_TOLERANCE:
        fig = plot_maps(audit, "vitamin_d_w_m2")
        plt.close(fig)
        return fig
    if factor <= 0:
        return fmt.note("No vitamin-D-weighted irradiance on these surfaces.")
    return fmt.note(f"Vitamin-D-weighted irradiance is {fmt.text(factor, 'w_m2', unit=True)} "
                    "per UV Index unit all over these surfaces, so its maps would be the UV "
                    "Index maps above with that factor; the surface table gives each "
                    "surface's mean.")


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
                        sun_label=f"sun at {audit.natural['latitude_deg']:.1f}°, clear sky")
    return ax.figure


def plot_monthly(audit):
    """Daily erythemal dose at the basking maximum by month (:mod:`audit_lib.report.daily`)."""
    if audit.monthly is None:
        return None
    result = plot_monthly_doses(audit.monthly)
    return getattr(result, "figure", result)


def plot_lamp_decays(audit):
    """Readings over time with both decay fits and the forecast, one panel per lamp.

    Only lamps read on at least two days are drawn: a single reading and its target are
    the lamps table's "latest reading" and "lowest acceptable" already.

    Returns
    -------
    matplotlib.figure.Figure or None
        None when no lamp has two readings.
    """
    drawn = [d for d in audit.decays if len(d.points) >= 2]
    return plot_decay_panels(drawn, today=audit.audit_date)


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


#: Agg renderers by (width [px], height [px], dpi), shared by the figures drawn here.
_RENDERERS: dict = {}


def png_bytes(fig) -> bytes | None:
    """Render a figure to PNG with a single draw (None for a figure without axes).

    ``savefig`` on a figure with a layout engine draws twice (once to lay it out, once to
    paint); drawing once into an Agg renderer and encoding its pixel buffer gives the same
    pixels in about a quarter less time. The renderer is shared by figures of one size
    (matplotlib caches the measured size of each text per renderer, so tick labels and axis
    labels met before are not measured again: about a tenth less drawing). Encoded by
    :func:`encode_png`.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
        The figure, drawn at its own dpi with its own face colour.
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg, RendererAgg

    if not fig.axes:
        return None
    canvas = fig.canvas if isinstance(fig.canvas, FigureCanvasAgg) else FigureCanvasAgg(fig)
    key = (*canvas.get_width_height(physical=True), fig.dpi)
    renderer = _RENDERERS.get(key)
    if renderer is None:
        if len(_RENDERERS) >= 16:  # a few MB each: keep the sizes met lately
            del _RENDERERS[next(iter(_RENDERERS))]
        renderer = _RENDERERS[key] = RendererAgg(*key)
    renderer.clear()
    fig.draw(renderer)
    pixels = np.asarray(renderer.buffer_rgba())
    if fig.get_facecolor()[3] == 1.0:  # an opaque page: RGB, a quarter less to compress
        pixels = pixels[..., :3]
    return encode_png(pixels, fig.dpi)


def encode_png(pixels: np.ndarray, dpi: float) -> bytes:
    """PNG file of an 8-bit RGB or RGBA image, rows unfiltered, zlib level 1.

    Written after the PNG specification (W3C PNG, 2nd edition / ISO/IEC 15948:2004): the
    signature, an IHDR chunk (8 bits, colour type 2 or 6), a pHYs chunk (the dpi as pixels
    per metre), one IDAT chunk and IEND. Filter type 0 ("none") on every row and zlib level 1
    encode a report figure (large flat areas) about 2.5 times faster than Pillow's level 1
    with adaptive filters, for files about a tenth larger.

    Parameters
    ----------
    pixels : numpy.ndarray
        (height, width, 3 or 4) uint8 [-].
    dpi : float
        Resolution stored in the file [dots per inch].
    """
    import struct
    import zlib

    height, width, channels = pixels.shape
    rows = np.zeros((height, 1 + width * channels), dtype=np.uint8)  # first byte: filter 0
    rows[:, 1:].reshape(height, width, channels)[...] = pixels

    def chunk(kind: bytes, data: bytes) -> bytes:
        return (struct.pack(">I", len(data)) + kind + data
                + struct.pack(">I", zlib.crc32(kind + data)))

    per_metre = round(dpi / 0.0254)
    colour_type = {3: 2, 4: 6}[channels]
    return b"".join([
        b"\x89PNG\r\n\x1a\n",
        chunk(b"IHDR", struct.pack(">IIBBBBB", width, height, 8, colour_type, 0, 0, 0)),
        chunk(b"pHYs", struct.pack(">IIB", per_metre, per_metre, 1)),
        chunk(b"IDAT", zlib.compress(rows.tobytes(), 1)),
        chunk(b"IEND", b""),
    ])


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
