"""Turn a loaded site's records into the physics objects: lamps, scene, schedules.

The site file (:mod:`audit_lib.site.schema`) describes products and places in the user's
terms; the physics modules work on their own records (:mod:`audit_lib.sources.lamps`,
:mod:`audit_lib.scene.maps`, :mod:`audit_lib.day.photoperiod`). This module is the one place that
translates between them, so the orchestrator (:mod:`audit_lib.pipeline.audit`) and the what-if panel
build the same scene from the same site.

Modelling choices stated here:

* A lamp's spectrum is its measured file when the site names one, otherwise the sum of its
  emission bands, each a line shape (:func:`audit_lib.sources.emitters.line_shape`) normalised to
  unit area and weighted by its share.
* A lamp given by a reference reading ("UVI 2.0 at 30 cm on the axis, new") is scaled so
  that the model reproduces that reading on its axis (tubes: below the middle).
* A screen sits 5 mm below the lowest lamp that names it and spans the whole enclosure
  (normal-incidence transmission; mesh: open-area fraction, :func:`scene.mesh_transmission`).
* Emitters of an LED array are numbered 1, 2, ... in layout order, then grid by grid
  (row by row); ``failed_emitters`` uses these numbers.
"""

from __future__ import annotations

import datetime as dt

import numpy as np

from audit_lib.day.photoperiod import NaturalDaySchedule, OnOffSchedule, SeasonalSchedule
from audit_lib.errors import InputError
from audit_lib.light.metrics import weighted_quantities
from audit_lib.light.spectra import Spectrum, read_spectrum, read_transmittance
from audit_lib.scene.maps import Enclosure, PlacedLamp, Screen, Surface, mesh_transmission
from audit_lib.sources import lamps
from audit_lib.sources.axis import scale_to_reading
from audit_lib.sources.emitters import (
    MODEL_WAVELENGTH_NM,
    EmitterType,
    PhosphorBand,
    flux_for_reading,
    line_shape,
)
from audit_lib.sources.lamps import EmitterPosition

#: Weighted-quantity key for each quantity a site reference reading may give.
REFERENCE_QUANTITIES = {"uvi": "uvi", "uvb_w_m2": "uvb_w_m2",
                        "illuminance_lux": "illuminance_lux", "irradiance_w_m2": "uva_w_m2"}
SCREEN_GAP_M = 0.005


def _reference(ref) -> tuple[str, float, float]:
    for key, quantity in REFERENCE_QUANTITIES.items():
        value = getattr(ref, key, None)
        if value is not None:
            return quantity, float(value), float(ref.distance_m)
    raise InputError("reference gives no quantity", field="reference")


def bands_spectrum(bands, name: str = ""):
    """Spectral shape from emission bands (unit area, shares as weights).

    Parameters
    ----------
    bands : sequence of site ``Band`` records
        Peak [nm], FWHM [nm], asymmetry [-], line shape and share [-] of each band.
    name : str
        Name of the spectrum.
    """
    if not bands:
        raise InputError("a modelled lamp needs emission bands or a spectrum file",
                         field=f"{name}.bands")
    wl = MODEL_WAVELENGTH_NM
    total = np.zeros_like(wl)
    for b in bands:
        curve = line_shape(wl, b.peak_nm, b.fwhm_nm, b.asymmetry, b.shape)
        total += b.share * curve / np.trapezoid(curve, wl)
    return Spectrum(wl, total / np.trapezoid(total, wl), name=name, source="modelled bands")


def model_spectrum(site, model):
    """The spectrum of a lamp model: its measured file if named, else its bands."""
    if getattr(model, "spectrum", None):
        return read_spectrum(site.path_of(model.spectrum))
    if getattr(model, "bands", None):
        return bands_spectrum(model.bands, model.name)
    return None


def _scaled_to(spectrum, quantity: str, value: float, name: str):

    unit = float(weighted_quantities(spectrum.wavelength_nm, spectrum.irradiance_w_m2_nm)[quantity])
    if unit <= 0:
        raise InputError(f"the spectrum of {name!r} gives no {quantity}; cannot scale to it",
                         field=f"{name}.reference")
    return Spectrum(spectrum.wavelength_nm, spectrum.irradiance_w_m2_nm * value / unit,
                    name=spectrum.name, source=spectrum.source)


