"""The what-if planner: the logic behind the what-if panel, usable without a browser.

:class:`WhatIfPlanner` holds one enclosure's plan (:class:`audit_lib.pipeline.scenarios.PlanConfig`)
and recomputes its maps: the scene from :mod:`audit_lib.pipeline.assemble`, UV Index maps from
:mod:`audit_lib.scene.maps`, scaled by the plan's output share. Everything after the maps
(figures, the day, checks, verdict, actions) is the downstream the audit uses too,
:func:`audit_lib.pipeline.findings.find_figures`; the plan differs from an audit only by its
inputs (output share instead of calibration to readings, no lamp decay forecast).

Caching ("weight first, place second"): the lamp model is built once per lamp setting; the
UV Index map once per placement (lamp, position, screen); the per-emitter split of the map
only when emitters are failed, after which failing or restoring emitters is a sum of rows.
Schedule, species and output share changes reuse the maps.
"""

from __future__ import annotations

import datetime as dt
import time
import weakref
from dataclasses import dataclass, field, replace

import numpy as np

from audit_lib.day.photoperiod import daily_profiles
from audit_lib.errors import InputError
from audit_lib.judge.targets import TargetSettings, read_zone_table, species_targets
from audit_lib.light.sun import clear_sky_uvi_day
from audit_lib.pipeline.assemble import build_lamp, build_scene, failed_labels, lamp_schedule
from audit_lib.pipeline.audit import DEFAULT_SPACING_M, choose_audit_date
from audit_lib.pipeline.findings import Findings, collect_notes, find_figures
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
from audit_lib.pipeline.steps import lamp_spectra, only_lamp, sun_place
from audit_lib.scene.maps import compute_maps, evaluate_points, surface_grid, surface_statistics
from audit_lib.sources.lamps import LedArray, OutsideMeasuredRangeWarning

#: Map grid of the panel (ny, nx) on the floor; other surfaces use the same cell size.
DEFAULT_SHAPE = (100, 100)
#: Cache kinds shared by every planner of one loaded site (they depend on the lamp model only).
SITE_WIDE = ("lamp", "model metrics")
#: Cache kinds holding whole maps, kept for a few placements only (memory).
MAP_SIZED = ("maps", "split")

_site_caches: dict = {}


def _site_cache(site) -> dict:
    """The caches of :data:`SITE_WIDE` kinds for one loaded site (dropped with the site)."""
    key = id(site)
    if key not in _site_caches:
        _site_caches[key] = {kind: {} for kind in SITE_WIDE}
        weakref.finalize(site, _site_caches.pop, key, None)
    return _site_caches[key]


