"""The orchestrator: one enclosure of a loaded site in, one :class:`EnclosureAudit` out.

:func:`audit_enclosure` chains the stages of the design's data flow by calling the part
that owns each one: the scene from the site records (:mod:`audit_lib.pipeline.assemble`), maps and
point values (:mod:`audit_lib.scene.maps`), daily and monthly doses (:mod:`audit_lib.day.dose`,
:mod:`audit_lib.day.photoperiod`), the sun's clear-sky curve (:mod:`audit_lib.light.sun`),
checks, verdicts and actions (:mod:`audit_lib.judge.targets`, :mod:`audit_lib.judge.verdicts`),
failure scenarios (:mod:`audit_lib.scene.failures`), lamp decay and replacement forecasts
(:mod:`audit_lib.history.decay`) and spectrum metrics (:mod:`audit_lib.light.metrics`).
Everything after the maps (basking maximum, refuge, the day, the time budget, keeper limit,
checks, verdict and actions) is the downstream it shares with the what-if planner,
:func:`audit_lib.pipeline.findings.find_figures`. Its own choices:

* The model is calibrated to the audit's own UV Index readings when there are any: every map
  quantity is scaled by the median ratio measured / modelled at the named positions (all
  quantities are linear in lamp output, so one factor per enclosure keeps their ratios). The
  factor is reported; without readings the model is used as given (lamps as new).
* A reading named after a surface (not a named position) is compared with the model at
  that surface's brightest cell: keepers measure the hottest spot (common practice).
* Lamp ages and replacement dates come from :func:`audit_lib.pipeline.forecast.lamp_forecasts`
  (readings corrected for meter spectral mismatch where the site gives a response), the
  forecast ``light-audit forecast`` prints.
"""

from __future__ import annotations

import datetime as dt
import warnings
import weakref
from dataclasses import dataclass, field
from typing import NamedTuple

import numpy as np
import pandas as pd

from audit_lib import __version__
from audit_lib.day.dose import monthly_table as dose_monthly_table
from audit_lib.day.photoperiod import daily_profiles
from audit_lib.errors import InputError
from audit_lib.judge import targets
from audit_lib.light.sun import clear_sky_daily_dose_sed, clear_sky_uvi_day
from audit_lib.pipeline import steps
from audit_lib.pipeline.assemble import build_scene, failed_labels, lamp_schedule
from audit_lib.pipeline.findings import Findings, collect_notes, find_figures
from audit_lib.pipeline.forecast import lamp_forecasts, site_lamp_installs
from audit_lib.pipeline.uncertainty import audit_uncertainty
from audit_lib.scene.maps import compute_maps, point_values, statistics_table
from audit_lib.site.checks import calibration_warnings
from audit_lib.site.dates import parse_date
from audit_lib.site.folder import load_site
from audit_lib.site.template import placeholder_notes

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
    findings : audit_lib.pipeline.findings.Findings
        The shared downstream's figures, checks, verdicts and actions; ``species``,
        ``zone``, ``verdicts``, ``verdict``, ``reason``, ``checks``, ``actions``,
        ``basking_dose`` and ``animal_dose`` read from it.
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
    monthly : pandas.DataFrame
        Month-by-month figures at the basking maximum (:func:`audit_lib.day.dose.monthly_table`).
    natural : dict
        The sun's clear-sky reference day: latitude, place ("the species' native range" when a
        species gives its native latitude, else "the site"), peak UV Index, daily SED.
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
        Caveats the report must show (the audit's own, the findings' and the library's
        warnings, collected by :func:`audit_lib.pipeline.findings.collect_notes`).
    provenance : dict
        What the figures rest on (files, versions, settings).
    plan : audit_lib.pipeline.plan.Plan or None
        The changes that bring every check within range (set by
        :func:`audit_lib.pipeline.plan.audit_with_plan`; None when not planned).
    """

    site_name: str
    enclosure_id: str
    enclosure_name: str
    audit_date: dt.date
    auditor: str = ""
    organisation: str = ""
    client: str = ""
    logo_path: str | None = None
    findings: Findings | None = None
    scene: object = None
    calibration: float = 1.0
    maps: dict = field(default_factory=dict)
    surface_stats: pd.DataFrame | None = None
    points: pd.DataFrame | None = None
    daily: pd.DataFrame | None = None
    monthly: pd.DataFrame | None = None
    natural: dict = field(default_factory=dict)
    failures: pd.DataFrame | None = None
    failure_study: object = None
    lamps: pd.DataFrame | None = None
    decays: list = field(default_factory=list)
    spectra: dict = field(default_factory=dict)
    lamp_spectra: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)
    provenance: dict = field(default_factory=dict)
    plan: object = None

    species = property(lambda self: self.findings.species, doc="Species judged.")
    zone = property(lambda self: self.findings.zone, doc="Zone of the highest species.")
    verdicts = property(lambda self: self.findings.verdicts, doc="One verdict per species.")
    verdict = property(lambda self: self.findings.verdict, doc="Overall state.")
    reason = property(lambda self: self.findings.reason, doc="Reason of the overall state.")
    checks = property(lambda self: self.findings.checks, doc="Every check of every verdict.")
    actions = property(lambda self: self.findings.actions, doc="Actions, without repeats.")
    recommendation = property(lambda self: self.findings.recommendation,
                              doc="The recommendation that follows the checks.")
    basking_dose = property(lambda self: self.findings.basking_dose,
                            doc="Daily dose at the basking maximum.")
    animal_dose = property(lambda self: self.findings.animal_dose,
                           doc="Daily dose of the animal's time budget.")


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
        return parse_date(audit_date, field="audit_date")
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
    site = load_site(site_dir, reuse=True)  # the batch kernel's last load, if unchanged
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
        Compute the LED failure scenarios (they feed no check).

    Returns
    -------
    EnclosureAudit
    """
    return collect_notes(_audit_enclosure, site, enclosure_id, audit_date=audit_date,
                         spacing_m=spacing_m,
                         emitter_failure_probability=emitter_failure_probability,
                         with_failures=with_failures)


