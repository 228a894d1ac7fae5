"""The orchestrator: one enclosure of a loaded site in, one :class:`EnclosureAudit` out.

:func:`audit_enclosure` chains the stages of the design's data flow by calling the part
that owns each one: the scene from the site records (:mod:`audit_lib.pipeline.assemble`), maps and
point values (:mod:`audit_lib.scene.maps`), daily and monthly doses (:mod:`audit_lib.day.dose`,
:mod:`audit_lib.day.photoperiod`), the sun's clear-sky curve (:mod:`audit_lib.light.sun`),
checks, verdicts and actions (:mod:`audit_lib.judge.targets`, :mod:`audit_lib.judge.verdicts`),
failure scenarios (:mod:`audit_lib.scene.failures`), lamp decay and replacement forecasts
(:mod:`audit_lib.history.decay`) and spectrum metrics (:mod:`audit_lib.light.metrics`). It computes
nothing of its own beyond choosing which figure feeds which check:

* The model is calibrated to the audit's own UV Index readings when there are any: every map
  quantity is scaled by the median ratio measured / modelled at the named positions (all
  quantities are linear in lamp output, so one factor per enclosure keeps their ratios). The
  factor is reported; without readings the model is used as given (lamps as new).
* A reading named after a surface (not a named position) is compared with the model at
  that surface's brightest cell: keepers measure the hottest spot (common practice).
* Basking maximum: highest UV Index over the basking surfaces (the floor if there are none).
  Refuge: floor share below the refuge threshold. Animal mean: the time budget's
  share-weighted mean UV Index while active, each place represented by its surface mean
  (or its point for named positions).
"""

from __future__ import annotations

import datetime as dt
import math
import warnings
from dataclasses import dataclass, field, replace

import numpy as np
import pandas as pd

from audit_lib import __version__
from audit_lib.day.dose import TimeBudget, integrate_daily_dose, integrate_time_budget
from audit_lib.day.dose import monthly_table as dose_monthly_table
from audit_lib.day.photoperiod import daily_profiles, lit_hours_of_table
from audit_lib.errors import AuditError, AuditWarning, InputError
from audit_lib.judge import targets
from audit_lib.judge.verdicts import ATTENTION, MEETS, assess_enclosure
from audit_lib.light import metrics
from audit_lib.light.sun import clear_sky_daily_dose_sed, clear_sky_uvi_day
from audit_lib.pipeline import steps
from audit_lib.pipeline.assemble import build_scene, failed_labels, lamp_schedule
from audit_lib.scene.maps import compute_maps, point_values, statistics_table
from audit_lib.site.checks import calibration_warnings
from audit_lib.site.folder import load_site

#: Grid spacing of the maps unless asked otherwise [m].
DEFAULT_SPACING_M = 0.02


