"""Map figures: contours at the target range, lamp outline, failed emitters marked."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")

import numpy as np
import pytest

from audit_lib.report.maps import lamp_outline, plot_coverage_distribution, plot_surface_map
from audit_lib.scene.failures import monte_carlo_failures
from audit_lib.scene.maps import Enclosure, PlacedLamp, Surface, compute_maps
from audit_lib.sources.emitters import EmitterType
from audit_lib.sources.lamps import LedArray, line_of_emitters


def _scene():
    uvb = EmitterType("uvb", 305, 12, 0.003, beam_angle_deg=60)
    bar = LedArray("bar", (uvb,), line_of_emitters(["uvb"] * 6, 0.04))
    rock = Surface("rock", 0.25, 0.3, 0.7, 0.15, 0.45)
    return Enclosure(
        "box", 1.0, 0.6, 0.6, (PlacedLamp(bar, 0.5, 0.3, 0.55, azimuth_deg=90),), (rock,)
    )


def test_lamp_outline_follows_azimuth():
    """A bar turned 90 degrees about the vertical lies along y (rotation geometry)."""
    enc = _scene()
    outline = lamp_outline(enc.lamps[0])
    assert np.ptp(outline[:, 0]) == pytest.approx(0.02)  # 2 x 1 cm margin across the bar
    assert np.ptp(outline[:, 1]) == pytest.approx(0.2 + 0.02)  # 5 pitches + margins along it
    np.testing.assert_allclose(outline[0], outline[-1])


def test_surface_map_figure_has_contours_outline_and_failed_marks(tmp_path):
    enc = _scene()
    m = compute_maps(enc, spacing_m=0.01, surfaces=["rock"], failed=["bar/uvb-1"])["rock"]
    lo, hi = np.quantile(m.values["uvi"], [0.3, 0.9])
    fig = plot_surface_map(m, "uvi", (lo, hi), enc)
    ax = fig.axes[0]
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any("low end" in t for t in labels) and any("high end" in t for t in labels)
    assert "emitter out" in labels
    assert "1 emitter(s) out" in ax.get_title()
    assert fig.axes[1].get_ylabel() == "UV Index [-]"
    path = tmp_path / "map.png"
    fig.savefig(path)
    assert path.stat().st_size > 10_000


def test_coverage_histogram(tmp_path):
    enc = _scene()
    r = monte_carlo_failures(enc, "rock", (0.5, 5.0), 0.2, n_trials=200, seed=2, spacing_m=0.05)
    fig = plot_coverage_distribution(r)
    assert fig.axes[0].get_ylabel() == "trials (of 200)"
    fig.savefig(tmp_path / "mc.png")


def _two_bar_scene(second_peak_nm: float):
    """Two LED bars side by side over a floor: 305 nm on the left, ``second_peak_nm`` right."""
    left = EmitterType("left", 305, 12, 0.003, beam_angle_deg=60)
    right = EmitterType("right", second_peak_nm, 12, 0.003, beam_angle_deg=60)
    bar_l = LedArray("bar l", (left,), line_of_emitters(["left"] * 4, 0.04))
    bar_r = LedArray("bar r", (right,), line_of_emitters(["right"] * 4, 0.04))
    return Enclosure("box", 1.0, 0.6, 0.6, (PlacedLamp(bar_l, 0.25, 0.3, 0.55, name="l"),
                                            PlacedLamp(bar_r, 0.75, 0.3, 0.55, name="r")))


def test_vitamin_d_factor_is_the_ratio_of_the_weighted_spectrum():
    """One spectrum everywhere: the vitamin-D map is the UV Index map times
    E_vitD / (40 m2 W-1 x E_er) of that spectrum (UV Index = 40 x erythemal irradiance, WHO
    2002 "Global Solar UV Index"; erythema CIE S 007, previtamin D3 CIE 174:2006), here
    integrated independently with the trapezoid rule on the emitter's relative spectrum."""
    from audit_lib.light.action_spectra import erythema_cie1998, previtamin_d3_cie2006
    from audit_lib.report.maps import VITAMIN_D_SHAPE_TOLERANCE, vitamin_d_per_uvi
    from audit_lib.sources.emitters import relative_spectrum

    enc = _scene()
    maps = compute_maps(enc, spacing_m=0.02).values()
    factor, gap = vitamin_d_per_uvi(maps)
    wl, rel = relative_spectrum(enc.lamps[0].lamp.emitter_types[0], np.arange(250.0, 400.01, 0.1))
    expected = (np.trapezoid(rel * previtamin_d3_cie2006(wl), wl)
                / (40.0 * np.trapezoid(rel * erythema_cie1998(wl), wl)))
    assert factor == pytest.approx(expected, rel=0.01)
    assert gap < 1e-6 < VITAMIN_D_SHAPE_TOLERANCE


def test_two_spectra_make_the_vitamin_d_maps_differ():
    """Lamps of 305 and 295 nm weigh differently (previtamin D3 peaks near 295-300 nm, CIE
    174; erythema keeps falling past 298 nm, CIE S 007): the ratio changes across the floor,
    so the vitamin-D maps are drawn; the 305/305 twin gives a sentence with the factor."""
    from types import SimpleNamespace

    from matplotlib.figure import Figure

    from audit_lib.report import formats as fmt
    from audit_lib.report.audit_figures import vitamin_d_maps
    from audit_lib.report.maps import VITAMIN_D_SHAPE_TOLERANCE, vitamin_d_per_uvi

    mixed = _two_bar_scene(295)
    maps = compute_maps(mixed, spacing_m=0.02, surfaces=["floor"])
    ratio = maps["floor"].values["vitamin_d_w_m2"] / maps["floor"].values["uvi"]
    assert np.ptp(ratio) / np.max(ratio) > 0.05  # the ratio itself varies over the floor
    assert vitamin_d_per_uvi(maps.values())[1] > VITAMIN_D_SHAPE_TOLERANCE
    shown = vitamin_d_maps(SimpleNamespace(maps=maps, zone=None, scene=mixed))
    assert isinstance(shown, Figure)
    assert shown.axes[-1].get_ylabel() == "vitamin-D-weighted irradiance [W m-2]"

    same = _two_bar_scene(305)
    maps = compute_maps(same, spacing_m=0.02, surfaces=["floor"])
    factor, _ = vitamin_d_per_uvi(maps.values())
    note = vitamin_d_maps(SimpleNamespace(maps=maps, zone=None, scene=same))
    assert isinstance(note, fmt.HTMLBlock)
    assert f"{fmt.text(factor, 'w_m2', unit=True)} per UV Index unit" in note


def test_maps_share_one_bar_without_panel_legends():
    """The workbook's maps: one panel per surface plus one colour bar, no legends (the text
    above explains the marks), axis labels on the outer panels only."""
    from types import SimpleNamespace

    from audit_lib.report.audit_figures import plot_maps

    enc = _scene()
    maps = compute_maps(enc, spacing_m=0.02, failed=["bar/uvb-1"])
    fig = plot_maps(SimpleNamespace(maps=maps, zone=None, scene=enc))
    *panels, bar = fig.axes
    assert len(panels) == len(maps)
    assert all(ax.get_legend() is None for ax in panels)
    assert bar.get_ylabel() == "UV Index [-]"
    assert [ax.get_xlabel() for ax in panels][-1] == "x [m]"
