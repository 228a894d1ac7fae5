"""Benchmark: every metric of 10,000 spectra of 551 points, vectorised vs a plain loop.

Prints ``spectra_s=<seconds> loop_s=<seconds>``: the vectorised :func:`batch_metrics`
(CCT included) against a plain per-spectrum loop of numpy trapezoids (CCT left out of the
loop, so the comparison favours the loop), timed over 500 spectra and scaled to 10,000;
and the peak memory of the vectorised call.
"""

import time
import tracemalloc

import numpy as np

from audit_lib.light.metrics import QUANTITY_DEFINITIONS, batch_metrics, peak_shape

N_SPECTRA, N_POINTS, LOOP_SAMPLE = 10_000, 551, 500


def make_spectra(rng):
    wl = np.linspace(250.0, 800.0, N_POINTS)
    peaks = rng.uniform(290, 320, (N_SPECTRA, 1))
    widths = rng.uniform(4, 15, (N_SPECTRA, 1))
    uv = np.exp(-0.5 * ((wl - peaks) / widths) ** 2) * rng.uniform(1e-3, 5e-2, (N_SPECTRA, 1))
    visible = np.exp(-0.5 * ((wl - 560) / 80) ** 2) * rng.uniform(0.01, 0.5, (N_SPECTRA, 1))
    return wl, uv + visible


def plain_metrics(wl, e):
    """What a user would script: one spectrum, one quantity at a time, np.trapezoid."""
    out = {}
    for name, (lo, hi, weighting, scale) in QUANTITY_DEFINITIONS.items():
        inside = (wl >= lo) & (wl <= hi)
        out[name] = scale * np.trapezoid(e[inside] * weighting(wl[inside]), wl[inside])
    out["peak_nm"], out["fwhm_nm"], out["asymmetry"] = peak_shape(wl, e)
    return out


def main():
    wl, spectra = make_spectra(np.random.default_rng(0))
    batch_metrics(wl, spectra[:2])  # warm caches (weights for this grid, colour import)
    start = time.perf_counter()
    result = batch_metrics(wl, spectra)
    spectra_s = time.perf_counter() - start

    start = time.perf_counter()
    for row in spectra[:LOOP_SAMPLE]:
        plain_metrics(wl, row)
    loop_s = (time.perf_counter() - start) * N_SPECTRA / LOOP_SAMPLE

    tracemalloc.start()
    batch_metrics(wl, spectra)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert result["uvi"].shape == (N_SPECTRA,)
    print(f"spectra_s={spectra_s:.3f} loop_s={loop_s:.2f} peak_mb={peak / 1e6:.0f}")


if __name__ == "__main__":
    main()
