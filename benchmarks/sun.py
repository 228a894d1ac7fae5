"""Cost of the sun's figures that the audit computes per enclosure.

The batch asks for day lengths over a year (the natural light-period range of a latitude),
one clear-sky UV Index curve per audit day and one clear-sky daily dose per month. Prints
``sun_times_us`` (one sunrise/sunset/day length, iterated Meeus/NOAA equations),
``year_of_day_lengths_ms`` (183 days, as ``natural_day_range_h`` asks) and
``clear_sky_day_ms`` (one 1-minute curve and its dose). Goal: a year of day lengths well
under 0.5 s, so the sun never shows in a batch's time per enclosure.

Usage: python benchmarks/sun.py
"""

from __future__ import annotations

import datetime as dt
import time

from audit_lib.light.sun import clear_sky_daily_dose_sed, clear_sky_uvi_day, day_length_h, sun_times


def _best_of(fn, repeat: int = 5) -> float:
    best = float("inf")
    for _ in range(repeat):
        start = time.perf_counter()
        fn()
        best = min(best, time.perf_counter() - start)
    return best


def main() -> None:
    day = dt.date(2026, 6, 21)
    days = [dt.date(2026, 1, 1) + dt.timedelta(days=d) for d in range(0, 365, 2)]
    one = _best_of(lambda: [sun_times(51.5, -0.1, day, 1.0) for _ in range(100)]) / 100
    year = _best_of(lambda: [day_length_h(51.5, d) for d in days])
    curve = _best_of(lambda: (clear_sky_uvi_day(51.5, -0.1, day, step_s=60.0),
                              clear_sky_daily_dose_sed(51.5, day)))
    print(f"sun_times_us={one * 1e6:.0f}")
    print(f"year_of_day_lengths_ms={year * 1e3:.1f}")
    print(f"clear_sky_day_ms={curve * 1e3:.1f}")


if __name__ == "__main__":
    main()
