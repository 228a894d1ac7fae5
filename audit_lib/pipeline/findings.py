"""The one downstream of both entry points: UV Index maps in, figures, checks and actions out.

The audit (:func:`audit_lib.pipeline.audit.audit_enclosure`, from the site and its readings)
and the what-if planner (:class:`audit_lib.pipeline.planner.WhatIfPlanner`, from a plan) each
build the scene and its UV Index maps their own way: the audit scales the model to the
audit day's readings, the planner to the plan's output share. Everything after the maps is
:func:`find_figures`, so the two can only differ by their inputs:

* Basking maximum: highest UV Index over the basking surfaces (the floor if there are none),
  at the brightest cell of the map (the "peak point").
* Used area (species given UV as a whole-enclosure gradient): highest UV Index over the
  places of the time budget (each surface's whole map, each named position's point); all
  surfaces and the floor without a time budget. Judged instead of the basking maximum
  (:data:`audit_lib.judge.targets.PROVISION_CHECKS`); the height action then works on the
  surface holding that maximum (the basking surface if it lies at a named position).
* Refuge: share of the floor cells at or below the refuge UV Index (project default
  :data:`audit_lib.judge.targets.REFUGE_UVI_MAX`, or the site's ``[targets]`` setting).
* The day: each lamp's contribution at the peak point times its output profile (schedules);
  daily doses there; hours with any lamp on.
* Animal mean: the time budget's share-weighted mean UV Index while active, each place
  represented by the mean over a 6 x 6 grid of its surface (or its point for named positions).
* Keeper limit: ICNIRP actinic limit at the working distance straight below each lamp, the
  shortest over lamps, at the lamps' rated (as-new) output whatever the calibration or
  output share: the limit must still hold after a lamp change (conservative; project rule).
* Short-wave UVB share: highest over the lamp models' spectra (the report's spectrum table).
* Checks per species against its zone, the overall verdict, and the actions with the one
  bounded height search (:func:`audit_lib.scene.inverse.height_for_target`).
* Intervals (given an :class:`audit_lib.judge.uncertainty.OutputUncertainty`): the scale
  factor's 90 % interval carried through each figure's own map, vectorised: basking maximum
  and animal mean times the factor's ends (linear in output), the refuge share recounted on
  the floor map at both ends, the keeper limit inversely with the rated output; light hours
  and the short-wave share do not depend on lamp output (zero width). Overall: "needs
  attention" beats "borderline" beats "meets targets" (:mod:`audit_lib.judge.verdicts`).

Notes: :func:`collect_notes` turns the library's warnings raised on the way into notes, in
one place for both entry points; :func:`find_figures` adds its own (unknown species,
unusable time budget, the verdicts' caveats).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from audit_lib.day.dose import (
    TimeBudget,
    integrate_daily_dose,
    integrate_time_budget,
    uvi_series,
)
from audit_lib.day.photoperiod import lit_hours_of_table
from audit_lib.errors import AuditWarning
from audit_lib.judge import targets
from audit_lib.judge.uncertainty import (
    OutputUncertainty,
    inverse_interval,
    linear_interval,
    share_at_or_below_interval,
)
from audit_lib.judge.verdicts import ATTENTION, MEETS, assess_enclosure, recommendation
from audit_lib.light.metrics import sun_reference
from audit_lib.pipeline.steps import budget_places, keeper_limit, per_lamp_values
from audit_lib.scene.inverse import height_for_target


@dataclass
class Findings:
    """What the downstream finds in one enclosure's maps (audit and what-if alike).

    Attributes
    ----------
    species : list of SpeciesTarget
        The species judged, each against its own zone.
    zone : Zone or None
        Target ranges of the highest zone among the species (maps, doses, sun scale).
    basking_surface : str
        Surface with the highest UV Index among the basking surfaces (floor if none).
    peak_point_m : numpy.ndarray
        (3,) where that maximum is [m].
    basking_max_uvi : float
        Highest UV Index there [-].
    refuge_share : float
        Share of the floor at or below the refuge UV Index [-].
    uvi_at_peak, vitamin_d_at_peak : dict of str to float
        Each lamp's contribution at the peak point at full output (after the scale) [-],
        [W m-2].
    profiles : pandas.DataFrame or None
        Each lamp's output fraction through the day (None without lamps).
    light_hours : float or None
        Hours with any lamp on [h].
    daily_uvi : pandas.Series or None
        UV Index at the peak point through the day [-], index ``time_h``.
    basking_dose, animal_dose : DailyDose or None
        Daily doses at the peak point and for the animal's time budget.
    mean_uvi : float or None
        The animal's mean UV Index while active (time budget) [-].
    keeper_limit_s : float or None
        Shortest keeper limit at the working distance, lamps as new [s].
    short_uvb_fraction : float or None
        Highest 280-290 nm share of UVB over the lamp models [-].
    used_area_max_uvi : float or None
        Highest UV Index over the area the animal uses [-].
    used_area_place : str
        The place (surface or position) holding it.
    target_settings : TargetSettings
        The site's targets (project defaults unless the site sets them).
    verdicts : list of Verdict
        One per species.
    verdict, reason : str
        Overall state (the worst of the species' verdicts) and its reason.
    notes : list of str
        Caveats the views must show.
    uncertainty : OutputUncertainty or None
        The scale factor's uncertainty behind the checks' intervals (None: no intervals).
    intervals : dict of str to (float, float)
        Check id to the figure's 90 % interval [the check's unit].
    """

    species: list
    zone: object
    basking_surface: str
    peak_point_m: np.ndarray
    basking_max_uvi: float
    refuge_share: float
    uvi_at_peak: dict
    vitamin_d_at_peak: dict
    profiles: object = None
    light_hours: float | None = None
    daily_uvi: object = None
    basking_dose: object = None
    animal_dose: object = None
    mean_uvi: float | None = None
    keeper_limit_s: float | None = None
    short_uvb_fraction: float | None = None
    used_area_max_uvi: float | None = None
    used_area_place: str = ""
    target_settings: targets.TargetSettings = field(default_factory=targets.TargetSettings)
    verdicts: list = field(default_factory=list)
    verdict: str = targets.NO_DATA
    reason: str = ""
    notes: list = field(default_factory=list)
    uncertainty: OutputUncertainty | None = None
    intervals: dict = field(default_factory=dict)

    @property
    def checks(self) -> list:
        """Every check of every species' verdict (species named in the check's name)."""
        many = len(self.verdicts) > 1
        return [replace(c, name=f"{c.name} ({v.species})") if many else c
                for v in self.verdicts for c in v.checks]

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

    @property
    def recommendation(self) -> str:
        """The actions as one text; "no change needed" only when every check is in range."""
        return recommendation(self.verdicts)


def _no_cache(kind, key, build):
    return build()


def collect_notes(compute, *args, ignore=(), **kwargs):
    """Run ``compute`` and turn the library's warnings into notes (the one place for both).

    Parameters
    ----------
    compute : callable
        Returns a record with a ``notes`` list (e.g. :class:`Findings` or an audit record).
    *args, **kwargs
        Passed to ``compute``.
    ignore : tuple of Warning classes
        Warnings the caller reports another way (left out).

    Returns
    -------
    The record, with each new warning text appended once to its ``notes``. Warnings that
    are not :class:`audit_lib.errors.AuditWarning` are shown as usual.
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", AuditWarning)
        for category in ignore:
            warnings.simplefilter("ignore", category)
        result = compute(*args, **kwargs)
    for w in caught:
        if not issubclass(w.category, AuditWarning):
            warnings.showwarning(w.message, w.category, w.filename, w.lineno)
        elif str(w.message) not in result.notes:
            result.notes.append(str(w.message))
    return result