def audit_findings(site, enclosure_id: str, *, audit_date=None,
                   spacing_m: float = DEFAULT_SPACING_M):
    """The audit's figures, checks and verdict alone, without the report's other sections.

    Left out: the surface table, month by month, the sun's day, the failure study. The
    same stages as :func:`audit_enclosure` up to and including the shared downstream, so
    its checks are the report's; for the previous audit's comparison, which shows only the
    verdict and the checks of that day.

    Returns
    -------
    audit_lib.pipeline.findings.Findings
        The library's warnings on the way are among its notes.
    """
    def compute():
        stages = _findings_stages(site, enclosure_id, choose_audit_date(site, audit_date),
                                  spacing_m)
        return stages.found

    return collect_notes(compute)


_layouts: dict = {}


def enclosure_layout(site, enclosure_id: str, spacing_m: float):
    """The enclosure's scene, failed emitter labels and unscaled maps: ``(scene, failed, maps)``.

    They depend on the site's records and the grid only, not on the day or its readings, so
    the last enclosure's are kept per loaded site: the previous audit's comparison
    (:func:`audit_findings` at an earlier day) takes this audit's instead of computing them
    again. The library warnings raised while computing them are raised again on every
    reuse, so both audits get the same notes. Do not change the maps in place.
    """
    key = id(site)
    if key not in _layouts:
        _layouts[key] = {}
        weakref.finalize(site, _layouts.pop, key, None)
    kept = _layouts[key]
    wanted = (enclosure_id, float(spacing_m))
    if wanted not in kept:
        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always")
            scene = build_scene(site, enclosure_id)
            failed = failed_labels(site, enclosure_id)
            maps = compute_maps(scene, spacing_m=spacing_m, failed=failed)
        kept.clear()  # one enclosure per site: a batch kernel moves on to the next
        kept[wanted] = (scene, failed, maps, caught)
    scene, failed, maps, caught = kept[wanted]
    for w in caught:
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    return scene, failed, maps


class _Stages(NamedTuple):
    """What the audit's stages up to the shared downstream give (see :func:`_findings_stages`)."""

    record: object
    species: list
    scene: object
    failed: tuple
    maps: dict
    points: pd.DataFrame
    calibration: float
    notes: list
    schedules: dict
    profiles: object
    lamp_spectra: dict
    spectra: dict
    lamps: pd.DataFrame
    decays: list
    found: Findings


