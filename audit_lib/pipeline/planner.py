"""The what-if planner: the logic behind the what-if panel, usable without a browser.

:class:`WhatIfPlanner` holds one enclosure's plan (:class:`audit_lib.pipeline.scenarios.PlanConfig`)
and recomputes maps, statistics, the day's UV Index, the verdict and the actions through
the library only: the scene from :mod:`audit_lib.pipeline.assemble`, maps from
:mod:`audit_lib.scene.maps`, doses from :mod:`audit_lib.day.dose`, checks and actions from
:mod:`audit_lib.judge.verdicts`. It computes nothing of its own; it chooses which figure feeds
which check the way :mod:`audit_lib.pipeline.audit` does, except that the plan is modelled at its
stated output share (no calibration to readings, no lamp decay forecast).

Caching ("weight first, place second"): the lamp model is built once per lamp setting; the
UV Index map once per placement (lamp, position, screen); the per-emitter split of the map
only when emitters are failed, after which failing or restoring emitters is a sum of rows.
Schedule, species and output share changes reuse the maps.
"""

from __future__ import annotations

import datetime as dt
import math
import time
import warnings
from dataclasses import dataclass, field, replace

import numpy as np

from audit_lib.day.dose import (
    TimeBudget,
    integrate_daily_dose,
    integrate_time_budget,
    uvi_series,
)
from audit_lib.day.photoperiod import daily_profiles, lit_hours_of_table
from audit_lib.errors import AuditWarning, InputError
from audit_lib.judge import targets
from audit_lib.judge.targets import read_zone_table, species_targets
from audit_lib.judge.verdicts import assess_enclosure
from audit_lib.light.metrics import batch_metrics, keeper_limit_s, sun_reference
from audit_lib.light.sun import clear_sky_uvi_day
from audit_lib.pipeline.assemble import build_lamp, build_scene, failed_labels, lamp_schedule
from audit_lib.pipeline.audit import choose_audit_date
from audit_lib.pipeline.scenarios import (
    BLANK_ENCLOSURE_ID,
    BlankEnclosure,
    PlanConfig,
    Scenario,
    apply_plan,
    change_plan,
    plan_from_site,
    planned_model,
    read_scenario,
    save_scenario,
    screen_records,
    with_blank,
)
from audit_lib.pipeline.steps import (
    budget_places,
    failed_of,
    only_lamp,
    per_lamp_values,
    sun_place,
)
from audit_lib.pipeline.steps import height_for_uvi as height_search
from audit_lib.scene.maps import compute_maps, evaluate_points, surface_grid, surface_statistics
from audit_lib.sources.lamps import LedArray, OutsideMeasuredRangeWarning, lamp_spectrum

#: Map grid of the panel (ny, nx) on the floor; other surfaces use the same cell size.
DEFAULT_SHAPE = (100, 100)


@dataclass
class PlanResult:
    """What one update of the planner gives (see :meth:`WhatIfPlanner.update`).

    Attributes
    ----------
    config : PlanConfig
        The plan these figures belong to.
    maps : dict of str to audit_lib.scene.maps.SurfaceMap
        UV Index map per surface, at the plan's output share [-].
    basking_surface : str
        Surface with the highest UV Index among the basking surfaces (floor if none).
    basking_max_uvi : float
        Highest UV Index there [-].
    peak_point_m : numpy.ndarray
        (3,) where that maximum is [m].
    statistics : dict of str to audit_lib.scene.maps.SurfaceStatistics
        Per surface, against the zone's maximum range and the refuge threshold.
    refuge_share : float
        Share of the floor at or below the refuge UV Index [-].
    mean_uvi : float or None
        The animal's mean UV Index while active (time budget) [-].
    light_hours : float or None
        Hours with any lamp on [h].
    daily : pandas.Series or None
        UV Index at the basking peak through the day [-], index local hours.
    dose : audit_lib.day.dose.DailyDose or None
        Daily dose at the basking peak.
    sun : pandas.DataFrame
        Clear-sky UV Index of the day (``time_h``, ``uvi``).
    zone : audit_lib.judge.targets.Zone or None
        The species' target zone.
    verdict : audit_lib.judge.verdicts.Verdict or None
        Checks, state and actions (None without a known species).
    keeper_limit_s : float or None
        Shortest keeper limit at the working distance [s].
    short_uvb_fraction : float or None
        Highest 280-290 nm share of UVB over the lamps [-].
    timings_ms : dict of str to float
        Time spent per stage of this update [ms].
    notes : list of str
        Library warnings raised by this update (e.g. a measured lamp used outside the
        distances it was measured at).
    """

    config: PlanConfig
    maps: dict
    basking_surface: str
    basking_max_uvi: float
    peak_point_m: np.ndarray
    statistics: dict
    refuge_share: float
    mean_uvi: float | None
    light_hours: float | None
    daily: object
    dose: object
    sun: object
    zone: object
    verdict: object
    keeper_limit_s: float | None
    short_uvb_fraction: float | None
    timings_ms: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)

    @property
    def actions(self) -> list:
        """Recommended actions of the verdict."""
        return list(self.verdict.actions) if self.verdict is not None else []

    @property
    def recommendation(self) -> str:
        """The computed actions as one text, or why there are none."""
        if self.verdict is None:
            return "No species with a known zone is chosen: no targets to compare with."
        if not self.actions:
            return "No change needed: every check made is within range."
        return " ".join(a.text for a in self.actions)