def _peak(scene, maps):
    basking = [s.name for s in scene.all_surfaces if s.kind == "basking"] or ["floor"]
    surface = max(basking, key=lambda n: float(maps[n].values["uvi"].max()))
    m = maps[surface]
    iy, ix = np.unravel_index(np.argmax(m.values["uvi"]), m.values["uvi"].shape)
    return surface, np.array([m.x_m[ix], m.y_m[iy], m.surface.z_m]), float(m.values["uvi"].max())


def short_uvb_fraction(spectra_metrics: dict) -> float | None:
    """Highest 280-290 nm share of UVB over lamp models with UVB (metrics per model) [-]."""
    shares = [m["short_uvb_fraction"] for m in spectra_metrics.values()
              if m.get("uvb_w_m2", 0) > 0 and math.isfinite(m.get("short_uvb_fraction", math.nan))]
    return max(shares) if shares else None


def find_figures(record, scene, maps, *, failed, scale, species, zones, profiles,
                 spectra_metrics, audit_date, spacing_m, main_lamp=None,
                 replacement_date=None, unknown_species=(), cache=None,
                 cache_key=None, target_settings=None, uncertainty=None,
                 checks_only=False) -> Findings:
    """From one enclosure's UV Index maps to its figures, checks, verdict and actions.

    Parameters
    ----------
    record : audit_lib.site.schema.Enclosure
        The enclosure's site record (time budget, positions, keeper distance, floor size).
    scene : audit_lib.scene.maps.Enclosure
        The modelled enclosure.
    maps : dict of str to SurfaceMap
        Per surface, with at least ``"uvi"`` already multiplied by ``scale`` [-].
    failed : tuple of str
        Failure labels that are out.
    scale : float
        Factor of the model: calibration to readings (audit) or output share (plan) [-].
    species : list of SpeciesTarget
        Species with a known zone.
    zones : dict of int to Zone
        The zone table.
    profiles : pandas.DataFrame or None
        Lamp output fractions through the audit day (:func:`daily_profiles`).
    spectra_metrics : dict of str to dict
        Lamp model id to its spectrum metrics.
    audit_date : datetime.date
        The day judged.
    spacing_m : float
        Grid spacing of the height search [m].
    main_lamp : str, optional
        Lamp that actions move (default: the one giving most UV at the peak point).
    replacement_date : datetime.date, optional
        Earliest lamp replacement forecast (audit only).
    unknown_species : sequence of str
        Species ids with no known zone (named in a note).
    cache, cache_key : optional
        ``cache(kind, key, build)`` memoises stages across calls for one placement
        ``cache_key`` (the what-if planner); no caching by default.
    target_settings : TargetSettings, optional
        The site's targets (:meth:`TargetSettings.from_record` of its ``[targets]`` table);
        the project defaults by default.
    uncertainty : OutputUncertainty, optional
        Uncertainty of ``scale``: each check gets its 90 % interval and the borderline rule
        (none without it).
    checks_only : bool
        Only what the checks need (the plan search scores candidates so): the checks and
        verdicts are the same; the actions lack the mount height, and the basking dose, the
        daily curve and the vitamin-D doses are left out.

    Returns
    -------
    Findings
    """
    cache = cache or _no_cache
    notes = [f"Species {s!r} is in neither the site's nor the library's species table."
             for s in unknown_species]
    zone = zones[max(s.zone for s in species)] if species else None
    max_range = (zone.max_uvi_low, zone.max_uvi_high) if zone else None
    settings = target_settings or targets.TargetSettings()
    if settings.overridden:
        notes.append("This site sets its own targets instead of the project defaults: "
                     + "; ".join(settings.changed()) + ".")
    surface, peak, basking_max = _peak(scene, maps)
    refuge = float(np.mean(maps["floor"].values["uvi"] <= settings.refuge_uvi_max))
    at_peak = cache("peak", (cache_key, failed, tuple(peak)),
                    lambda: per_lamp_values(scene, peak[None, :], failed))
    uvi_peak = {k: scale * float(v[0]) for k, v in at_peak["uvi"].items()}
    vitd_peak = {k: scale * float(v[0]) for k, v in at_peak["vitamin_d_w_m2"].items()}
    found = Findings(species=list(species), zone=zone, basking_surface=surface,
                     peak_point_m=peak, basking_max_uvi=basking_max, refuge_share=refuge,
                     uvi_at_peak=uvi_peak, vitamin_d_at_peak=vitd_peak, profiles=profiles,
                     target_settings=settings, notes=notes, uncertainty=uncertainty)
    if any(s.uv_provision == "gradient" for s in species):
        found.used_area_place, found.used_area_max_uvi = _used_area_max(
            record, scene, maps, failed, scale)
    if profiles is not None:
        found.light_hours = lit_hours_of_table(profiles)
        if not checks_only:
            found.daily_uvi = uvi_series(uvi_peak, profiles)
            found.basking_dose = integrate_daily_dose(uvi_peak, profiles,
                                                      vitamin_d_w_m2_full=vitd_peak,
                                                      uvi_range=max_range)
        _time_budget(found, record, scene, failed, scale, zone, cache, cache_key, checks_only)
    found.keeper_limit_s = cache("keeper", (cache_key, failed),
                                 lambda: keeper_limit(scene, record, failed))
    found.short_uvb_fraction = short_uvb_fraction(spectra_metrics)
    if uncertainty is not None:
        found.intervals = figure_intervals(found, maps["floor"].values["uvi"], uncertainty)
    _judge(found, record, scene, zones, failed, scale, audit_date, spacing_m, main_lamp,
           replacement_date, cache, cache_key, maps, not checks_only)
    return found


