"""What-if panel latency: a 64-emitter LED array over a 200 x 200 floor grid.

Builds an invented site in memory (one LED array model, 8 x 8 UVB emitters at 305 nm on a
3 cm pitch; a 1.0 m x 1.0 m enclosure with one basking platform), opens the planner and the
panel headless, then cycles through control changes of every kind (height, position, failed
emitters, beam angle, screen, light times, species, output share). For each change it times
the planner update (compute) and the redraw (artists updated, both figures rendered to PNG).

Failing or restoring emitters after the first failure of a placement, light times, species
and output share reuse that placement's maps; the median is over all kinds alike.

Prints ``compute_ms=<median> redraw_ms=<median>`` and then the medians by kind of change.
Targets (issue 7): compute <= 50 ms, compute + redraw <= 150 ms.
"""

from __future__ import annotations

import datetime as dt
import os
import statistics
import sys
import tempfile
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))


def demo_site(root: Path):
    """An invented site with one 64-emitter LED array (demo data, not a product)."""
    from audit_lib.site.folder import Site
    from audit_lib.site.schema import SiteFile

    data = {
        "format_version": 1,
        "site": {"name": "Benchmark site (invented)", "latitude_deg": 52.0,
                 "longitude_deg": 0.0, "time_zone": "Europe/London",
                 "audit_dates": [dt.date(2026, 6, 1)]},
        "lamp_models": [{
            "kind": "led_array", "id": "uvb-panel-64", "name": "UVB LED panel 8x8 305 nm",
            "emitters": [{"id": "uvb305", "peak_nm": 305, "fwhm_nm": 12, "asymmetry": 1.15,
                          "beam_angle_deg": 90, "flux_w": 0.01}],
            "grids": [{"emitter": "uvb305", "rows": 8, "columns": 8, "pitch_x_m": 0.03,
                       "pitch_y_m": 0.03}]}],
        "enclosures": [{
            "id": "bench", "name": "Benchmark enclosure", "width_m": 1.0, "depth_m": 1.0,
            "height_m": 0.8, "species": ["pogona-vitticeps"], "keeper_working_distance_m": 0.5,
            "surfaces": [{"id": "basking", "x_m": 0.35, "y_m": 0.35, "width_m": 0.3,
                          "depth_m": 0.3, "z_m": 0.15}],
            "lamps": [{"id": "panel", "model": "uvb-panel-64", "x_m": 0.5, "y_m": 0.5,
                       "z_m": 0.7, "installed": dt.date(2026, 1, 1), "daily_hours": 12}],
            "time_budget": {"basking": 0.3, "floor": 0.7}}],
        "species": [{"id": "pogona-vitticeps", "scientific_name": "Pogona vitticeps",
                     "zone": 4}, {"id": "forest-gecko", "scientific_name": "Invented gecko",
                                  "zone": 2}],
    }
    return Site(root=root, records=SiteFile.model_validate(data))


def changes(r: int):
    """One round of control changes; placements differ every round (no cached maps)."""
    return [
    ("height", {"z_m": 0.60 - 0.01 * r}), ("height", {"z_m": 0.70 - 0.01 * r}),
    ("position", {"x_m": 0.45 - 0.01 * r}), ("position", {"x_m": 0.50 - 0.01 * r}),
    ("failed", {"failed_emitters": (28,)}), ("failed", {"failed_emitters": (28, 29)}),
    ("failed", {"failed_emitters": ()}),
    ("beam", {"uv_beam_angle_deg": 60.0 - r}), ("beam", {"uv_beam_angle_deg": 90.0}),
    ("screen", {"screen": "mesh-fine"}), ("screen", {"screen": "none"}),
    ("light times", {"on": "07:00", "off": "19:00", "ramp_minutes": 30.0}),
    ("light times", {"on": None, "off": None, "ramp_minutes": 0.0}),
    ("species", {"species": "forest-gecko"}), ("species", {"species": "pogona-vitticeps"}),
    ("output", {"output_share": 0.7}), ("output", {"output_share": 1.0}),
    ]


def main(rounds: int = 3) -> None:
    from audit_lib.pipeline.planner import WhatIfPlanner
    from audit_lib.run.widgets import WhatIfPanel

    with tempfile.TemporaryDirectory() as tmp:
        planner = WhatIfPlanner(demo_site(Path(tmp)), "bench", shape=(200, 200))
        panel = WhatIfPanel(planner)
        n = len(planner.emitter_labels())
        assert n == 64, n
        compute, redraw, by_kind = [], [], {}
        for r in range(rounds + 1):
            for kind, change in changes(r):
                t = panel.apply(**change)
                if r == 0:  # first round: imports and first figures
                    continue
                compute.append(t["compute_ms"])
                redraw.append(t["redraw_ms"])
                by_kind.setdefault(kind, []).append((t["compute_ms"], t["redraw_ms"]))
    print(f"compute_ms={statistics.median(compute):.1f} redraw_ms={statistics.median(redraw):.1f}")
    both = [c + r for c, r in zip(compute, redraw, strict=True)]
    print(f"  compute+redraw median {statistics.median(both):.1f} ms, "
          f"slowest {max(both):.1f} ms")
    for kind, values in by_kind.items():
        c = statistics.median(v[0] for v in values)
        r = statistics.median(v[1] for v in values)
        print(f"  {kind}: compute {c:.1f} ms, redraw {r:.1f} ms (medians)")
    load = os.getloadavg()[0] if hasattr(os, "getloadavg") else float("nan")
    print(f"  machine load average {load:.1f} on {os.cpu_count()} CPUs (wall-clock times)")
    print(f"  emitters={n} grid=200x200 changes={len(compute)} (every height, position and "
          "beam change is a new placement: maps recomputed)")


if __name__ == "__main__":
    main()