class WhatIfPlanner:
    """One enclosure's plan and its recomputed figures.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_id : str, optional
        Enclosure to plan; empty for a blank enclosure (``blank``).
    lamp : str, optional
        Placed lamp to plan (default the first).
    blank : BlankEnclosure, optional
        Box of a blank enclosure (default :class:`BlankEnclosure`).
    shape : tuple of int
        (ny, nx) map grid on the floor [-].
    audit_date : str or datetime.date, optional
        Day of the schedules and of the sun's curve (default the site's audit day).
    """

    def __init__(self, site, enclosure_id: str = "", *, lamp: str = "", blank=None,
                 shape=DEFAULT_SHAPE, audit_date=None):

        self.blank = None
        if not enclosure_id:
            self.blank = blank or BlankEnclosure()
            first = site.records.species[0].id if site.records.species else ""
            site = with_blank(site, self.blank, species=first)
            enclosure_id = BLANK_ENCLOSURE_ID
        self.site = site
        self.enclosure_id = enclosure_id
        self.record = site.enclosure(enclosure_id)
        self.shape = tuple(int(v) for v in shape)
        self.day = choose_audit_date(site, audit_date)
        self.config = plan_from_site(site, enclosure_id, lamp, self.day)

        self._species = species_targets(site.records.species)
        self._zones = read_zone_table()
        self._cache: dict = {}
        self.result: PlanResult | None = None

    # --- choices for the controls ---------------------------------------------------------

    def placed_lamps(self) -> list[str]:
        """Ids of the enclosure's placed lamps (one of them is planned at a time)."""
        return [p.id for p in self.record.lamps]

    def lamp_models(self) -> dict[str, str]:
        """Lamp model id to its name."""
        return {m.id: m.name for m in self.site.records.lamp_models}

    def screens(self) -> list[str]:
        """Screen choices: ``"none"``, the site's screens and the example meshes."""
        return ["none", *screen_records(self.site)]

    def species(self) -> dict[str, str]:
        """Species id to a readable label (scientific name and zone)."""
        return {k: f"{v.scientific_name} (zone {v.zone})"
                for k, v in sorted(self._species.items())}

    def emitter_labels(self, config: PlanConfig | None = None) -> list[str]:
        """Emitter names of the planned lamp, numbered 1, 2, ... in this order."""
        lamp = self._lamp(config or self.config)
        return [e.name for e in lamp.emitters] if isinstance(lamp, LedArray) else []

    def is_led_array(self, config: PlanConfig | None = None) -> bool:
        """Whether the planned lamp model is an LED array."""
        c = config or self.config
        return self.site.lamp_model(c.lamp_model).kind == "led_array"

    # --- the planned site and scene -------------------------------------------------------

    def planned_site(self, config: PlanConfig | None = None):
        """The site with the plan applied (records only; nothing is written)."""
        return apply_plan(self.site, self.enclosure_id, config or self.config,
                          known_species=self._species)

    def _lamp_key(self, c: PlanConfig):
        return (c.lamp_model, c.uv_per_row, c.uv_beam_angle_deg)

    def _place_key(self, c: PlanConfig):
        return (c.lamp, *self._lamp_key(c), c.x_m, c.y_m, c.z_m, c.tilt_deg, c.rotation_deg,
                c.screen, self.shape)

    def _cached(self, kind, key, build):
        slot = self._cache.setdefault(kind, {})
        if key not in slot:
            if len(slot) > 8:
                slot.clear()
            slot[key] = build()
        return slot[key]

    def _lamp(self, c: PlanConfig):

        return self._cached("lamp", self._lamp_key(c),
                            lambda: build_lamp(self.site, planned_model(self.site, c)))

    def scene(self, config: PlanConfig | None = None, site=None):
        """The planned :class:`audit_lib.scene.maps.Enclosure` (cached per placement)."""
        c = config or self.config
        return self._cached("scene", self._place_key(c), lambda: build_scene(
            site or self.planned_site(c), self.enclosure_id))

    def failed_labels(self, config: PlanConfig | None = None, site=None) -> tuple[str, ...]:
        """Failure labels of the plan's failed emitters (all lamps of the enclosure)."""
        c = config or self.config
        return failed_labels(site or self.planned_site(c), self.enclosure_id)

    def grids(self, scene):
        """Surface name to (shape or None, spacing) used for its map."""
        floor = scene.surface("floor")
        spacing = min((floor.x_max_m - floor.x_min_m) / self.shape[1],
                      (floor.y_max_m - floor.y_min_m) / self.shape[0])
        return {s.name: (self.shape if s.kind == "floor" else None, spacing)
                for s in scene.all_surfaces}

    def _maps(self, c: PlanConfig, failed, site=None):
        """UV Index maps at full output with ``failed`` out (superposed per emitter)."""
        scene = self.scene(c, site)
        key = self._place_key(c)
        plain = self._cached("maps", key, lambda: {
            name: compute_maps(scene, ("uvi",), spacing, [name], shape)[name]
            for name, (shape, spacing) in self.grids(scene).items()})
        if not failed:
            return plain

        def split():
            out = {}
            for name, m in plain.items():
                _, _, pts = surface_grid(scene.surface(name), 1.0, m.values["uvi"].shape)
                ev = evaluate_points(scene, pts, ("uvi",), per_source=("uvi",))
                out[name] = (np.asarray(ev.labels), ev.contributions["uvi"])
            return out

        parts = self._cached("split", key, split)
        bad = set(failed)
        out = {}
        for name, m in plain.items():
            labels, rows = parts[name]
            alive = ~np.isin(labels, list(bad))
            values = (rows[alive].sum(axis=0) if alive.any() else np.zeros(rows.shape[1]))
            out[name] = replace(m, values={"uvi": values.reshape(m.values["uvi"].shape)},
                                failed=tuple(sorted(bad)))
        return out

    # --- update ---------------------------------------------------------------------------

    def update(self, **changes) -> PlanResult:
        """Change some plan settings and recompute; returns the new :class:`PlanResult`.

        Parameters
        ----------
        **changes
            Fields of :class:`audit_lib.pipeline.scenarios.PlanConfig` (``z_m=0.7``,
            ``failed_emitters=(3,)``, ``species="..."``, ``on="08:00"``...). A new ``lamp``
            (another placed lamp of the enclosure) starts from that lamp as the site has it;
            the changes made to the previous lamp are dropped.

        Raises
        ------
        InputError
            An unknown setting, or a value the site cannot take; the plan is left unchanged.
        """
        config = self.config
        if changes.get("lamp", config.lamp) != config.lamp:  # plan another lamp: start afresh
            fresh = plan_from_site(self.site, self.enclosure_id, changes["lamp"], self.day)
            config = replace(fresh, species=config.species)
        config = change_plan(config, **changes)
        if "lamp_model" in changes and changes["lamp_model"] != self.config.lamp_model:
            config = replace(config, failed_emitters=(), uv_per_row=changes.get("uv_per_row"),
                             uv_beam_angle_deg=changes.get("uv_beam_angle_deg"))
        n = len(self.emitter_labels(config))
        config = replace(config, failed_emitters=tuple(k for k in config.failed_emitters
                                                       if 1 <= k <= n))

        with warnings.catch_warnings(record=True) as caught:
            warnings.simplefilter("always", AuditWarning)
            # reported once per surface from the maps instead (see _compute)
            warnings.simplefilter("ignore", OutsideMeasuredRangeWarning)
            result = self._compute(config)
        for w in caught:
            if not issubclass(w.category, AuditWarning):
                warnings.showwarning(w.message, w.category, w.filename, w.lineno)
            elif str(w.message) not in result.notes:
                result.notes.append(str(w.message))
        self.config = config
        self.result = result
        return result

    def _compute(self, c: PlanConfig) -> PlanResult:

        t0 = time.perf_counter()
        site = self.planned_site(c)
        scene = self.scene(c, site)
        failed = self.failed_labels(c, site)
        share = float(c.output_share)
        full = self._maps(c, failed, site)
        maps = {n: replace(m, values={"uvi": m.values["uvi"] * share}) for n, m in full.items()}
        t1 = time.perf_counter()
        species = self._species.get(c.species)
        zone = self._zones[species.zone] if species else None
        max_range = (zone.max_uvi_low, zone.max_uvi_high) if zone else None
        stats = {n: surface_statistics(m, max_range, targets.REFUGE_UVI_MAX)
                 for n, m in maps.items()}
        basking = [s.name for s in scene.all_surfaces if s.kind == "basking"] or ["floor"]
        peak_surface = max(basking, key=lambda n: float(maps[n].values["uvi"].max()))
        pm = maps[peak_surface]
        iy, ix = np.unravel_index(np.argmax(pm.values["uvi"]), pm.values["uvi"].shape)
        peak = np.array([pm.x_m[ix], pm.y_m[iy], pm.surface.z_m])
        refuge = float(np.mean(maps["floor"].values["uvi"] <= targets.REFUGE_UVI_MAX))
        point_key = (self._place_key(c), failed, tuple(peak))
        per_lamp = self._cached("peak", point_key, lambda: per_lamp_values(
            scene, peak[None, :], failed))
        uvi_peak = {k: share * float(v[0]) for k, v in per_lamp["uvi"].items()}
        vitd_peak = {k: share * float(v[0]) for k, v in per_lamp["vitamin_d_w_m2"].items()}
        t2 = time.perf_counter()
        daily, dose, hours, mean_uvi = self._time(site, scene, c, failed, uvi_peak, vitd_peak,
                                                  max_range, zone, share)
        t3 = time.perf_counter()
        keeper = self._keeper_limit(scene, failed, share, self._place_key(c))
        short = self._short_uvb(scene, c)
        verdict = None
        if species is not None:
            verdict = self._verdict(c, scene, species, zone, failed, peak, share,
                                    basking_max_uvi=float(pm.values["uvi"].max()),
                                    mean_uvi=mean_uvi, refuge_share=refuge, light_hours=hours,
                                    short_uvb_fraction=short, keeper_limit_s=keeper)
        t4 = time.perf_counter()
        notes = [f"On {share:.0%} of {name!r} a lamp known from readings is used outside the "
                 "distances it was measured at: values there are extrapolated."
                 for name, share in ((n, st.share_extrapolated) for n, st in stats.items())
                 if share > 0]
        return PlanResult(
            config=c, maps=maps, basking_surface=peak_surface,
            basking_max_uvi=float(pm.values["uvi"].max()), peak_point_m=peak,
            statistics=stats, refuge_share=refuge, mean_uvi=mean_uvi, light_hours=hours,
            daily=daily, dose=dose, sun=self._sun(species), zone=zone, verdict=verdict,
            keeper_limit_s=keeper, short_uvb_fraction=short,
            timings_ms={"maps": 1e3 * (t1 - t0), "statistics": 1e3 * (t2 - t1),
                        "day": 1e3 * (t3 - t2), "verdict": 1e3 * (t4 - t3)},
            notes=notes)

    # --- stages (each a library call) -----------------------------------------------------

    def _time(self, site, scene, c, failed, uvi_peak, vitd_peak, max_range, zone, share):

        record = site.enclosure(self.enclosure_id)
        if not record.lamps:
            return None, None, None, None
        key = (c.lamp, c.on, c.off, c.ramp_minutes)
        profiles = self._cached("profiles", key, lambda: daily_profiles(
            {p.id: lamp_schedule(site, p) for p in record.lamps}, self.day))
        daily = uvi_series(uvi_peak, profiles)
        dose = integrate_daily_dose(uvi_peak, profiles, vitamin_d_w_m2_full=vitd_peak,
                                    uvi_range=max_range)
        hours = lit_hours_of_table(profiles)
        mean_uvi = None
        budget = dict(record.time_budget)
        if budget:
            places = self._cached("places", (self._place_key(c), failed),
                                  lambda: self._place_values(record, scene, failed))
            if all(k in places for k in budget):
                by_place = {k: {lamp: share * v for lamp, v in places[k]["uvi"].items()}
                            for k in budget}
                vitd = {k: {lamp: share * v for lamp, v in places[k]["vitamin_d_w_m2"].items()}
                        for k in budget}
                mean_range = (zone.mean_uvi_low, zone.mean_uvi_high) if zone else None
                animal, _ = integrate_time_budget(TimeBudget(shares=budget), by_place, profiles,
                                                  vitamin_d_by_position=vitd,
                                                  uvi_range=mean_range)
                mean_uvi = float(animal.mean_uvi_exposed)
        return daily, dose, hours, mean_uvi

    def _place_values(self, record, scene, failed):
        """Per place of the time budget, per lamp, the mean UVI and vitamin-D irradiance."""
        points = budget_places(record, scene)
        out = {}
        for name, pts in points.items():
            per = per_lamp_values(scene, pts, failed)
            out[name] = {q: {k: float(v.mean()) for k, v in per[q].items()} for q in per}
        return out

    def _keeper_limit(self, scene, failed, share, place_key):
        """Shortest keeper limit over lamps at the working distance below each lamp [s]."""
        distance = self.record.keeper_working_distance_m
        if not distance or not scene.lamps:
            return None

        def actinic():
            out = []
            for lamp in scene.lamps:
                point = np.array([[lamp.x_m, lamp.y_m, lamp.z_m - distance]])
                ev = evaluate_points(only_lamp(scene, lamp), point, ("actinic_w_m2",),
                                     failed=failed_of(failed, lamp.id))
                out.append(float(ev.values["actinic_w_m2"][0]))
            return out

        values = self._cached("actinic", (place_key, failed), actinic)
        limits = [float(keeper_limit_s(share * a)) for a in values if math.isfinite(a)]
        return min(limits) if limits else None

    def _short_uvb(self, scene, c):
        """Highest 280-290 nm share of UVB over the lamps' far-field spectra [-]."""
        shares = []
        for p in scene.lamps:
            def one(lamp=p.lamp):
                try:
                    s = lamp_spectrum(lamp)
                except InputError:  # a measured lamp without a spectrum
                    return math.nan
                m = batch_metrics(s.wavelength_nm, s.irradiance_w_m2_nm, with_cct=False)
                return float(m["short_uvb_fraction"]) if m["uvb_w_m2"] > 0 else math.nan
            key = (p.id, self._lamp_key(c) if p.id == c.lamp else None)
            value = self._cached("short", key, one)
            if math.isfinite(value):
                shares.append(value)
        return max(shares) if shares else None

    def _sun(self, species=None):

        lat, lon, offset, _ = sun_place(self.site, [species] if species else [], self.day)
        return self._cached("sun", (self.day, lat), lambda: clear_sky_uvi_day(
            lat, lon, self.day, utc_offset_h=offset, step_s=600.0))

    def _verdict(self, c, scene, species, zone, failed, peak, share, **figures):

        main = next(p for p in scene.lamps if p.id == c.lamp)
        screens = [s.transmission for s in scene.screens if s.transmission is not None]

        memo = self._cached("height", (self._place_key(c), failed, tuple(peak), share), dict)

        def height_for_uvi(target):
            if target not in memo:
                memo[target] = search(target)
            return memo[target]

        search = height_search(scene, main, np.asarray(peak, float), failed, share)

        sun_short = self._cached("sun_ref", 0, lambda: sun_reference()["short_uvb_fraction"])
        return assess_enclosure(
            self.enclosure_id, species, zone, sun_short_uvb_fraction=sun_short,
            working_distance_m=self.record.keeper_working_distance_m,
            current_height_m=float(main.z_m - peak[2]), height_for_uvi=height_for_uvi,
            screen_transmission=min(screens) if screens else None,
            floor_area_m2=self.record.width_m * self.record.depth_m, audit_date=self.day,
            lamp=main.id, **figures)

    # --- scenarios ------------------------------------------------------------------------

    def save_scenario(self, name: str, note: str = ""):
        """Write the present plan as ``SITE/scenarios/<name>.toml``; returns the path."""
        scenario = Scenario(name=name, enclosure=self.enclosure_id, plan=self.config,
                            blank=self.blank, note=note, saved_on=dt.date.today())
        return save_scenario(self.site, scenario)

    @classmethod
    def from_scenario(cls, site, name: str, *, shape=DEFAULT_SHAPE):
        """A planner opened on a saved scenario of ``site``."""
        scenario = read_scenario(site.root, name)
        if scenario.blank is not None:
            planner = cls(site, "", blank=scenario.blank, shape=shape)
        else:
            planner = cls(site, scenario.enclosure, lamp=scenario.plan.lamp, shape=shape)
        planner.update(**{k: getattr(scenario.plan, k) for k in scenario.plan.__dataclass_fields__})
        return planner


__all__ = ["WhatIfPlanner", "PlanResult", "PlanConfig", "BlankEnclosure", "InputError"]