def _used_area_max(record, scene, maps, failed, scale) -> tuple[str, float]:
    """Place and value of the highest UV Index over the area the animal uses [-].

    The places of the time budget with a share above zero (a surface by its whole map, a
    named position by its point); every surface and the floor without a time budget.
    """
    used = [k for k, share in record.time_budget.items() if share > 0] or list(maps)
    positions = {p.id: p for p in record.positions}
    values = {}
    for name in used:
        if name in maps:
            values[name] = float(maps[name].values["uvi"].max())
        elif name in positions:
            p = positions[name]
            per = per_lamp_values(scene, np.array([[p.x_m, p.y_m, p.z_m]]), failed)["uvi"]
            values[name] = scale * float(sum(float(v[0]) for v in per.values()))
    if not values:
        return "", None
    place = max(values, key=values.get)
    return place, values[place]


def figure_intervals(found: Findings, floor_uvi, uncertainty: OutputUncertainty) -> dict:
    """Check id to the 90 % interval of its figure (see the module docstring) [unit]."""
    factors = uncertainty.scale_factors()
    out = {targets.BASKING_UVI_MAX: linear_interval(found.basking_max_uvi, factors),
           targets.REFUGE_FLOOR_SHARE: share_at_or_below_interval(
               floor_uvi, found.target_settings.refuge_uvi_max, factors)}
    if found.used_area_max_uvi is not None:
        out[targets.USED_AREA_UVI_MAX] = linear_interval(found.used_area_max_uvi, factors)
    if found.mean_uvi is not None:
        out[targets.ANIMAL_UVI_MEAN] = linear_interval(found.mean_uvi, factors)
    if found.light_hours is not None:
        out[targets.LIGHT_HOURS] = (found.light_hours, found.light_hours)
    if found.short_uvb_fraction is not None:
        out[targets.SHORT_UVB_SHARE] = (found.short_uvb_fraction, found.short_uvb_fraction)
    if found.keeper_limit_s is not None:  # the check's unit is minutes
        low, high = inverse_interval(found.keeper_limit_s / 60.0, uncertainty.rated_factors())
        out[targets.KEEPER_EXPOSURE_TIME] = (low, high)
    return out


