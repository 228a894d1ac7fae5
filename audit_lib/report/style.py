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


def new_figure(width_in: float = 7.5, height_in: float = 4.0):
    """Return ``(fig, ax)`` with the project's defaults (constrained layout, 110 dpi)."""
    import matplotlib.pyplot as plt

    return plt.subplots(figsize=(width_in, height_in), dpi=110, layout="constrained")
