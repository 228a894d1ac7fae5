"""The stages of an enclosure audit, each a thin call of the part that owns it.

Used by the audit (:mod:`audit_lib.pipeline.audit`), the what-if planner
(:mod:`audit_lib.pipeline.planner`) and their shared downstream
(:mod:`audit_lib.pipeline.findings`), where the choices these functions serve are described.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import replace

import numpy as np
import pandas as pd

from audit_lib.errors import InputError
from audit_lib.light.metrics import keeper_limit_s, spectrum_metrics
from audit_lib.light.spectra import Spectrum
from audit_lib.pipeline.assemble import model_spectrum
from audit_lib.pipeline.meter_corrections import correct_site_readings
from audit_lib.scene.failures import failure_scenarios, monte_carlo_failures
from audit_lib.scene.maps import evaluate_points, surface_grid
from audit_lib.sources.emitters import MODEL_WAVELENGTH_NM, spectral_flux
from audit_lib.sources.lamps import LedArray
from audit_lib.sources.safety import lamp_risk_group

#: Grid of the representative points of a surface in a time budget (ny, nx).
PLACE_SHAPE = (6, 6)


def only_lamp(scene, lamp):
    """The scene with one placed lamp only (its contribution alone)."""
    return scene if len(scene.lamps) == 1 and scene.lamps[0] is lamp else replace(
        scene, lamps=(lamp,))


def failed_of(failed, lamp_id):
    """The failure labels that belong to one lamp: the lamp itself or its emitters."""
    return tuple(f for f in failed if f == lamp_id or f.startswith(f"{lamp_id}/"))


def per_lamp_values(scene, points, failed, quantities=("uvi", "vitamin_d_w_m2")):
    """Per lamp id, the quantities at points (full output): {q: {lamp: (n,) array}}."""
    out = {q: {} for q in quantities}
    for lamp in scene.lamps:
        ev = evaluate_points(only_lamp(scene, lamp), points, quantities,
                             failed=failed_of(failed, lamp.id))
        for q in quantities:
            out[q][lamp.id] = ev.values[q]
    return out


def measured_uvi(site, enclosure_id, audit_date):
    """UV Index readings of the audit day per position, mismatch-corrected where possible.

    The correction (:mod:`audit_lib.pipeline.meter_corrections`) applies where the site gives the
    meter's spectral response; the raw mean stays beside the corrected one.
    """
    rows = site.readings_of(enclosure_id)
    if rows.empty:
        return pd.DataFrame({"position": pd.Series(dtype=str),
                             "measured_uvi": pd.Series(dtype=float),
                             "measured_uvi_raw": pd.Series(dtype=float)})
    day = rows[(pd.to_datetime(rows["date"]).dt.date == audit_date) & (rows["quantity"] == "uvi")
               & (rows["position"].astype(str) != "")].copy()
    day["raw"] = day["value_si"]
    if any(m.spectral_response for m in site.records.meters) and len(day):

        corrected = correct_site_readings(site).loc[day.index, "value_si_corrected"]
        day["value_si"] = corrected.fillna(day["raw"])
    means = day.groupby("position", as_index=False)[["value_si", "raw"]].mean()
    return means.rename(columns={"value_si": "measured_uvi", "raw": "measured_uvi_raw"})


def measuring_positions(record, maps, measured_at) -> pd.DataFrame:
    """Named positions, plus surfaces measured by name (at their brightest cell)."""
    rows = [{"position": p.id, "x_m": p.x_m, "y_m": p.y_m, "z_m": p.z_m}
            for p in record.positions]
    named = {r["position"] for r in rows}
    for name in measured_at:
        if name in named or name not in maps:
            continue
        m = maps[name]
        iy, ix = np.unravel_index(np.argmax(m.values["uvi"]), m.values["uvi"].shape)
        rows.append({"position": name, "x_m": float(m.x_m[ix]), "y_m": float(m.y_m[iy]),
                     "z_m": m.surface.z_m})
    return pd.DataFrame(rows, columns=["position", "x_m", "y_m", "z_m"])


#: Readings below this UV Index are not used to scale the model: a handheld meter shows
#: the index in steps of 0.1, so a low reading carries a large rounding error (common
#: practice: keep rounding error at or below 10 %) [-].
CALIBRATION_MIN_UVI = 0.5


def calibration_ratios(points: pd.DataFrame) -> np.ndarray:
    """Measured / modelled UV Index at the positions the calibration uses [-].

    Positions reading at least :data:`CALIBRATION_MIN_UVI`; if none does, every position
    with a reading above zero (empty when there is no usable reading).
    """
    ok = points.dropna(subset=["measured_uvi"])
    ok = ok[(ok["uvi"] > 0) & (ok["measured_uvi"] > 0)]
    strong = ok[ok["measured_uvi"] >= CALIBRATION_MIN_UVI]
    ok = strong if len(strong) else ok
    return (ok["measured_uvi"] / ok["uvi"]).to_numpy(dtype=float)


def calibration_factor(points: pd.DataFrame) -> float:
    """Median of :func:`calibration_ratios` [-]; 1.0 (no scaling) without a usable reading."""
    ratios = calibration_ratios(points)
    return float(np.median(ratios)) if ratios.size else 1.0


def scale_maps(maps, factor):
    """Every quantity of every map times one factor (all are linear in lamp output)."""
    if factor == 1.0:
        return maps
    return {name: replace(m, values={q: v * factor for q, v in m.values.items()})
            for name, m in maps.items()}


def budget_places(record, scene):
    """Representative points of each place of the time budget: {name: (n, 3) points}."""
    places = {}
    for s in scene.all_surfaces:
        places[s.name] = surface_grid(s, shape=PLACE_SHAPE)[2]
    for p in record.positions:
        places[p.id] = np.array([[p.x_m, p.y_m, p.z_m]])
    return places


def lamp_spectra(site, record, scene):
    """Spectrum metrics per lamp model (LED arrays: flux-weighted sum of emitter types)."""
    spectra, metrics = {}, {}
    built = {p.name: p.lamp for p in scene.lamps}
    for place in record.lamps:
        if place.model in spectra:
            continue
        model, lamp = site.lamp_model(place.model), built[place.id]
        spectrum = model_spectrum(site, model)
        if spectrum is None and isinstance(lamp, LedArray):
            counts = {}
            for e in lamp.emitters:
                counts[e.type] = counts.get(e.type, 0) + 1
            total = np.zeros_like(MODEL_WAVELENGTH_NM)
            for t in lamp.emitter_types:
                total += counts.get(t.name, 0) * spectral_flux(t)[1]
            spectrum = Spectrum(MODEL_WAVELENGTH_NM, total, name=model.name,
                                source="modelled emitters")
        if spectrum is not None:
            spectra[place.model] = spectrum
            metrics[place.model] = {  # risk group: lamp model at the IEC 62471 distance
                **spectrum_metrics(spectrum), "risk_group_missing": None,
                **lamp_risk_group(lamp, general_lighting=model.general_lighting)}
    return spectra, metrics


def keeper_limit(scene, record, failed):
    """Shortest keeper limit over lamps, at the working distance below each lamp [s]."""
    distance = record.keeper_working_distance_m
    if not distance or not scene.lamps:
        return None
    limits = []
    for lamp in scene.lamps:
        point = np.array([[lamp.x_m, lamp.y_m, lamp.z_m - distance]])
        ev = evaluate_points(only_lamp(scene, lamp), point, ("actinic_w_m2",),
                             failed=failed_of(failed, lamp.id))
        actinic = float(ev.values["actinic_w_m2"][0])
        if math.isfinite(actinic):
            limits.append(float(keeper_limit_s(actinic)))
    return min(limits) if limits else None


def failure_table(scene, surface, failed, uvi_range, calibration, probability, seed=0):
    """Deterministic and Monte Carlo failure scenarios on the basking surface."""
    if not any(isinstance(p.lamp, LedArray) for p in scene.lamps):
        return pd.DataFrame(), None
    lo, hi = (v / calibration for v in uvi_range)
    scenarios = failure_scenarios(scene, surface, out=failed, worst=1, uvi_range=(lo, hi),
                                  shape=(12, 12))
    scenarios += failure_scenarios(scene, surface, worst=2, uvi_range=(lo, hi),
                                   shape=(12, 12))[1:]
    rows = [{"scenario": s.name, "emitters_out": ", ".join(s.failed) or "none",
             "max_uvi": calibration * s.statistics.maximum["uvi"],
             "mean_uvi": calibration * s.statistics.mean["uvi"],
             "share_in_range": s.statistics.share_in_uvi_range} for s in scenarios]
    mc = monte_carlo_failures(scene, surface, (lo, hi), probability, n_trials=2000,
                              seed=seed, shape=(12, 12))
    # shares are the same for the calibrated range; label the study with the zone's range
    return pd.DataFrame(rows), replace(mc, uvi_range=tuple(uvi_range))


def sun_place(site, species, day):
    """Where the sun's clear-sky reference day is drawn.

    The species' native latitude at local solar time (longitude 0, UTC) when the species
    table gives one (the highest zone's species first), else the site at its local clock time.

    Returns
    -------
    (latitude_deg, longitude_deg, utc_offset_h, place) : (float, float, float, str)
    """
    from zoneinfo import ZoneInfo

    native = next((s.native_latitude_deg for s in sorted(species, key=lambda s: -s.zone)
                   if s.native_latitude_deg is not None), None)
    if native is not None:
        return native, 0.0, 0.0, "the species' native range"
    info = site.records.site
    try:
        noon = dt.datetime.combine(day, dt.time(12), tzinfo=ZoneInfo(info.time_zone))
    except (KeyError, ValueError):
        raise InputError(f"unknown time zone {info.time_zone!r}", field="site.time_zone",
                         hint="use an IANA name such as Europe/London") from None
    return (info.latitude_deg, info.longitude_deg,
            noon.utcoffset().total_seconds() / 3600.0, "the site")
