"""Speed and memory of daily-dose integration: prints figures, asserts nothing.

Run: .venv/bin/python benchmarks/dose.py
"""

import datetime as dt
import time
import tracemalloc

import numpy as np

from audit_lib.day.dose import integrate_daily_dose, monthly_table
from audit_lib.day.photoperiod import NaturalDaySchedule, OnOffSchedule, daily_profile


def best_of(func, repeat=3):
    times = []
    for _ in range(repeat):
        t0 = time.perf_counter()
        func()
        times.append(time.perf_counter() - t0)
    return min(times)


def main():
    schedules = {
        "bar": OnOffSchedule(on="08:00", off="20:00", ramp_up_min=30, ramp_down_min=30),
        "spot": OnOffSchedule(on="11:00", off="15:00"),
        "natural": NaturalDaySchedule(latitude_deg=-25.0, midday="13:00", shape="sun"),
    }
    day = dt.date(2026, 1, 15)
    t = best_of(lambda: daily_profile(schedules["bar"], day))
    print(f"daily_profile, on/off with ramps, 1-min steps: {t * 1e3:.2f} ms")
    t = best_of(lambda: daily_profile(schedules["natural"], day))
    print(f"daily_profile, natural day sun shape:         {t * 1e3:.2f} ms")
    profiles = {k: daily_profile(s, day) for k, s in schedules.items()}
    rng = np.random.default_rng(1)
    for n in (1, 50, 200):
        maps = {k: rng.random((n, n)) * 4 for k in schedules}
        t = best_of(lambda maps=maps: integrate_daily_dose(maps, profiles, uvi_range=(1, 3)))
        tracemalloc.start()
        integrate_daily_dose(maps, profiles, uvi_range=(1, 3))
        peak = tracemalloc.get_traced_memory()[1]
        tracemalloc.stop()
        print(f"integrate_daily_dose, 3 lamps, {n}x{n} grid, 1440 steps: {t * 1e3:8.1f} ms, "
              f"peak memory {peak / 2**20:.1f} MiB")
    plain = {k: profiles[k] for k in ("bar", "spot")}
    maps = {k: rng.random((200, 200)) * 4 for k in plain}
    t = best_of(lambda: integrate_daily_dose(maps, plain, uvi_range=(1, 3)))
    print(f"integrate_daily_dose, 2 on/off lamps only, 200x200 grid: {t * 1e3:8.1f} ms")
    t = best_of(lambda: monthly_table({"bar": 2.0, "spot": 3.0, "natural": 1.0}, schedules, 2026,
                                      uvi_range=(1, 3), reference_latitude_deg=-25.0), repeat=1)
    print(f"monthly_table, 3 lamps, point, with clear-sky reference: {t * 1e3:.0f} ms")


if __name__ == "__main__":
    main()