def _emitter_type(record):

    bands = tuple(PhosphorBand(b.peak_nm, b.fwhm_nm, b.share, b.asymmetry, b.shape)
                  for b in record.phosphors)
    emitter = EmitterType(record.id, record.peak_nm, record.fwhm_nm, record.flux_w or 1.0,
                          asymmetry=record.asymmetry, shape=record.shape,
                          beam_angle_deg=record.beam_angle_deg, phosphor_bands=bands)
    if record.reference is not None:
        quantity, value, distance = _reference(record.reference)
        emitter = flux_for_reading(emitter, value, distance, quantity)
    return emitter


def _led_positions(model):

    places = [(p.emitter, p.x_m, p.y_m) for p in model.layout]
    for g in model.grids:
        for r in range(g.rows):
            for c in range(g.columns):
                places.append((g.emitter, g.x_m + (c - (g.columns - 1) / 2) * g.pitch_x_m,
                               g.y_m + (r - (g.rows - 1) / 2) * g.pitch_y_m))
    return tuple(EmitterPosition(t, x, y, name=f"{t}-{i}")
                 for i, (t, x, y) in enumerate(places, start=1))


def build_lamp(site, model):
    """Return the physics lamp (``lamps.LedArray`` etc.) for a site lamp model record."""
    if model.kind == "led_array":
        array = lamps.LedArray(model.name, tuple(_emitter_type(e) for e in model.emitters),
                               _led_positions(model))
        if model.reference is not None:  # one reading of the whole fitting on its axis
            array = scale_to_reading(array, *_reference(model.reference))
        return array
    spectrum = model_spectrum(site, model)
    if model.kind == "from_readings":
        counts = {q: sum(getattr(r, q) is not None for r in model.distance_readings)
                  for q in ("uvi", "uvb_w_m2", "illuminance_lux")}
        quantity = max(counts, key=counts.get)
        rows = [(r.distance_m, getattr(r, quantity)) for r in model.distance_readings
                if getattr(r, quantity) is not None]
        return lamps.MeasuredLamp(model.name, tuple(d for d, _ in rows),
                                  tuple(v for _, v in rows), quantity=quantity,
                                  spectrum=spectrum)
    quantity, value, distance = _reference(model.reference)
    spectrum = _scaled_to(spectrum, quantity, value, model.name)
    if model.kind == "tube":
        return lamps.TubeLamp(model.name, model.length_m, spectrum,
                              reference_distance_m=distance)
    return lamps.PointLamp(model.name, spectrum, reference_distance_m=distance,
                           beam_angle_deg=model.beam_angle_deg)


def failed_labels(site, enclosure_id: str) -> tuple[str, ...]:
    """Failure labels (``"<lamp id>/<emitter name>"``) of the emitters marked failed."""
    labels = []
    enclosure = site.enclosure(enclosure_id)
    for place in enclosure.lamps:
        if not place.failed_emitters:
            continue
        model = site.lamp_model(place.model)
        names = [p.name for p in _led_positions(model)] if model.kind == "led_array" else []
        for number in place.failed_emitters:
            if not 1 <= number <= len(names):
                raise InputError(f"lamp {place.id!r} has no emitter number {number}",
                                 field=f"enclosures.{enclosure_id}.lamps.{place.id}"
                                 ".failed_emitters", hint=f"emitters are numbered 1..{len(names)}")
            labels.append(f"{place.id}/{names[number - 1]}")
    return tuple(labels)


def _screen(record, z_m: float, site):

    if record.transmission is not None:
        return Screen(record.id, z_m, transmission=record.transmission, kind=record.kind)
    if record.kind == "mesh":
        return Screen(record.id, z_m, kind="mesh",
                      transmission=mesh_transmission(record.wire_diameter_m, record.pitch_m))
    wavelength_nm, transmittance = read_transmittance(site.path_of(record.transmission_spectrum))
    return Screen(record.id, z_m, wavelength_nm=tuple(wavelength_nm),
                  transmittance=tuple(transmittance), kind=record.kind)


