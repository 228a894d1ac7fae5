"""Speed of the history store and the replacement schedule at collection scale.

A large collection: 300 enclosures x 2 lamps, 3 yearly audits, 10 readings per lamp per
audit = 18,000 readings. Prints import time, re-import time (idempotent), query time
and schedule time. Run: ``.venv/bin/python benchmarks/history.py``.
"""

import math
import tempfile
import time
from pathlib import Path

import numpy as np
import pandas as pd

from audit_lib.history import decay
from audit_lib.history import store as history

ENCLOSURES, LAMPS, AUDITS, PER_LAMP = 300, 2, 3, 10


def make(audit: int, rng) -> pd.DataFrame:
    rows = []
    date = pd.Timestamp("2023-03-01") + pd.DateOffset(years=audit)
    for e in range(ENCLOSURES):
        for lamp in range(LAMPS):
            uvi = 4.0 * math.exp(-1e-4 * 12 * (date - pd.Timestamp("2023-02-01")).days)
            for p in range(PER_LAMP):
                position = "basking" if p == 0 else f"p{p}"
                value = uvi * (1 if p == 0 else 0.5 / p) * (1 + 0.02 * rng.standard_normal())
                rows.append({"date": date, "enclosure": f"enc-{e:03d}", "lamp": f"lamp-{lamp}",
                             "position": position, "x_m": np.nan, "y_m": np.nan, "z_m": np.nan,
                             "distance_m": 0.3, "quantity": "uvi", "value": value, "unit": "",
                             "value_si": value, "meter": "m1", "note": "",
                             "source_file": f"audit-{audit}.csv", "source_line": len(rows) + 2})
    return pd.DataFrame(rows)


def main() -> None:
    rng = np.random.default_rng(0)
    frames = [make(a, rng) for a in range(AUDITS)]
    with tempfile.TemporaryDirectory() as tmp:
        db = Path(tmp) / "history.sqlite"
        for e in range(ENCLOSURES):
            for lamp in range(LAMPS):
                history.record_lamp_install(db, f"enc-{e:03d}", f"lamp-{lamp}", "2023-02-01", 12)
        t0 = time.perf_counter()
        for frame in frames:
            history.import_readings(db, frame)
        t1 = time.perf_counter()
        for frame in frames:
            history.import_readings(db, frame)
        t2 = time.perf_counter()
        readings = history.read_all_readings(db)
        installs = history.read_lamp_installs(db)
        t3 = time.perf_counter()
        table = decay.replacement_schedule(readings, installs, 2.9, today="2025-06-01")
        t4 = time.perf_counter()
        n = len(readings)
        print(f"readings stored: {n}; db size {db.stat().st_size / 1e6:.1f} MB")
        print(f"import:    {t1 - t0:.2f} s ({n / (t1 - t0):,.0f} readings/s)")
        print(f"re-import: {t2 - t1:.2f} s (nothing added)")
        print(f"read all readings + installs: {t3 - t2:.2f} s")
        print(f"schedule for {len(table)} lamps: {t4 - t3:.2f} s "
              f"({1e3 * (t4 - t3) / len(table):.1f} ms per lamp)")


if __name__ == "__main__":
    main()
