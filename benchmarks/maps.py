"""Benchmark: maps and Monte Carlo failures for a 64-emitter LED array.

Prints ``map_ms=<median>`` (one 200 x 200 surface map, four quantities: UVI, vitamin-D,
UVB, illuminance; median of repeated runs; target <= 50 ms), ``montecarlo_s=<n>`` (10,000
random-failure trials on the same array and grid; target <= 2 s) and the peak memory
traced by tracemalloc during each. Run: ``.venv/bin/python benchmarks/maps.py``.
"""

from __future__ import annotations

import statistics
import time
import tracemalloc

from audit_lib.scene.failures import emitter_contributions, monte_carlo_coverage
from audit_lib.scene.maps import Enclosure, PlacedLamp, Screen, compute_maps
from audit_lib.sources.emitters import EmitterType, PhosphorBand
from audit_lib.sources.lamps import LedArray, line_of_emitters


def build_scene() -> Enclosure:
    """Invented demo: a 2 x 32 bar of UVB and white emitters over a 1.2 m vivarium."""
    uvb = EmitterType("uvb305", 305, 12, 0.004, asymmetry=1.2, beam_angle_deg=60)
    white = EmitterType(
        "white", 450, 20, 0.25, beam_angle_deg=120, phosphor_bands=(PhosphorBand(560, 110, 0.7),)
    )
    layout = ["uvb305", "uvb305", "white", "uvb305"] * 8
    bar = LedArray(
        "UVB LED bar 48x305nm + 16 white",
        (uvb, white),
        line_of_emitters(layout, 0.015, rows=2, row_pitch_m=0.02),
    )
    assert len(bar.emitters) == 64
    return Enclosure(
        "benchmark vivarium",
        1.2,
        0.6,
        0.6,
        lamps=(PlacedLamp(bar, 0.6, 0.3, 0.58, name="bar"),),
        screens=(Screen("mesh top", 0.59, transmission=0.69),),
    )


def main(repeats: int = 15) -> None:
    enc = build_scene()
    compute_maps(enc, surfaces=["floor"], shape=(200, 200))  # warm caches
    times = []
    for _ in range(repeats):
        t0 = time.perf_counter()
        maps = compute_maps(enc, surfaces=["floor"], shape=(200, 200))
        times.append(time.perf_counter() - t0)
    assert len(maps["floor"].values) == 4 and maps["floor"].values["uvi"].shape == (200, 200)
    tracemalloc.start()
    compute_maps(enc, surfaces=["floor"], shape=(200, 200))
    map_peak = tracemalloc.get_traced_memory()[1]
    tracemalloc.stop()
    print(f"map_ms={1e3 * statistics.median(times):.1f}")
    print(f"map_min_ms={1e3 * min(times):.1f}")
    print(f"map_peak_mb={map_peak / 2**20:.1f}")

    runs = []
    for _ in range(3):
        tracemalloc.start()
        t0 = time.perf_counter()
        contrib = emitter_contributions(enc, "floor", "uvi", shape=(200, 200))
        # coverage = share of the floor with UVI >= 1; threshold just under the baseline
        result = monte_carlo_coverage(contrib, 0.05, (1.0, None), 10_000, 0.85, seed=1)
        runs.append(time.perf_counter() - t0)
        mc_peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
    print(f"montecarlo_s={statistics.median(runs):.2f}")
    print(f"montecarlo_peak_mb={mc_peak / 2**20:.1f}")
    print(
        f"# baseline coverage {result.baseline_coverage:.3f}, "
        f"P(coverage < 0.85) = {result.probability_below:.4f}, "
        f"quantiles {result.quantiles()}, units {len(contrib.units)}"
    )


if __name__ == "__main__":
    main()
