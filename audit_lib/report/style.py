"""Shared figure style: a colour-blind-safe palette and figure defaults.

Palette: Okabe & Ito (2008), "Color Universal Design", eight colours distinguishable with
the common forms of colour-vision deficiency.
"""

from __future__ import annotations

#: Okabe–Ito colours by name.
PALETTE = {
    "black": "#000000",
    "orange": "#E69F00",
    "sky blue": "#56B4E9",
    "bluish green": "#009E73",
    "yellow": "#F0E442",
    "blue": "#0072B2",
    "vermillion": "#D55E00",
    "reddish purple": "#CC79A7",
}

#: Colour for each wavelength band shaded in spectrum plots.
BAND_COLOURS = {
    "UVC": PALETTE["reddish purple"],
    "UVB": PALETTE["vermillion"],
    "UVA": PALETTE["sky blue"],
    "visible": PALETTE["yellow"],
}

#: Colour for each state of a check (within / below / above / no data).
STATE_COLOURS = {
    "within range": PALETTE["bluish green"],
    "below range": PALETTE["orange"],
    "above range": PALETTE["vermillion"],
    "borderline": PALETTE["reddish purple"],
    "not enough data": "#999999",
}

#: Sequential colormap for maps (perceptually uniform, colour-blind safe).
MAP_COLORMAP = "cividis"


#: Settings under which the report's figures are made: a title sits at a fixed height above
#: its axes instead of being placed by measuring every tick label below it (that measuring
#: cost about a sixth of a figure's drawing; the fixed margins leave room for the title).
FIGURE_RC = {"axes.titley": 1.0}


#: Resolution of the report's figures [dots per inch]: a screen's; at 110 dpi the same figures
#: cost about a twentieth more to draw, for text no sharper on a page.
FIGURE_DPI = 96


#: Default figure margins [in]: left (tick labels and axis label), bottom, right, top (title).
MARGINS_IN = (0.85, 0.6, 0.3, 0.4)


def new_figure(width_in: float = 7.5, height_in: float = 4.0, *, right_in: float | None = None,
               margins_in: tuple[float, float, float, float] = MARGINS_IN):
    """Return ``(fig, ax)`` at :data:`FIGURE_DPI` with fixed margins in inches.

    Fixed margins instead of a layout engine: the report's figures have known furniture
    (one title, one label per axis, at most a twin axis or a legend beside the axes), and
    laying them out by measuring every tick label cost about 40 % of their drawing time.

    Parameters
    ----------
    width_in, height_in : float
        Figure size [in].
    right_in : float, optional
        Right margin [in], for a twin axis or a legend outside the axes.
    margins_in : tuple of float
        ``(left, bottom, right, top)`` [in].
    """
    import matplotlib.pyplot as plt

    with plt.rc_context(FIGURE_RC):
        fig, ax = plt.subplots(figsize=(width_in, height_in), dpi=FIGURE_DPI)
    left, bottom, right, top = margins_in
    if right_in is not None:
        right = right_in
    place_axes(fig, left, bottom, right, top)
    return fig, ax


def place_axes(fig, left_in: float, bottom_in: float, right_in: float, top_in: float,
               **spacing) -> None:
    """Set a figure's subplot margins in inches (``spacing``: ``wspace``, ``hspace`` [-])."""
    width, height = fig.get_size_inches()
    fig.subplots_adjust(left=left_in / width, right=1.0 - right_in / width,
                        bottom=bottom_in / height, top=1.0 - top_in / height, **spacing)
