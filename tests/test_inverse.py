"""Mount height for a target basking UVI."""

from __future__ import annotations

import math

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.light.spectra import Spectrum
from audit_lib.scene.inverse import height_for_target
from audit_lib.scene.maps import Enclosure, PlacedLamp, Surface
from audit_lib.sources.emitters import line_shape
from audit_lib.sources.lamps import PointLamp, lamp_sources


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
    aimed = height_for_target(enc, "compact UVB lamp", "rock", (lo, hi), spacing_m=0.01,
                              aim_uvi=4.0)
    assert aimed.suggested_height_m - 0.2 == pytest.approx(math.sqrt(intensity / 4.0), abs=2e-3)
    assert aimed.suggested_uvi == pytest.approx(4.0, rel=0.01)


def test_height_says_when_no_height_can():
    """Too weak a lamp is closest at the lowest height (inverse-square law), too strong a
    lamp at the top; the answer says on which side of the range it stays."""
    enc, intensity = _scene()
    answer = height_for_target(enc, "compact UVB lamp", "rock", (500.0, 600.0))
    assert not answer.achievable and answer.side == "below"
    assert answer.suggested_height_m == pytest.approx(0.25)
    far = height_for_target(enc, "compact UVB lamp", "rock", (0.001, 0.002))
    assert not far.achievable and far.side == "above"
    assert far.suggested_height_m == pytest.approx(0.9)
    with pytest.raises(InputError, match="no lamp 'spot'"):
        height_for_target(enc, "spot", "rock", (1, 2))
    with pytest.raises(InputError, match="unknown statistic 'median'"):
        height_for_target(enc, "compact UVB lamp", "rock", (1, 2), statistic="median")


def test_emitter_count_matches_superposition():
    """Far from a short row, N identical emitters give about N times one emitter's UVI
    (superposition); the smallest count reaching the range is returned."""
    from audit_lib.scene.inverse import emitter_count_for_target
    from audit_lib.sources.emitters import EmitterType
    from audit_lib.sources.lamps import LedArray, line_of_emitters

    uvb = EmitterType("uvb", 305, 12, 0.002, beam_angle_deg=120)
    bar = LedArray("bar", (uvb,), line_of_emitters(["uvb"] * 4, 0.01))
    rock = Surface("rock", 0.0, 0.49, 0.51, 0.29, 0.31)
    enc = Enclosure("box", 1.0, 0.6, 2.0, (PlacedLamp(bar, 0.5, 0.3, 1.5),), (rock,))
    answer = emitter_count_for_target(enc, "bar", "uvb", "rock", (0.0, 1e9), max_count=8)
    per_emitter = answer.uvi[0]
    np.testing.assert_allclose(answer.uvi, per_emitter * answer.counts, rtol=1e-3)
    target = (3.5 * per_emitter, 4.5 * per_emitter)
    got = emitter_count_for_target(enc, "bar", "uvb", "rock", target, max_count=8)
    assert got.achievable and got.suggested_count == 4
    none = emitter_count_for_target(
        enc, "bar", "uvb", "rock", (100 * per_emitter, 200 * per_emitter)
    )
    assert not none.achievable and none.side == "below" and none.counts[-1] == 16
    with pytest.raises(InputError, match="has no emitters of type 'uva'"):
        emitter_count_for_target(enc, "bar", "uva", "rock", (1, 2))


def test_height_search_never_leaves_the_enclosure():
    """Bounded search: no scanned or suggested height lies above the enclosure top (0.9 m),
    even when heights above it are asked for or the range needs more distance (a target
    below what the top gives: inverse-square law, UVI = I / h^2 is still above range there)."""
    enc, intensity = _scene()
    top = enc.height_m
    asked = height_for_target(enc, "compact UVB lamp", "rock", (1.0, 2.0),
                              heights_m=np.arange(0.3, 2.0, 0.05))
    assert asked.heights_m.max() <= top + 1e-9
    weak_target = intensity / (top - 0.2) ** 2 / 4
    answer = height_for_target(enc, "compact UVB lamp", "rock", (0.0, weak_target))
    assert answer.top_m == top and answer.heights_m.max() == pytest.approx(top)
    assert not answer.achievable and answer.side == "above"
    assert answer.suggested_height_m <= top
    with pytest.raises(InputError, match="no heights to scan at or below the top"):
        height_for_target(enc, "compact UVB lamp", "rock", (1, 2), heights_m=[1.5, 2.0])
