"""How long validating and loading a large site takes.

Builds a site of 300 enclosures (the demo park's 12, copied 25 times with new ids) and
18,000 readings in a temporary folder, then times ``check_site`` and ``load_site``.
Prints ``check_s=<seconds>``, ``load_s=<seconds>`` and the peak Python memory.
Target (design.md, scale): a few hundred enclosures validate in a few seconds.
"""

from __future__ import annotations

import csv
import tempfile
import time
import tracemalloc
from pathlib import Path

import tomli_w

from audit_lib.site.folder import check_site, load_site
from audit_lib.site.readings import read_readings

PARK = Path(__file__).resolve().parent.parent / "sample_sites" / "kestrel-moor-wildlife-park"
COPIES = 25
READINGS_PER_ENCLOSURE = 60


def build(root: Path) -> None:
    """Write the large site into ``root``."""
    site = load_site(PARK)
    data = site.records.model_dump(mode="python", exclude_defaults=True, exclude_none=True)
    data["format_version"] = 1
    for model in data["lamp_models"]:
        model["kind"] = site.lamp_model(model["id"]).kind
        model.pop("spectrum", None)
        if model["kind"] in ("tube", "point") and "bands" not in model:
            model["bands"] = [{"peak_nm": 313, "fwhm_nm": 22, "asymmetry": 0.5, "share": 0.3},
                              {"peak_nm": 545, "fwhm_nm": 30, "share": 0.7}]
    enclosures = []
    for k in range(COPIES):
        for enc in data["enclosures"]:
            enclosures.append({**enc, "id": f"{enc['id']}-{k:02d}"})
    data["enclosures"] = enclosures
    root.mkdir(parents=True, exist_ok=True)
    (root / "site.toml").write_text(tomli_w.dumps(data), encoding="utf-8")
    (root / "readings").mkdir(exist_ok=True)
    base = read_readings(PARK / "readings")
    with open(root / "readings" / "big.csv", "w", newline="", encoding="utf-8") as handle:
        writer = csv.writer(handle)
        writer.writerow(["date", "enclosure", "lamp", "position", "distance_m", "quantity",
                         "value", "unit", "meter"])
        for enc in enclosures:
            rows = base[base["enclosure"] == enc["id"].rsplit("-", 1)[0]]
            for i in range(READINGS_PER_ENCLOSURE):
                r = rows.iloc[i % len(rows)]
                writer.writerow([r.date.date(), enc["id"], r.lamp, r.position,
                                 "" if r.distance_m != r.distance_m else r.distance_m,
                                 r.quantity, r.value, r.unit, r.meter])


def main() -> None:
    """Build, time and print."""
    with tempfile.TemporaryDirectory() as tmp:
        root = Path(tmp) / "big-site"
        build(root)
        start = time.perf_counter()
        problems = check_site(root)
        check_s = time.perf_counter() - start
        assert not problems, problems[:3]
        start = time.perf_counter()
        site = load_site(root)
        load_s = time.perf_counter() - start
        tracemalloc.start()  # a separate pass: tracing slows Python down several times
        load_site(root)
        _, peak = tracemalloc.get_traced_memory()
        tracemalloc.stop()
        print(f"enclosures={len(site.records.enclosures)} readings={len(site.readings)}")
        print(f"check_s={check_s:.2f}")
        print(f"load_s={load_s:.2f}")
        print(f"peak_mib={peak / 2**20:.1f}")


if __name__ == "__main__":
    main()