def _findings_stages(site, enclosure_id: str, day, spacing_m) -> _Stages:
    """Scene, calibration to the day's readings, lamp forecasts and the shared downstream."""
    record = site.enclosure(enclosure_id)
    known = targets.species_targets(site.records.species)
    species = [known[s] for s in record.species if s in known]
    zones = targets.read_zone_table()

    scene, failed, raw_maps = enclosure_layout(site, enclosure_id, spacing_m)
    measured = steps.measured_uvi(site, enclosure_id, day)
    positions = steps.measuring_positions(record, raw_maps, measured["position"])
    points = point_values(scene, positions, failed=failed) if len(positions) else positions
    points = points.merge(measured, on="position", how="left") \
        if len(points) else points.assign(measured_uvi=pd.Series(dtype=float))
    calibration = steps.calibration_factor(points) if len(points) else 1.0
    if len(points):
        points["modelled_uvi"] = points["uvi"] * calibration
    notes = [text[0].upper() + text[1:] + "." for text in
             calibration_warnings(site.readings_of(enclosure_id), site.records)]
    notes += placeholder_notes(site.records, site.root)
    notes.append(f"Model scaled by {calibration:.2f} to match the UV Index readings of {day}."
                 if calibration != 1.0 else
                 "No UV Index readings at named positions on the audit day: the model shows "
                 "the lamps at their rated output (as new).")
    maps = steps.scale_maps(raw_maps, calibration)

    schedules = {p.id: lamp_schedule(site, p) for p in record.lamps}
    profiles = daily_profiles(schedules, day) if schedules else None
    lamp_spectra, spectra = steps.lamp_spectra(site, record, scene)
    lamps, decays = lamp_forecasts(site, site.readings_of(enclosure_id),
                                   site_lamp_installs(site, enclosure_id), today=day)
    replace_by = None
    if len(lamps) and lamps["replace_by"].notna().any():
        replace_by = pd.Timestamp(lamps["replace_by"].dropna().min()).date()
    found = find_figures(record, scene, maps, failed=failed, scale=calibration,
                         species=species, zones=zones, profiles=profiles,
                         spectra_metrics=spectra, audit_date=day, spacing_m=spacing_m,
                         replacement_date=replace_by,
                         unknown_species=[s for s in record.species if s not in known],
                         target_settings=targets.TargetSettings.from_record(site.records.targets),
                         uncertainty=audit_uncertainty(site, enclosure_id, day, points))
    return _Stages(record, species, scene, failed, maps, points, calibration, notes,
                   schedules, profiles, lamp_spectra, spectra, lamps, decays, found)


def _audit_enclosure(site, enclosure_id: str, *, audit_date, spacing_m,
                     emitter_failure_probability, with_failures) -> EnclosureAudit:
    """Run the audit's own stages around the shared downstream.

    Calibration, full maps, the sun, lamp forecasts and failures are the audit's; the rest
    is :func:`audit_lib.pipeline.findings.find_figures`.
    """
    info = site.records.site
    day = choose_audit_date(site, audit_date)
    stages = _findings_stages(site, enclosure_id, day, spacing_m)
    record, species, scene, failed, maps, points, calibration, notes, schedules, profiles = \
        stages[:10]
    found = stages.found
    zone = found.zone
    max_range = (zone.max_uvi_low, zone.max_uvi_high) if zone else None
    stats = statistics_table(maps, uvi_range=max_range,
                             refuge_below_uvi=found.target_settings.refuge_uvi_max)

    sun_lat, sun_lon, sun_offset, sun_place = steps.sun_place(site, species, day)
    monthly = None
    if profiles is not None:
        monthly = dose_monthly_table(found.uvi_at_peak, schedules, day.year,
                                     vitamin_d_w_m2_full=found.vitamin_d_at_peak,
                                     uvi_range=max_range, reference_latitude_deg=sun_lat)
    sun = clear_sky_uvi_day(sun_lat, sun_lon, day, utc_offset_h=sun_offset, step_s=600.0)
    daily = pd.DataFrame({"time_h": sun["time_h"].to_numpy(), "sun_uvi": sun["uvi"].to_numpy()})
    if found.daily_uvi is not None:
        daily["enclosure_uvi"] = np.interp(daily["time_h"], found.daily_uvi.index.to_numpy(),
                                           found.daily_uvi.to_numpy())
    daily = daily.set_index("time_h")
    natural = {"latitude_deg": sun_lat, "place": sun_place, "date": day,
               "peak_uvi": float(sun["uvi"].max()),
               "daily_sed": float(clear_sky_daily_dose_sed(sun_lat, day))}

    failures, monte_carlo = (pd.DataFrame(), None)
    if max_range and with_failures:
        failures, monte_carlo = steps.failure_table(scene, found.basking_surface, failed,
                                                    max_range, calibration,
                                                    emitter_failure_probability)
    if monte_carlo is not None:
        found.notes.append(
            f"Emitter failures: with every emitter working, "
            f"{monte_carlo.baseline_coverage:.0%} of {found.basking_surface!r} is inside the "
            f"maximum UV Index range; with each emitter out with an assumed probability of "
            f"{emitter_failure_probability:.0%}, {monte_carlo.probability_below:.0%} of 2000 "
            f"random trials leave less than {monte_carlo.coverage_threshold:.0%} of it in "
            f"range (median {float(np.median(monte_carlo.coverage)):.0%}).")

    return EnclosureAudit(
        site_name=site.name, enclosure_id=enclosure_id, enclosure_name=record.name,
        audit_date=day, auditor=info.auditor, organisation=info.organisation,
        client=info.client, logo_path=str(site.path_of(info.logo)) if info.logo else None,
        findings=found, scene=scene, calibration=calibration, maps=maps,
        surface_stats=stats, points=points, daily=daily, monthly=monthly, natural=natural,
        failures=failures, failure_study=monte_carlo, lamps=stages.lamps,
        decays=stages.decays, spectra=stages.spectra, lamp_spectra=stages.lamp_spectra,
        notes=notes + found.notes,
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
