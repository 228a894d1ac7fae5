"""Synthesise the demo sites' readings and spectra from their own lamp models.

DEMO DATA. The sites, lamps and readings are invented. This script makes the readings
consistent with the site files, so that the audit's verdicts mean something: each reading
is the scene model's value (``audit_lib.pipeline.assemble`` + ``audit_lib.scene.maps``) at the reading's
place, times the lamp's remaining output on the audit day, times meter noise, rounded to
the meter's resolution. The planted problems come from the site files themselves (a lamp
never replaced, a failed emitter, a lamp too close, an enclosure without a refuge).

Lamp output decay (demo assumption, common practice order of magnitude, not a source):
fluorescent tubes and mercury/metal-halide lamps lose about 25-30 % of their UV per year of
12 h days, LED emitters about 8 %. Modelled as exp(-hours / tau).

Run from the repository root: ``.venv/bin/python sample_sites/make_demo_data.py``.
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math
from pathlib import Path

import numpy as np

try:  # Python >= 3.11
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

from audit_lib.pipeline.assemble import bands_spectrum, build_scene, failed_labels
from audit_lib.light.metrics import weighted_quantities
from audit_lib.scene.maps import evaluate_points
from audit_lib.site.folder import Site
from audit_lib.site.schema import Band, SiteFile

HERE = Path(__file__).resolve().parent
PARK = HERE / "kestrel-moor-wildlife-park"
CLIENT = HERE / "ashdown-private-collection"
#: Fraction of UV output lost per 4380 h (a year of 12 h days), by lamp kind [-].
ANNUAL_LOSS = {"tube": 0.25, "point": 0.30, "from_readings": 0.30, "led_array": 0.08}
HOURS_PER_DAY = {"house-day": 12.0, "house-seasonal": 11.5, "natural-day": 12.2}
QUANTITIES = ("uvi", "uvb_w_m2", "illuminance_lux")


def remaining_output(kind: str, installed: dt.date, earlier: list[dt.date], day: dt.date,
                     hours_per_day: float) -> float:
    """Share of new output left on ``day`` for the lamp in place then [-]."""
    start = max([d for d in [*earlier, installed] if d <= day], default=installed)
    hours = max(0, (day - start).days) * hours_per_day
    tau = -4380.0 / math.log(1.0 - ANNUAL_LOSS[kind])
    return math.exp(-hours / tau)


def _lamp_hours_per_day(place) -> float:
    return place.daily_hours or HOURS_PER_DAY.get(place.schedule, 12.0)


def _per_lamp(site: Site, enclosure_id: str, points: np.ndarray, failed=()) -> dict:
    """Per lamp id: dict quantity -> (n_points,) values with that lamp alone, new."""
    scene = build_scene(site, enclosure_id)
    ev = evaluate_points(scene, points, QUANTITIES, failed=failed, per_source=QUANTITIES)
    out: dict[str, dict[str, np.ndarray]] = {}
    lamps = np.array([label.split("/")[0] for label in ev.labels])
    for lamp in dict.fromkeys(lamps):
        rows = lamps == lamp
        out[lamp] = {q: ev.contributions[q][rows].sum(axis=0) for q in QUANTITIES}
    return out


def _brightest(site: Site, enc, surface, n: int = 9) -> tuple[float, float]:
    """Where a keeper reads a surface: its brightest point (UVI, lamps new) [m]."""
    xs = surface.x_m + (np.arange(n) + 0.5) / n * surface.width_m
    ys = surface.y_m + (np.arange(n) + 0.5) / n * surface.depth_m
    gx, gy = np.meshgrid(xs, ys)
    points = np.column_stack([gx.ravel(), gy.ravel(), np.full(gx.size, surface.z_m)])
    uvi = evaluate_points(build_scene(site, enc.id), points, ("uvi",)).values["uvi"]
    best = int(np.argmax(uvi))
    return float(points[best, 0]), float(points[best, 1])


def _noisy(rng, value: float, quantity: str) -> tuple[float, str]:
    value *= 1.0 + rng.normal(0.0, 0.04)
    if quantity == "uvi":
        return round(max(value, 0.0), 1), "UVI"
    if quantity == "uvb_w_m2":
        return round(max(value, 0.0) * 100.0, 0), "uW/cm^2"  # W/m2 -> uW/cm2
    return round(max(value, 0.0), -1), "lx"


def audit_rows(site: Site, day: dt.date, rng, *, fail_from: dict[str, dt.date],
               uvb_meter: set[str]) -> list[dict]:
    """Readings of one audit day for every enclosure of ``site``."""
    rows = []
    for enc in site.records.enclosures:
        failed = failed_labels(site, enc.id)
        failed = tuple(f for f in failed if day >= fail_from.get(enc.id, dt.date.max))
        spots = [(s.id, *_brightest(site, enc, s), s.z_m, "surface") for s in enc.surfaces]
        spots += [(p.id, p.x_m, p.y_m, p.z_m, "position") for p in enc.positions]
        checks = [(lp.id, lp.x_m, lp.y_m, max(lp.z_m - 0.3, 0.0)) for lp in enc.lamps]
        points = np.array([s[1:4] for s in spots] + [c[1:4] for c in checks], float)
        per_lamp = _per_lamp(site, enc.id, points, failed)
        factor = {}
        for lp in enc.lamps:
            kind = site.lamp_model(lp.model).kind
            factor[lp.id] = remaining_output(kind, lp.installed, lp.earlier_installs, day,
                                             _lamp_hours_per_day(lp))
        single = enc.lamps[0].id if len(enc.lamps) == 1 else ""
        for i, (name, *_xyz, what) in enumerate(spots):
            total = {q: sum(factor[lp] * per_lamp[lp][q][i] for lp in per_lamp)
                     for q in QUANTITIES}
            wanted = ["uvi"]
            if what == "surface" and enc.surfaces[0].id == name:
                wanted += ["illuminance_lux"] + (["uvb_w_m2"] if enc.id in uvb_meter else [])
            for q in wanted:
                value, unit = _noisy(rng, total[q], q)
                meter = {"uvi": "uvi-meter-a", "uvb_w_m2": "uvb-meter-b",
                         "illuminance_lux": "lux-meter"}[q]
                rows.append(dict(date=day, enclosure=enc.id, lamp=single, position=name,
                                 quantity=q, value=value, unit=unit, meter=meter,
                                 note="all lamps on" if not single else ""))
        for j, (lamp, x, y, z) in enumerate(checks):
            k = len(spots) + j
            value, unit = _noisy(rng, factor[lamp] * per_lamp[lamp]["uvi"][k], "uvi")
            lz = next(lp.z_m for lp in enc.lamps if lp.id == lamp)
            rows.append(dict(date=day, enclosure=enc.id, lamp=lamp, x_m=x, y_m=y, z_m=z,
                             distance_m=round(lz - z, 3), quantity="uvi", value=value,
                             unit=unit, meter="uvi-meter-a",
                             note="lamp check on the axis, other lamps off"))
    return rows


def write_readings_csv(path: Path, rows: list[dict], title: str) -> None:
    """Write readings in the long format (see docs/site-format.md)."""
    columns = ["date", "enclosure", "lamp", "position", "x_m", "y_m", "z_m", "distance_m",
               "quantity", "value", "unit", "meter", "note"]
    out = io.StringIO()
    out.write(f"# {title}\n# DEMO DATA: synthesised from the site's lamp models.\n")
    writer = csv.writer(out, lineterminator="\n")
    writer.writerow(columns)
    for row in rows:
        writer.writerow([f"{v:g}" if isinstance(v, float) else str(v)
                         for v in (row.get(c, "") for c in columns)])
    path.write_text(out.getvalue(), encoding="utf-8")


def write_spectrum_csv(path: Path, wavelength_nm, irradiance_w_m2_nm, meta: dict) -> None:
    """Write a spectrum like an instrument export: metadata lines, then uW/cm^2/nm."""
    lines = [f"# {k}: {v}" for k, v in meta.items()]
    lines += ["Wavelength [nm],Irradiance [uW/cm^2/nm]"]
    lines += [f"{w:.1f},{e * 100.0:.5f}" for w, e in zip(wavelength_nm, irradiance_w_m2_nm,
                                                          strict=True)]
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def model_spectrum_file(path: Path, bands: list[dict], uvi: float, meta: dict, rng) -> None:
    """A 'measured' spectrum: band model at 1 nm, scaled to ``uvi``, with a little noise."""
    spec = bands_spectrum([Band(**b) for b in bands], path.stem)
    wl = np.arange(250.0, 800.0 + 0.5, 1.0)
    e = np.interp(wl, spec.wavelength_nm, spec.irradiance_w_m2_nm)
    e *= uvi / float(weighted_quantities(wl, e)["uvi"])
    noise = rng.normal(0.0, 2e-6, wl.size)  # dark noise of about 0.0002 uW/cm2/nm
    write_spectrum_csv(path, wl, np.clip(e + noise, 0.0, None), meta)


TUBE_BANDS = [dict(peak_nm=313, fwhm_nm=22, share=0.22, asymmetry=0.5),
              dict(peak_nm=352, fwhm_nm=40, share=0.48, asymmetry=0.6),
              dict(peak_nm=545, fwhm_nm=12, share=0.12),
              dict(peak_nm=612, fwhm_nm=14, share=0.10),
              dict(peak_nm=440, fwhm_nm=16, share=0.08)]
FLOOD_BANDS = [dict(peak_nm=312, fwhm_nm=22, share=0.06, asymmetry=0.5),
               dict(peak_nm=365, fwhm_nm=12, share=0.18),
               dict(peak_nm=405, fwhm_nm=8, share=0.10),
               dict(peak_nm=436, fwhm_nm=8, share=0.14),
               dict(peak_nm=546, fwhm_nm=8, share=0.22),
               dict(peak_nm=578, fwhm_nm=10, share=0.20),
               dict(peak_nm=620, fwhm_nm=60, share=0.10)]


def _load(root: Path) -> Site:
    records = SiteFile.model_validate(tomllib.loads((root / "site.toml").read_text("utf-8")))
    return Site(root=root, records=records)


def make_park(rng) -> None:
    """Spectra and three yearly audits of the park."""
    meta = {"Instrument": "portable array spectroradiometer (invented)",
            "Serial": "DEMO-0001", "Integration time": "120 ms", "Averages": "5",
            "Date": "2026-01-20", "Note": "DEMO DATA, synthesised"}
    model_spectrum_file(PARK / "spectra" / "t5-uvb-115cm_30cm_2026-01-20.csv", TUBE_BANDS,
                        4.2, {**meta, "Lamp": "UVB T5 fluorescent tube 115 cm, new",
                              "Distance": "30 cm below the middle, with reflector"}, rng)
    model_spectrum_file(PARK / "spectra" / "flood-uvb-100w_50cm_2026-01-20.csv", FLOOD_BANDS,
                        3.0, {**meta, "Lamp": "Self-ballasted UVB flood lamp 100 W, new",
                              "Distance": "50 cm on the axis"}, rng)
    site = _load(PARK)
    for day in site.records.site.audit_dates:
        rows = audit_rows(site, day, rng, fail_from={"rh-09": dt.date(2026, 1, 1)},
                          uvb_meter={"rh-03", "rh-05", "rh-10", "rh-11"})
        write_readings_csv(PARK / "readings" / f"audit-{day.isoformat()}.csv", rows,
                           f"Kestrel Moor Wildlife Park, yearly lighting audit {day}")
    # the decayed lamp of rh-05, measured at its basking mound on the 2026 audit
    day = dt.date(2026, 3, 10)
    place = site.enclosure("rh-05").lamps[0]
    left = remaining_output("tube", place.installed, [], day, 12.0)
    basking = site.enclosure("rh-05").surfaces[0]
    point = np.array([[basking.x_m + basking.width_m / 2, basking.y_m + basking.depth_m / 2,
                       basking.z_m]])
    uvi = float(evaluate_points(build_scene(site, "rh-05"), point, ("uvi",)).values["uvi"][0])
    model_spectrum_file(PARK / "spectra" / "rh-05_t8-tube_2026-03-10.csv",
                        [dict(peak_nm=313, fwhm_nm=22, share=0.12, asymmetry=0.5),
                         dict(peak_nm=352, fwhm_nm=40, share=0.48, asymmetry=0.6),
                         dict(peak_nm=545, fwhm_nm=12, share=0.18),
                         dict(peak_nm=612, fwhm_nm=14, share=0.14),
                         dict(peak_nm=440, fwhm_nm=16, share=0.08)], uvi * left,
                        {**meta, "Date": str(day), "Lamp": "rh-05 t8-tube (installed 2022)",
                         "Distance": "at the basking mound"}, rng)


def write_readings_xlsx(path: Path, rows: list[dict], title: str) -> None:
    """Write readings as a spreadsheet: a title row above the header, dates as dates."""
    from openpyxl import Workbook

    columns = ["date", "enclosure", "lamp", "position", "distance_m", "quantity", "value",
               "unit", "meter", "note"]
    book = Workbook()
    sheet = book.active
    sheet.title = "readings"
    sheet.append([f"# {title} (DEMO DATA)"])
    sheet.append(columns)
    for row in rows:
        sheet.append([row.get(c, "") for c in columns])
    book.save(path)


def make_client(rng) -> None:
    """Two audits of the consultant's client, one spreadsheet per audit."""
    site = _load(CLIENT)
    for day in site.records.site.audit_dates:
        rows = audit_rows(site, day, rng, fail_from={}, uvb_meter=set())
        rows = [{**r, "meter": "uvi-meter"} for r in rows if r["quantity"] == "uvi"]
        write_readings_xlsx(CLIENT / "readings" / f"visit-{day.isoformat()}.xlsx", rows,
                            f"Ashdown private collection, consultant's visit {day}")


def main() -> None:
    """Write every demo file."""
    rng = np.random.default_rng(20260310)
    make_park(rng)
    make_client(rng)


if __name__ == "__main__":
    main()