@dataclass
class EnclosureAudit:
    """Everything one enclosure's report shows (see :func:`audit_enclosure`).

    Attributes
    ----------
    site_name, enclosure_id, enclosure_name : str
        What was audited.
    audit_date : datetime.date
        The audit day (readings of that day calibrate the model).
    auditor, organisation, client : str
        From the site file.
    logo_path : str or None
        Absolute path of the site's logo.
    species : list of SpeciesTarget
        The enclosure's species with their zones.
    zone : Zone or None
        Target ranges of the highest zone among the species.
    scene : audit_lib.scene.maps.Enclosure
        The modelled enclosure.
    calibration : float
        Model scale factor from the readings [-] (1 when there were none).
    maps : dict of str to SurfaceMap
        Maps per surface (after calibration and with failed emitters out).
    surface_stats : pandas.DataFrame
        :func:`audit_lib.scene.maps.statistics_table` of the maps.
    points : pandas.DataFrame
        Modelled values at the named positions with the audit's readings beside them.
    daily : pandas.DataFrame
        UV Index through the day at the basking maximum (``enclosure_uvi``) and the sun's
        clear-sky UV Index at the site (``sun_uvi``), index ``time_h``.
    basking_dose, animal_dose : DailyDose or None
        Daily doses at the basking maximum and for the animal's time budget.
    monthly : pandas.DataFrame
        Month-by-month figures at the basking maximum (:func:`audit_lib.day.dose.monthly_table`).
    natural : dict
        The sun's clear-sky reference day: latitude, place ("the species' native range" when a
        species gives its native latitude, else "the site"), peak UV Index, daily SED.
    verdicts : list of Verdict
        One per species.
    verdict, reason : str
        Overall state and its reason (the worst of the species' verdicts).
    failures : pandas.DataFrame
        LED emitter failure scenarios (empty when there are no LED arrays).
    failure_study : MonteCarloResult or None
        Random emitter failures on the basking surface (:mod:`audit_lib.scene.failures`).
    lamps : pandas.DataFrame
        Lamp ages, decay fits and replacement forecasts.
    decays : list of LampDecay
        Per lamp with readings: points, fit and forecast (:func:`decay.analyse_lamp_decay`).
    spectra : dict of str to dict
        Lamp model id to :func:`audit_lib.light.metrics.spectrum_metrics`.
    lamp_spectra : dict of str to Spectrum
        Lamp model id to its spectrum (shape; absolute where the model gives it).
    notes : list of str
        Caveats the report must show.
    provenance : dict
        What the figures rest on (files, versions, settings).
    """

    site_name: str
    enclosure_id: str
    enclosure_name: str
    audit_date: dt.date
    auditor: str = ""
    organisation: str = ""
    client: str = ""
    logo_path: str | None = None
    species: list = field(default_factory=list)
    zone: object = None
    scene: object = None
    calibration: float = 1.0
    maps: dict = field(default_factory=dict)
    surface_stats: pd.DataFrame | None = None
    points: pd.DataFrame | None = None
    daily: pd.DataFrame | None = None
    basking_dose: object = None
    animal_dose: object = None
    monthly: pd.DataFrame | None = None
    natural: dict = field(default_factory=dict)
    verdicts: list = field(default_factory=list)
    verdict: str = ""
    reason: str = ""
    failures: pd.DataFrame | None = None
    failure_study: object = None
    lamps: pd.DataFrame | None = None
    decays: list = field(default_factory=list)
    spectra: dict = field(default_factory=dict)
    lamp_spectra: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)

    @property
    def checks(self) -> list:
        """Every check of every species' verdict (species named in the check's name)."""
        many = len(self.verdicts) > 1
        out = []
        for v in self.verdicts:
            for c in v.checks:
                out.append(replace(c, name=f"{c.name} ({v.species})") if many else c)
        return out

    @property
    def actions(self) -> list:
        """Recommended actions of every verdict, without repeats."""
        seen, out = set(), []
        for v in self.verdicts:
            for a in v.actions:
                if a.text not in seen:
                    seen.add(a.text)
                    out.append(a)
        return out


def choose_audit_date(site, audit_date=None) -> dt.date:
    """The audit day: the one given, else the site's latest audit date, else its latest reading.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    audit_date : str or datetime.date, optional
        ISO date or date.
    """
    if audit_date:
        try:
            return audit_date if isinstance(audit_date, dt.date) else \
                dt.date.fromisoformat(str(audit_date))
        except ValueError:
            raise InputError(f"audit date {audit_date!r} is not a date", field="audit_date",
                             hint="write it as YYYY-MM-DD") from None
    dates = list(site.records.site.audit_dates)
    if dates:
        return max(dates)
    if len(site.readings):
        return pd.Timestamp(site.readings["date"].max()).date()
    return dt.date.today()


def open_enclosure(site_dir, enclosure_id: str = "", *, audit_date: str = "",
                   spacing_m: float = DEFAULT_SPACING_M,
                   emitter_failure_probability: float = 0.05):
    """Check a workbook's parameters and load its site: returns ``(site, enclosure_id)``.

    Parameters
    ----------
    site_dir : str or PathLike
        The site folder.
    enclosure_id : str
        Enclosure id; empty for the site's first enclosure.
    audit_date : str
        ISO date or empty.
    spacing_m : float
        Map grid spacing, 0.002-0.2 [m].
    emitter_failure_probability : float
        0-1 [-].

    Raises
    ------
    InputError
        A parameter is out of range or the enclosure does not exist.
    """
    if not 0.002 <= float(spacing_m) <= 0.2:
        raise InputError(f"map spacing {spacing_m!r} m is outside 0.002-0.2 m",
                         field="map_spacing_m", hint="0.02 m suits most enclosures")
    if not 0.0 <= float(emitter_failure_probability) <= 1.0:
        raise InputError(f"probability {emitter_failure_probability!r} is outside 0-1",
                         field="emitter_failure_probability")
    site = load_site(site_dir)
    choose_audit_date(site, audit_date or None)
    ids = [e.id for e in site.records.enclosures]
    if not ids:
        raise InputError("the site has no enclosures", path=site_dir, field="enclosures")
    enclosure_id = enclosure_id or ids[0]
    if enclosure_id not in ids:
        raise InputError(f"no enclosure {enclosure_id!r} in the site", field="enclosure_id",
                         hint="enclosures: " + ", ".join(ids))
    return site, enclosure_id