@dataclass
class PlanResult:
    """What one update of the planner gives (see :meth:`WhatIfPlanner.update`).

    The figures, checks, verdict and actions are the shared downstream's
    (:class:`audit_lib.pipeline.findings.Findings`, in ``findings``); the same names read
    them here as on an :class:`audit_lib.pipeline.audit.EnclosureAudit` (``verdict`` is the
    overall state, ``verdicts`` the per-species records).

    Attributes
    ----------
    config : PlanConfig
        The plan these figures belong to.
    maps : dict of str to audit_lib.scene.maps.SurfaceMap
        UV Index map per surface, at the plan's output share [-].
    statistics : dict of str to audit_lib.scene.maps.SurfaceStatistics
        Per surface, against the zone's maximum range and the refuge threshold.
    findings : audit_lib.pipeline.findings.Findings
        Figures, checks, verdicts and actions.
    sun : pandas.DataFrame
        Clear-sky UV Index of the day (``time_h``, ``uvi``).
    timings_ms : dict of str to float
        Time spent per stage of this update [ms].
    notes : list of str
        The findings' notes and the library warnings raised by this update (e.g. a measured
        lamp used outside the distances it was measured at).
    """

    config: PlanConfig
    maps: dict
    statistics: dict
    findings: Findings
    sun: object
    timings_ms: dict = field(default_factory=dict)
    notes: list = field(default_factory=list)

    basking_surface = property(lambda self: self.findings.basking_surface)
    basking_max_uvi = property(lambda self: self.findings.basking_max_uvi)
    peak_point_m = property(lambda self: self.findings.peak_point_m)
    refuge_share = property(lambda self: self.findings.refuge_share)
    mean_uvi = property(lambda self: self.findings.mean_uvi)
    light_hours = property(lambda self: self.findings.light_hours)
    daily = property(lambda self: self.findings.daily_uvi,
                     doc="UV Index at the basking peak through the day [-].")
    dose = property(lambda self: self.findings.basking_dose,
                    doc="Daily dose at the basking peak.")
    zone = property(lambda self: self.findings.zone)
    keeper_limit_s = property(lambda self: self.findings.keeper_limit_s)
    short_uvb_fraction = property(lambda self: self.findings.short_uvb_fraction)
    verdicts = property(lambda self: self.findings.verdicts)
    verdict = property(lambda self: self.findings.verdict, doc="Overall state.")
    reason = property(lambda self: self.findings.reason)
    checks = property(lambda self: self.findings.checks)
    actions = property(lambda self: self.findings.actions)
    recommendation = property(lambda self: self.findings.recommendation,
                              doc="The recommendation that follows the checks.")


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
    spacing_m : float, optional
        Grid spacing of every surface's map instead of ``shape`` (the audit's grid, so the
        planner at the audit's output share gives the report's figures) [m].
    uncertainty : audit_lib.judge.uncertainty.OutputUncertainty, optional
        Uncertainty of the output share: the checks get their 90 % intervals and the
        borderline rule (the audit's budget, :func:`audit_lib.pipeline.plan.audit_planner`).
    """

    def __init__(self, site, enclosure_id: str = "", *, lamp: str = "", blank=None,
                 shape=DEFAULT_SHAPE, audit_date=None, spacing_m=None, uncertainty=None):

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
        self.spacing_m = None if spacing_m is None else float(spacing_m)
        self.uncertainty = uncertainty
        self.day = choose_audit_date(site, audit_date)
        self.config = plan_from_site(site, enclosure_id, lamp, self.day)

        self._species = species_targets(site.records.species)
        self._zones = read_zone_table()
        self._cache: dict = dict(_site_cache(site))
        self._site_lamps: dict = {}  # lamp models other than the planned one, as the site has them
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
                c.screen, self.shape, self.spacing_m)

    def _cached(self, kind, key, build):
        slot = self._cache.setdefault(kind, {})
        if key not in slot:
            if kind not in SITE_WIDE and len(slot) > (8 if kind in MAP_SIZED else 64):
                slot.clear()
            slot[key] = build()
        return slot[key]

    def _lamp(self, c: PlanConfig):

        return self._cached("lamp", self._lamp_key(c),
                            lambda: build_lamp(self.site, planned_model(self.site, c)))

    def scene(self, config: PlanConfig | None = None, site=None):
        """The planned :class:`audit_lib.scene.maps.Enclosure` (cached per placement)."""
        c = config or self.config

        def build():
            built = {m: lamp for m, lamp in self._site_lamps.items() if m != c.lamp_model}
            built[c.lamp_model] = self._lamp(c)
            scene = build_scene(site or self.planned_site(c), self.enclosure_id, built=built)
            self._site_lamps.update({m: lamp for m, lamp in built.items()
                                     if m != c.lamp_model})
            return scene

        return self._cached("scene", self._place_key(c), build)

    def failed_labels(self, config: PlanConfig | None = None, site=None) -> tuple[str, ...]:
        """Failure labels of the plan's failed emitters (all lamps of the enclosure)."""
        c = config or self.config
        return failed_labels(site or self.planned_site(c), self.enclosure_id)

    def grids(self, scene):
        """Surface name to (shape or None, spacing) used for its map."""
        if self.spacing_m is not None:
            return {s.name: (None, self.spacing_m) for s in scene.all_surfaces}
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

    def update(self, *, checks_only: bool = False, **changes) -> PlanResult:
        """Change some plan settings and recompute; returns the new :class:`PlanResult`.

        Parameters
        ----------
        **changes
            Fields of :class:`audit_lib.pipeline.scenarios.PlanConfig` (``z_m=0.7``,
            ``failed_emitters=(3,)``, ``species="..."``, ``on="08:00"``...). A new ``lamp``
            (another placed lamp of the enclosure) starts from that lamp as the site has it;
            the changes made to the previous lamp are dropped.
        checks_only : bool
            Only what the checks need (:func:`audit_lib.pipeline.findings.find_figures`;
            :func:`audit_lib.pipeline.plan.find_plan` scores candidates so): no surface
            statistics either (``statistics`` is empty, with no note on extrapolation).

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

        # a lamp used outside its measured range is reported once per surface from the maps
        result = collect_notes(self._compute, config, checks_only,
                               ignore=(OutsideMeasuredRangeWarning,))
        self.config = config
        self.result = result
        return result

    def _compute(self, c: PlanConfig, checks_only: bool = False) -> PlanResult:
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
        settings = TargetSettings.from_record(site.records.targets)
        stats = {} if checks_only else {
            n: surface_statistics(m, max_range, settings.refuge_uvi_max) for n, m in maps.items()}
        record = site.enclosure(self.enclosure_id)
        profiles = None
        if record.lamps:
            profiles = self._cached("profiles", (c.lamp, c.on, c.off, c.ramp_minutes),
                                    lambda: daily_profiles(
                                        {p.id: lamp_schedule(site, p) for p in record.lamps},
                                        self.day))
        spectra = self._cached("spectra", (c.lamp, *self._lamp_key(c)),
                               lambda: self._spectra_metrics(c, site, record, scene))
        t2 = time.perf_counter()
        found = find_figures(
            record, scene, maps, failed=failed, scale=share,
            species=[species] if species else [], zones=self._zones, profiles=profiles,
            spectra_metrics=spectra, audit_date=self.day,
            spacing_m=DEFAULT_SPACING_M, main_lamp=c.lamp,  # height search on the reports' grid
            cache=self._cached, cache_key=self._place_key(c), target_settings=settings,
            uncertainty=self.uncertainty, checks_only=checks_only)
        t3 = time.perf_counter()
        notes = [f"On {part:.0%} of {name!r} a lamp known from readings is used outside the "
                 "distances it was measured at: values there are extrapolated."
                 for name, part in ((n, st.share_extrapolated) for n, st in stats.items())
                 if part > 0]
        return PlanResult(
            config=c, maps=maps, statistics=stats, findings=found, sun=self._sun(species),
            timings_ms={"maps": 1e3 * (t1 - t0), "statistics": 1e3 * (t2 - t1),
                        "findings": 1e3 * (t3 - t2)},
            notes=notes + found.notes)

    def _spectra_metrics(self, c, site, record, scene) -> dict:
        """Spectrum metrics per lamp model of the planned enclosure.

        :func:`lamp_spectra` one placed lamp at a time, each model's shared by every
        planner of the site.
        """
        placed = {p.name: p for p in scene.lamps}
        out = {}
        for place in record.lamps:
            if out.get(place.model) is None:
                key = (place.model, self._lamp_key(c) if place.id == c.lamp else None)
                out[place.model] = self._cached("model metrics", key, lambda p=place: lamp_spectra(
                    site, record.model_copy(update={"lamps": [p]}),
                    only_lamp(scene, placed[p.id]))[1].get(p.model))
        return {m: v for m, v in out.items() if v is not None}

    def _sun(self, species=None):
        lat, lon, offset, _ = sun_place(self.site, [species] if species else [], self.day)
        return self._cached("sun", (self.day, lat), lambda: clear_sky_uvi_day(
            lat, lon, self.day, utc_offset_h=offset, step_s=600.0))

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