def _time_budget(found, record, scene, failed, scale, zone, cache, cache_key,
                 checks_only=False) -> None:
    """The animal's doses and mean UV Index from the enclosure's time budget."""
    if not record.time_budget:
        return
    places = budget_places(record, scene)
    unknown = [k for k in record.time_budget if k not in places]
    if unknown:
        found.notes.append(f"Time budget place(s) {unknown} are not surfaces or positions; "
                           "the animal's mean UV Index was not computed.")
        return

    def means():
        out = {}
        for name in record.time_budget:
            per = per_lamp_values(scene, places[name], failed)
            out[name] = {q: {k: float(v.mean()) for k, v in per[q].items()} for q in per}
        return out

    values = cache("places", (cache_key, failed), means)
    by_place = {k: {lamp: scale * v for lamp, v in values[k]["uvi"].items()}
                for k in record.time_budget}
    vitd = {k: {lamp: scale * v for lamp, v in values[k]["vitamin_d_w_m2"].items()}
            for k in record.time_budget}
    mean_range = (zone.mean_uvi_low, zone.mean_uvi_high) if zone else None
    found.animal_dose, _ = integrate_time_budget(
        TimeBudget(shares=dict(record.time_budget)), by_place, found.profiles,
        vitamin_d_by_position=None if checks_only else vitd, uvi_range=mean_range,
        with_table=False)
    found.mean_uvi = float(found.animal_dose.mean_uvi_exposed)