def audit_enclosure(site, enclosure_id: str, *, audit_date=None,
                    spacing_m: float = DEFAULT_SPACING_M,
                    emitter_failure_probability: float = 0.05,
                    with_failures: bool = True) -> EnclosureAudit:
    """Audit one enclosure of a loaded site; library warnings become the record's notes.

    See :func:`_audit_enclosure` for the parameters.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", AuditWarning)
        audit = _audit_enclosure(site, enclosure_id, audit_date=audit_date,
                                 spacing_m=spacing_m,
                                 emitter_failure_probability=emitter_failure_probability,
                                 with_failures=with_failures)
    for w in caught:
        text = str(w.message)
        if not issubclass(w.category, AuditWarning):
            warnings.showwarning(w.message, w.category, w.filename, w.lineno)
        elif text not in audit.notes:
            audit.notes.append(text)
    return audit


def _audit_enclosure(site, enclosure_id: str, *, audit_date=None,
                     spacing_m: float = DEFAULT_SPACING_M,
                     emitter_failure_probability: float = 0.05,
                     with_failures: bool = True) -> EnclosureAudit:
    """Audit one enclosure of a loaded site.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded, validated site (:func:`audit_lib.site.folder.load_site`).
    enclosure_id : str
        The enclosure's id.
    audit_date : str or datetime.date, optional
        Audit day (default :func:`choose_audit_date`).
    spacing_m : float
        Map grid spacing [m].
    emitter_failure_probability : float
        Probability that one LED emitter is out at the next audit, for the Monte Carlo
        study; an assumption to set per audit, not a published figure [-].
    with_failures : bool
        Compute the LED failure scenarios (the site overview leaves them out).

    Returns
    -------
    EnclosureAudit
    """
    record = site.enclosure(enclosure_id)
    info = site.records.site
    day = choose_audit_date(site, audit_date)
    known = targets.species_targets(site.records.species)
    species = [known[s] for s in record.species if s in known]
    zones = targets.read_zone_table()
    zone = zones[max(s.zone for s in species)] if species else None
    notes = [f"Species {s!r} is in neither the site's nor the library's species table."
             for s in record.species if s not in known]
    notes += [text[0].upper() + text[1:] + "." for text in
              calibration_warnings(site.readings_of(enclosure_id), site.records)]
    max_range = (zone.max_uvi_low, zone.max_uvi_high) if zone else None

    scene = build_scene(site, enclosure_id)
    failed = failed_labels(site, enclosure_id)
    raw_maps = compute_maps(scene, spacing_m=spacing_m, failed=failed)
    measured = steps.measured_uvi(site, enclosure_id, day)
    positions = steps.measuring_positions(record, raw_maps, measured["position"])
    points = point_values(scene, positions) if len(positions) else positions
    points = points.merge(measured, on="position", how="left") \
        if len(points) else points.assign(measured_uvi=pd.Series(dtype=float))
    calibration = steps.calibration_factor(points) if len(points) else 1.0
    if len(points):
        points["modelled_uvi"] = points["uvi"] * calibration
    notes.append(f"Model scaled by {calibration:.2f} to match the UV Index readings of {day}."
                 if calibration != 1.0 else
                 "No UV Index readings at named positions on the audit day: the model shows "
                 "the lamps at their rated output (as new).")
    maps = steps.scale_maps(raw_maps, calibration)
    stats = statistics_table(maps, uvi_range=max_range, refuge_below_uvi=targets.REFUGE_UVI_MAX)

    basking = [s.name for s in scene.all_surfaces if s.kind == "basking"] or ["floor"]
    peak_surface = max(basking, key=lambda n: float(maps[n].values["uvi"].max()))
    peak_map = maps[peak_surface]
    iy, ix = np.unravel_index(np.argmax(peak_map.values["uvi"]), peak_map.values["uvi"].shape)
    peak_point = np.array([peak_map.x_m[ix], peak_map.y_m[iy], peak_map.surface.z_m])
    basking_max = float(peak_map.values["uvi"].max())
    refuge_share = float(np.mean(maps["floor"].values["uvi"] <= targets.REFUGE_UVI_MAX))

    sun_lat, sun_lon, sun_offset, sun_place = steps.sun_place(site, species, day)
    schedules = {p.id: lamp_schedule(site, p) for p in record.lamps}
    profiles = daily_profiles(schedules, day) if schedules else None
    at_peak = steps.per_lamp_values(scene, peak_point[None, :], failed)
    uvi_peak = {k: calibration * float(v[0]) for k, v in at_peak["uvi"].items()}
    vitd_peak = {k: calibration * float(v[0]) for k, v in at_peak["vitamin_d_w_m2"].items()}
    basking_dose = animal = monthly = None
    light_hours = mean_uvi = None
    if profiles is not None:
        basking_dose = integrate_daily_dose(uvi_peak, profiles, vitamin_d_w_m2_full=vitd_peak,
                                            uvi_range=max_range)
        light_hours = lit_hours_of_table(profiles)
        monthly = dose_monthly_table(uvi_peak, schedules, day.year,
                                     vitamin_d_w_m2_full=vitd_peak, uvi_range=max_range,
                                     reference_latitude_deg=sun_lat)
        if record.time_budget:
            places = steps.budget_places(record, scene)
            unknown = [k for k in record.time_budget if k not in places]
            if unknown:
                notes.append(f"Time budget place(s) {unknown} are not surfaces or positions; "
                             "the animal's mean UV Index was not computed.")
            else:
                by_place, vitd_place = {}, {}
                for name in record.time_budget:
                    per = steps.per_lamp_values(scene, places[name], failed)
                    by_place[name] = {k: calibration * float(v.mean())
                                      for k, v in per["uvi"].items()}
                    vitd_place[name] = {k: calibration * float(v.mean())
                                        for k, v in per["vitamin_d_w_m2"].items()}
                budget = TimeBudget(shares=dict(record.time_budget))
                mean_range = (zone.mean_uvi_low, zone.mean_uvi_high) if zone else None
                animal, _ = integrate_time_budget(budget, by_place, profiles,
                                                  vitamin_d_by_position=vitd_place,
                                                  uvi_range=mean_range)
                mean_uvi = float(animal.mean_uvi_exposed)

    sun = clear_sky_uvi_day(sun_lat, sun_lon, day, utc_offset_h=sun_offset, step_s=600.0)
    daily = pd.DataFrame({"time_h": sun["time_h"].to_numpy(), "sun_uvi": sun["uvi"].to_numpy()})
    if profiles is not None:
        lamp_uvi = sum(profiles[k].to_numpy() * v for k, v in uvi_peak.items())
        daily["enclosure_uvi"] = np.interp(daily["time_h"], profiles.index.to_numpy(),
                                           lamp_uvi)
    daily = daily.set_index("time_h")
    natural = {"latitude_deg": sun_lat, "place": sun_place, "date": day,
               "peak_uvi": float(sun["uvi"].max()),
               "daily_sed": float(clear_sky_daily_dose_sed(sun_lat, day))}

    lamp_spectra, spectra = steps.lamp_spectra(site, record, scene)
    sun_ref = metrics.sun_reference()
    short = [m["short_uvb_fraction"] for m in spectra.values()
             if m.get("uvb_w_m2", 0) > 0 and math.isfinite(m.get("short_uvb_fraction", math.nan))]
    keeper = steps.keeper_limit(scene, record, failed)
    lamps, decays = steps.lamp_table(site, record, day, zone.max_uvi_low if zone else math.nan)
    replace_by = None
    if lamps is not None and len(lamps) and lamps["replace_by"].notna().any():
        replace_by = pd.Timestamp(lamps["replace_by"].dropna().min()).date()
    main = max(scene.lamps, key=lambda p: uvi_peak.get(p.id, 0.0)) if scene.lamps else None
    screens = [s.transmission for s in scene.screens if s.transmission is not None]
    action_inputs = dict(
        current_height_m=float(main.z_m - peak_point[2]) if main else None,
        height_for_uvi=steps.height_for_uvi(scene, main, peak_point, failed, calibration)
        if main else None,
        screen_transmission=min(screens) if screens else None,
        floor_area_m2=record.width_m * record.depth_m, replacement_date=replace_by,
        audit_date=day, lamp=main.id if main else "")
    verdicts = [assess_enclosure(
        enclosure_id, s, zones[s.zone], basking_max_uvi=basking_max, mean_uvi=mean_uvi,
        refuge_share=refuge_share, light_hours=light_hours,
        short_uvb_fraction=max(short) if short else None,
        sun_short_uvb_fraction=sun_ref["short_uvb_fraction"], keeper_limit_s=keeper,
        working_distance_m=record.keeper_working_distance_m, **action_inputs)
        for s in species]
    states = [v.state for v in verdicts]
    if ATTENTION in states:
        verdict = ATTENTION
    elif states and all(s == MEETS for s in states):
        verdict = MEETS
    else:
        verdict = targets.NO_DATA
    reason = " ".join(v.reason for v in verdicts) or "No species with a known zone is assigned."
    for v in verdicts:
        notes += [n for n in v.notes if n not in notes]

    failures, monte_carlo = (pd.DataFrame(), None)
    if max_range and with_failures:
        failures, monte_carlo = steps.failure_table(scene, peak_surface, failed, max_range,
                                               calibration, emitter_failure_probability)
    if monte_carlo is not None:
        notes.append(
            f"Emitter failures: with each emitter out with an assumed probability of "
            f"{emitter_failure_probability:.0%}, {monte_carlo.probability_below:.0%} of 2000 "
            f"random trials leave less than {monte_carlo.coverage_threshold:.0%} of "
            f"{peak_surface!r} inside the maximum UV Index range.")

    return EnclosureAudit(
        site_name=site.name, enclosure_id=enclosure_id, enclosure_name=record.name,
        audit_date=day, auditor=info.auditor, organisation=info.organisation,
        client=info.client, logo_path=str(site.path_of(info.logo)) if info.logo else None,
        species=species, zone=zone, scene=scene, calibration=calibration, maps=maps,
        surface_stats=stats, points=points, daily=daily, basking_dose=basking_dose,
        animal_dose=animal, monthly=monthly, natural=natural, verdicts=verdicts,
        verdict=verdict, reason=reason, failures=failures, failure_study=monte_carlo,
        lamps=lamps, decays=decays, spectra=spectra,
        lamp_spectra=lamp_spectra, notes=notes,
        provenance=_provenance(site, enclosure_id, spacing_m, day))


def _provenance(site, enclosure_id, spacing_m, day) -> dict:
    import hashlib

    files = sorted({str(f) for f in site.readings_of(enclosure_id)["source_file"]}) \
        if len(site.readings) else []
    digest = hashlib.sha256((site.root / "site.toml").read_bytes()).hexdigest()[:12]
    return {"library_version": __version__, "site_file": f"site.toml (sha256 {digest})",
            "readings_files": ", ".join(files) or "none", "audit_date": day.isoformat(),
            "map_spacing_m": spacing_m,
            "targets": "Ferguson zones (data/ferguson_zones.csv), species table "
                       "(data/species_demo.csv) with the site's own species"}


@dataclass
class SiteAudit:
    """Every enclosure of a site audited for the overview (see :func:`audit_site`).

    Attributes
    ----------
    site_name : str
        The site.
    audit_date : datetime.date
        The audit day.
    audits : list of EnclosureAudit
        The enclosures that could be audited, in site order.
    errors : dict of str to str
        Enclosure id to the error that stopped its audit.
    auditor, organisation, client, logo_path : str
        From the site file.
    """

    site_name: str
    audit_date: dt.date
    audits: list = field(default_factory=list)
    errors: dict = field(default_factory=dict)
    auditor: str = ""
    organisation: str = ""
    client: str = ""
    logo_path: str | None = None


def audit_site(site, *, audit_date=None, spacing_m: float = 0.04) -> SiteAudit:
    """Audit every enclosure of a site without failure scenarios; errors are kept per enclosure.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    audit_date : str or datetime.date, optional
        Audit day (default :func:`choose_audit_date`).
    spacing_m : float
        Map grid spacing [m] (coarser than a single report's by default).
    """
    day = choose_audit_date(site, audit_date)
    info = site.records.site
    result = SiteAudit(site.name, day, auditor=info.auditor, organisation=info.organisation,
                       client=info.client,
                       logo_path=str(site.path_of(info.logo)) if info.logo else None)
    for record in site.records.enclosures:
        try:
            result.audits.append(audit_enclosure(site, record.id, audit_date=day,
                                                 spacing_m=spacing_m, with_failures=False))
        except (AuditError, ValueError, ArithmeticError) as exc:
            result.errors[record.id] = f"{type(exc).__name__}: {exc}"
    return result