def build_scene(site, enclosure_id: str, *, lamp_overrides=None, built=None):
    """Return the :class:`audit_lib.scene.maps.Enclosure` of one enclosure of a site.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_id : str
        Enclosure id.
    lamp_overrides : dict of str to dict, optional
        Per lamp id, fields of its placement to change (``x_m``, ``y_m``, ``z_m``,
        ``tilt_deg``, ``rotation_deg``): the what-if questions.
    built : dict of str to lamp, optional
        Lamp model id to its physics lamp, already built (used, and filled with the lamps
        built here): the what-if planner's cache, so a lamp is not rebuilt per placement.
    """
    record = site.enclosure(enclosure_id)
    overrides = lamp_overrides or {}
    built = {} if built is None else built
    placed = []
    for place in record.lamps:
        if place.model not in built:
            built[place.model] = build_lamp(site, site.lamp_model(place.model))
        where = {k: getattr(place, k) for k in ("x_m", "y_m", "z_m", "tilt_deg", "rotation_deg")}
        where.update(overrides.get(place.id, {}))
        placed.append(PlacedLamp(built[place.model], where["x_m"], where["y_m"], where["z_m"],
                                 azimuth_deg=where["rotation_deg"], tilt_deg=where["tilt_deg"],
                                 name=place.id))
    surfaces = [Surface(s.id, s.z_m, s.x_m, s.x_m + s.width_m, s.y_m, s.y_m + s.depth_m,
                        "basking" if s.kind == "basking" else "other") for s in record.surfaces]
    screens = []
    for screen in record.screens:
        heights = [p.z_m for p in placed if screen.id in _screens_of(record, p.name)]
        z = (min(heights) if heights else record.height_m) - SCREEN_GAP_M
        screens.append(_screen(screen, z, site))
    return Enclosure(record.id, record.width_m, record.depth_m, record.height_m,
                     lamps=tuple(placed), surfaces=tuple(surfaces), screens=tuple(screens))


def _screens_of(record, lamp_id: str) -> list[str]:
    return next((p.screens for p in record.lamps if p.id == lamp_id), [])


def _day_schedule(on, off, ramp_min, level, name):

    return OnOffSchedule(on=str(on)[:5], off=str(off)[:5], level=level, ramp_up_min=ramp_min,
                         ramp_down_min=ramp_min, name=name)


def build_schedule(site, record):
    """Return the :mod:`audit_lib.day.photoperiod` schedule for a site schedule record."""
    if record.kind == "natural":
        lat = record.latitude_deg if record.latitude_deg is not None else \
            site.records.site.latitude_deg
        return NaturalDaySchedule(latitude_deg=lat, level=record.dimming,
                                  ramp_up_min=record.ramp_minutes,
                                  ramp_down_min=record.ramp_minutes, name=record.id)
    base = None
    if record.on is not None and record.off is not None:
        base = _day_schedule(record.on, record.off, record.ramp_minutes, record.dimming,
                             record.id)
    if not record.periods:
        return base
    by_month = {m: base for m in range(1, 13)} if base is not None else {}
    for period in record.periods:
        day = _day_schedule(period.on, period.off, period.ramp_minutes, period.dimming, record.id)
        by_month.update({m: day for m in period.months})
    return SeasonalSchedule(by_month=by_month, name=record.id)


def lamp_schedule(site, place):
    """The schedule of one placed lamp (its named schedule, or daily hours around noon)."""
    if place.schedule is not None:
        return build_schedule(site, site.schedule(place.schedule))
    minutes = round(place.daily_hours * 60)
    start = 12 * 60 - minutes // 2
    end = (start + minutes) % (24 * 60)
    clock = f"{start // 60:02d}:{start % 60:02d}"
    return _day_schedule(clock, f"{end // 60:02d}:{end % 60:02d}", 0.0, 1.0, place.id)


def lamp_age_days(place, on: dt.date) -> int:
    """Days since a placed lamp was installed, on a date (0 if installed later)."""
    return max(0, (on - place.installed).days)
