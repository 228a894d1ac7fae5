"""Benchmark: processor time of the enclosure workbook's figures, build and PNG.

Audits the demo park's enclosures once, then draws every figure the enclosure workbook shows
(in its cells' order: UV Index maps, vitamin-D maps where drawn, the audit day, month by month,
lamp decays, the failure study, lamp spectra) and renders each to PNG with
:func:`audit_lib.report.audit_figures.png_bytes`, as the workbook's kernel does. Spectra go
through :func:`audit_lib.report.audit_figures.lamp_spectrum_images` (one draw per lamp model
per process, as in a batch worker); the cache is emptied before each repeat.

Prints ``figures_s=`` (processor seconds per enclosure, averaged over the enclosures; best of
``--repeats``), ``figures_max_s=`` (the dearest enclosure) and ``<figure>_s=`` per kind.
Goal (issue "a whole collection in minutes"): figures_s <= 0.8 on the demo park.

Usage: python benchmarks/figures.py [--repeats N] [--save DIR] (``--save``: write every PNG)
"""

from __future__ import annotations

import argparse
import time
import warnings
from pathlib import Path

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402

from audit_lib.pipeline.audit import audit_enclosure, open_enclosure  # noqa: E402
from audit_lib.report import audit_figures as figures  # noqa: E402

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"

#: The workbook's figure cells, in order: name -> function of the audit.
FIGURES = {
    "maps_uvi": lambda a: figures.plot_maps(a, "uvi"),
    "maps_vitamin_d": figures.vitamin_d_maps,
    "daily": figures.plot_daily,
    "monthly": figures.plot_monthly,
    "decays": figures.plot_lamp_decays,
    "failure": figures.plot_failure_study,
}


def _as_list(result) -> list:
    if result is None or isinstance(result, str):  # nothing drawn, or a sentence instead
        return []
    return list(result) if isinstance(result, list | tuple) else [result]


def draw_all(audit, save: Path | None = None) -> dict[str, float]:
    """Draw and render every figure of one enclosure; processor seconds by figure kind."""
    seconds = {}
    for name, function in FIGURES.items():
        t0 = time.process_time()
        pngs = [figures.png_bytes(fig) for fig in _as_list(function(audit))]
        plt.close("all")
        seconds[name] = time.process_time() - t0
        for i, png in enumerate(p for p in pngs if p):
            if save is not None:
                (save / f"{audit.enclosure_id}-{name}-{i}.png").write_bytes(png)
    t0 = time.process_time()
    images = figures.lamp_spectrum_images(audit)
    seconds["spectra"] = time.process_time() - t0
    if save is not None:
        for i, image in enumerate(images):
            (save / f"{audit.enclosure_id}-spectra-{i}.png").write_bytes(image.data)
    return seconds


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--repeats", type=int, default=3)
    parser.add_argument("--save", type=Path, default=None)
    args = parser.parse_args()
    warnings.simplefilter("ignore")
    audits = []
    for i in range(1, 13):
        site, enclosure_id = open_enclosure(DEMO, f"rh-{i:02d}")
        audits.append(audit_enclosure(site, enclosure_id))
    if args.save is not None:
        args.save.mkdir(parents=True, exist_ok=True)
    draw_all(audits[0])  # warm up fonts and caches
    best: dict[str, float] | None = None
    worst = 0.0
    for repeat in range(args.repeats):
        figures._SPECTRUM_PNGS.clear()
        totals: dict[str, float] = {}
        for audit in audits:
            seconds = draw_all(audit, args.save if repeat == 0 else None)
            worst = max(worst, sum(seconds.values())) if best is None else worst
            for name, value in seconds.items():
                totals[name] = totals.get(name, 0.0) + value
        if best is None or sum(totals.values()) < sum(best.values()):
            best = totals
    n = len(audits)
    print(f"figures_s={sum(best.values()) / n:.3f}")
    print(f"figures_max_s={worst:.3f}")
    for name, value in best.items():
        print(f"{name}_s={value / n:.3f}")


if __name__ == "__main__":
    main()
