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
