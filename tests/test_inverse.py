"""Mount height for a target basking UVI."""

from __future__ import annotations

import math

import numpy as np
import pytest

from audit_lib.emitters import line_shape
from audit_lib.errors import InputError
from audit_lib.inverse import height_for_target
from audit_lib.lamps import PointLamp, lamp_sources
from audit_lib.scene import Enclosure, PlacedLamp, Surface
from audit_lib.spectra import Spectrum


def _scene():
    wl = np.arange(250.0, 420.0, 0.5)
    spectrum = Spectrum(wl, line_shape(wl, 305, 15))
    lamp = PointLamp("compact UVB lamp", spectrum, radiant_flux_w=0.3)
    rock = Surface("rock", 0.2, 0.59, 0.61, 0.29, 0.31)
    enc = Enclosure("box", 1.2, 0.6, 0.9, (PlacedLamp(lamp, 0.6, 0.3, 0.7),), (rock,))
    return enc, lamp_sources(lamp)[0].quantities["uvi"]


def test_height_matches_inverse_square_solution():
    """Below an isotropic point source UVI = I / h^2 (inverse-square law), so the heights
    giving UVI in [lo, hi] are h in [sqrt(I/hi), sqrt(I/lo)] above the surface."""
    enc, intensity = _scene()
    lo, hi = 3.0, 5.0
    answer = height_for_target(enc, "compact UVB lamp", "rock", (lo, hi), spacing_m=0.01)
    assert answer.achievable
    ((low, high),) = answer.good_bands_m
    assert low - 0.2 == pytest.approx(math.sqrt(intensity / hi), abs=0.011)
    assert high - 0.2 == pytest.approx(math.sqrt(intensity / lo), abs=0.011)
    assert low <= answer.suggested_height_m <= high
    assert "suggested" in answer.message


def test_height_says_when_no_height_can():
    enc, intensity = _scene()
    answer = height_for_target(enc, "compact UVB lamp", "rock", (500.0, 600.0))
    assert not answer.achievable
    assert answer.message.startswith("No height from 0.25 to 0.90 m")
    assert "stronger lamp" in answer.message
    far = height_for_target(enc, "compact UVB lamp", "rock", (0.001, 0.002))
    assert "weaker lamp" in far.message
    with pytest.raises(InputError, match="no lamp 'spot'"):
        height_for_target(enc, "spot", "rock", (1, 2))
    with pytest.raises(InputError, match="unknown statistic 'median'"):
        height_for_target(enc, "compact UVB lamp", "rock", (1, 2), statistic="median")