def _judge(found, record, scene, zones, failed, scale, audit_date, spacing_m, main_lamp,
           replacement_date, cache, cache_key, maps, search_height=True) -> None:
    """Checks, verdicts and actions of every species; the overall state and reason."""
    main = None
    if scene.lamps:
        main = next((p for p in scene.lamps if p.id == main_lamp), None) or max(
            scene.lamps, key=lambda p: found.uvi_at_peak.get(p.id, 0.0))

    def search_on(surface):
        def height_search(uvi_range, aim):
            key = (cache_key, failed, scale, surface, tuple(uvi_range), aim)
            return cache("height", key, lambda: height_for_target(
                scene, main.id, surface, uvi_range, aim_uvi=aim, failed=failed,
                scale=scale, spacing_m=spacing_m))
        return height_search if main is not None and search_height else None

    def surface_of(species):  # where the species' UV Index top check is made
        if species.uv_provision == "gradient" and found.used_area_place in maps:
            return found.used_area_place
        return found.basking_surface

    screens = [s.transmission for s in scene.screens if s.transmission is not None]
    sun_short = sun_reference()["short_uvb_fraction"]
    found.verdicts = [assess_enclosure(
        record.id, s, zones[s.zone], basking_max_uvi=found.basking_max_uvi,
        mean_uvi=found.mean_uvi, refuge_share=found.refuge_share,
        light_hours=found.light_hours, short_uvb_fraction=found.short_uvb_fraction,
        sun_short_uvb_fraction=sun_short, keeper_limit_s=found.keeper_limit_s,
        working_distance_m=record.keeper_working_distance_m,
        used_area_max_uvi=found.used_area_max_uvi,
        **found.target_settings.assess_kwargs(),
        height_search=search_on(surface_of(s)),
        screen_transmission=min(screens) if screens else None,
        floor_area_m2=record.width_m * record.depth_m, replacement_date=replacement_date,
        audit_date=audit_date, lamp=main.id if main else "", intervals=found.intervals)
        for s in found.species]
    states = [v.state for v in found.verdicts]
    if ATTENTION in states:
        found.verdict = ATTENTION
    elif states and all(s in (MEETS, targets.BORDERLINE) for s in states):
        found.verdict = targets.BORDERLINE if targets.BORDERLINE in states else MEETS
    else:
        found.verdict = targets.NO_DATA
    found.reason = (" ".join(v.reason for v in found.verdicts)
                    or "No species with a known zone is assigned.")
    for v in found.verdicts:
        found.notes += [n for n in v.notes if n not in found.notes]


__all__ = ["Findings", "collect_notes", "figure_intervals", "find_figures",
           "short_uvb_fraction"]
