"""One plan per enclosure: the smallest set of changes that brings every check within range.

Within range *with its interval*: a planned check counts only when its whole 90 % interval
lies inside the target (:func:`audit_lib.judge.targets.classify_interval`), so a plan never
ends on a borderline figure. Every candidate is judged by the what-if planner
(:class:`audit_lib.pipeline.planner.WhatIfPlanner`, the audit's grid and uncertainty), so the
plan's ``checks_after`` are what the what-if panel shows when the plan is applied.

The controls, each one change (:data:`PLAN_ACTION_KINDS`): the main lamp's mount height
within the enclosure (from 10 cm above the highest basking surface, project default, to the
top or the present mount if higher), its position along the enclosure, dimming (LED arrays
and tubes only: common practice, mercury-vapour and metal-halide lamps do not dim; a
dimmer only lowers output), the UV emitters per row of an LED array, the site's other lamp
models (a new lamp, at rated output), the site's screens or meshes (or taking one away) and
the light hours.

The search, by number of changes: the present placement, then one placement control, then
pairs of them, on coarse grids. Dimming and light hours need no map of their own: the UV
figures are linear in output, so for each placement the dimming that centres the output
inside every output-dependent target (interval included) is solved directly
(:func:`output_share_range`), and light hours are set to the middle of their target around
the present light period's centre. Every candidate is first screened by the same planner on
a grid :data:`SCREEN_COARSENING` times coarser, checks only (no actions, doses or daily
curve: :func:`audit_lib.pipeline.findings.find_figures`); the :data:`CONFIRMED` best are
judged again on the planner's own grid and the best of those wins (ties: the one tried
first). When no candidate resolves every check, the plan is the best compromise
(fewest checks left outside, then the largest share of checks within range) and ``reason``
says in one sentence which checks nothing at the site can fix.

Only the enclosure's main lamp (the one giving most UV at the basking peak) is planned.
"""

from __future__ import annotations

import copy
import math
from dataclasses import dataclass, field
from itertools import combinations

import numpy as np

from audit_lib.judge import targets
from audit_lib.judge.verdicts import ATTENTION
from audit_lib.pipeline.audit import audit_enclosure
from audit_lib.pipeline.planner import SITE_WIDE, WhatIfPlanner

#: Kinds of plan action (stable: ``results.json`` carries them).
PLAN_ACTION_KINDS = ("mount height", "position", "dimming", "emitters", "lamp model", "screen",
                     "light hours")
#: Clearance kept between the lamp face and the highest basking surface (project default) [m].
LAMP_CLEARANCE_M = 0.10
#: Lamp kinds that can be dimmed (common practice).
DIMMABLE_KINDS = ("led_array", "tube")
#: Checks whose figure scales with lamp output (solved for dimming).
OUTPUT_CHECKS = (targets.BASKING_UVI_MAX, targets.ANIMAL_UVI_MEAN)


@dataclass(frozen=True)
class PlanAction:
    """One change of a plan: which setting, from what to what, in one sentence.

    Attributes
    ----------
    kind : str
        One of :data:`PLAN_ACTION_KINDS`.
    setting : str
        The :class:`audit_lib.pipeline.scenarios.PlanConfig` field it sets.
    value, before : object
        The new and the present value [``unit``].
    unit : str
        Unit of the values.
    text : str
        One sentence for the report.
    """

    kind: str
    setting: str
    value: object
    before: object
    unit: str
    text: str


@dataclass
class Plan:
    """The plan of one enclosure (see the module docstring).

    Attributes
    ----------
    actions : list of PlanAction
        The changes (empty: nothing to change).
    checks_before, checks_after : list of Check
        The checks now and with the plan applied (the what-if planner's).
    resolves_all : bool
        Whether every check is within range with its interval after the plan.
    reason : str
        One sentence: what the plan achieves, or why nothing the site has can do it.
    settings : dict
        Planner settings that apply the plan (``WhatIfPlanner.update(**settings)``).
    lamp : str
        The placed lamp planned.
    """

    actions: list
    checks_before: list
    checks_after: list
    resolves_all: bool
    reason: str
    settings: dict = field(default_factory=dict)
    lamp: str = ""


# --- solving for dimming and light hours ----------------------------------------------------


def output_share_range(checks, floor_uvi, share: float, factors) -> tuple[float, float]:
    """Output shares at which every output-dependent check is within range, interval included.

    Parameters
    ----------
    checks : iterable of Check
        Checks judged at output share ``share`` (with their targets).
    floor_uvi : numpy.ndarray
        The floor map at ``share`` [-].
    share : float
        The output share the checks were judged at [-].
    factors : (float, float)
        The scale factor's 90 % interval as multiples of it [-].

    Returns
    -------
    (float, float)
        Lowest and highest share; low > high when no share works [-].
    """
    low, high = 0.0, math.inf
    for c in checks:
        if c.id in OUTPUT_CHECKS and c.value:
            low = max(low, c.target_low * share / (c.value * factors[0]))
            high = min(high, c.target_high * share / (c.value * factors[1]))
        elif c.id == targets.REFUGE_FLOOR_SHARE and c.value is not None:
            v = np.sort(np.asarray(floor_uvi, dtype=float).ravel())
            k = max(1, math.ceil(c.target_low * v.size - 1e-9))
            if v[k - 1] > 0:
                high = min(high, targets.REFUGE_UVI_MAX * share / (factors[1] * v[k - 1]))
    return low, high


def _clock(hours: float) -> str:
    minutes = int(round(hours * 4)) * 15 % (24 * 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _light_hours_change(result, check):
    """On and off times that give the middle of the light-hours target, same day centre."""
    table = np.asarray(result.findings.profiles, dtype=float)
    lit = np.flatnonzero((table > 0).any(axis=1))
    step_h = 24.0 / table.shape[0]
    centre = 0.5 * (lit[0] + lit[-1] + 1) * step_h if lit.size else 12.0
    want = 0.5 * (check.target_low + check.target_high)
    return {"on": _clock(centre - want / 2), "off": _clock(centre + want / 2),
            "ramp_minutes": 0.0}


# --- candidates ------------------------------------------------------------------------------


def _heights(planner, config):
    record, top = planner.record, planner.record.height_m
    top = max(top, config.z_m)
    bask = [s.z_m for s in record.surfaces if s.kind == "basking"] or [0.0]
    lowest = max(bask) + LAMP_CLEARANCE_M
    if lowest >= top:
        return []
    return [round(float(z), 3) for z in np.linspace(lowest, top, 4)
            if abs(z - config.z_m) > 0.02]


def _positions(planner, config):
    w = planner.record.width_m
    return [round(w * f, 3) for f in (0.25, 0.5, 0.75) if abs(w * f - config.x_m) > 0.05]


def _emitter_counts(planner, config):
    model = planner.site.lamp_model(config.lamp_model)
    if model.kind != "led_array":
        return []
    uv = [g for g in model.grids if any(e.id == g.emitter and e.peak_nm < 400
                                        for e in model.emitters)]
    if not uv:
        return []
    n = config.uv_per_row or uv[0].columns
    return sorted({max(1, round(n * f)) for f in (0.5, 0.75, 1.5)} - {n})


def _options(planner, config):
    """Each placement control with its candidate settings: {kind: [changes, ...]}."""
    screens = [s for e in planner.site.records.enclosures for s in e.screens]
    offered = sorted({s.id for s in screens} | {"none"}) if screens else []
    return {
        "mount height": [{"z_m": z} for z in _heights(planner, config)],
        "position": [{"x_m": x} for x in _positions(planner, config)],
        "emitters": [{"uv_per_row": n} for n in _emitter_counts(planner, config)],
        "lamp model": [{"lamp_model": m, "output_share": 1.0}
                       for m in planner.lamp_models() if m != config.lamp_model],
        "screen": [{"screen": s} for s in offered if s != config.screen],
    }


def _coarse(options, n=3):
    """At most ``n`` of the options, spread over the list."""
    if len(options) <= n:
        return options
    picks = np.linspace(0, len(options) - 1, n).round().astype(int)
    return [options[i] for i in sorted(set(picks))]


#: Placement controls that can move each check that does not scale with output.
FIXED_BY = {targets.KEEPER_EXPOSURE_TIME: {"lamp model", "emitters", "screen"},
            targets.SHORT_UVB_SHARE: {"lamp model", "screen"}}


def _needed(checks) -> list[set]:
    """For each failing check that dimming cannot move, the controls that can fix it."""
    return [FIXED_BY[c.id] for c in _outside(checks) if c.id in FIXED_BY]


# --- judging a candidate ------------------------------------------------------------------------


def _outside(checks) -> list:
    return [c for c in checks if c.state not in (targets.WITHIN, targets.NO_DATA)]


def _complete(planner, result):
    """Dimming and light hours a placement needs: (extra kinds, changes, feasible)."""
    c = result.config
    extra, changes = [], {}
    factors = planner.uncertainty.scale_factors() if planner.uncertainty else (1.0, 1.0)
    lo, hi = output_share_range(result.checks, result.maps["floor"].values["uvi"],
                                c.output_share, factors)
    output_ok = lo <= c.output_share <= hi
    if not output_ok and lo <= hi and planner.site.lamp_model(c.lamp_model).kind in DIMMABLE_KINDS:
        share = min(math.sqrt(lo * hi) if math.isfinite(hi) and lo > 0 else hi, c.output_share)
        if lo <= share <= hi and share < c.output_share:
            extra.append("dimming")
            changes["output_share"] = round(share, 4)
            output_ok = True
    hours = next((k for k in result.checks if k.id == targets.LIGHT_HOURS), None)
    if hours is not None and hours.state != targets.WITHIN and result.findings.profiles is not None:
        extra.append("light hours")
        changes.update(_light_hours_change(result, hours))
    return extra, changes


def _gap(c) -> float:
    """How far a check's figure lies outside its target, relative to the limit [-]."""
    if c.value is None or c.state in (targets.WITHIN, targets.NO_DATA):
        return 0.0
    lo, hi = c.target_low, c.target_high
    v = c.value
    gap = (lo - v) / lo if v < lo and lo else (v - hi) / hi if v > hi and hi else 0.0
    return gap + 0.01  # a borderline figure inside the target still counts a little


def _score(checks):
    """Rank of a candidate: checks not within range, then their summed gaps."""
    return (len(_outside(checks)), round(sum(_gap(c) for c in checks), 6))


def _rank(entry):
    """Resolving plans by fewest changes; compromises by fewest checks out, then gaps."""
    score, changes = entry[0], entry[1]
    return (0, changes, score) if score[0] == 0 else (1, score, changes)


#: The search screens candidates on a grid this many times coarser than the planner's.
SCREEN_COARSENING = 2
#: Best screened candidates judged again on the planner's own grid; the best of them wins.
CONFIRMED = 3


def _judge(planner, base, kinds, change):
    """A candidate judged by ``planner``: (score, changes, kinds, settings, placement)."""
    planner.config = base
    result = planner.update(checks_only=True, **change)
    extra, more = _complete(planner, result)
    if more:
        result = planner.update(checks_only=True, **more)
    return (_score(result.checks), len(kinds) + len(extra), (*kinds, *extra),
            {**change, **more}, (kinds, change))


def _search(planner, base, checks) -> list:
    """Every candidate the search tries, judged by ``planner``, in the order tried."""
    needed = _needed(checks)
    options = _options(planner, base)
    tried = {}

    def judge(kinds, change):
        key = tuple(sorted(change.items()))
        if key not in tried:
            tried[key] = _judge(planner, base, kinds, change)
        return tried[key]

    def covers(kinds):
        return all(set(kinds) & need for need in needed)

    best = judge((), {})
    singles = {}
    if best[0][0]:
        for kind, values in options.items():
            for change in values:
                entry = judge((kind,), change)
                if entry[0] < singles.get(kind, ((math.inf,),))[0]:
                    singles[kind] = entry
                best = min(best, entry, key=_rank)
    hopeless = _too_narrow(planner, _outside(checks))
    if best[0][0] and not hopeless:  # pairs only when a plan can resolve every check
        for a, b in combinations(options, 2):
            if {a, b} == {"emitters", "lamp model"} or not covers((a, b)):
                continue
            pairs = [({**singles[a][3], **cb}) for cb in _coarse(options[b]) if a in singles]
            pairs += [({**ca, **singles[b][3]}) for ca in _coarse(options[a]) if b in singles]
            for change in pairs:
                change = {k: v for k, v in change.items()
                          if k not in ("on", "off", "ramp_minutes") and
                          not (k == "output_share" and v != 1.0)}
                best = min(best, judge((a, b), change), key=_rank)
    planner.config = base
    return list(tried.values())


def _screening_planner(planner: WhatIfPlanner) -> WhatIfPlanner:
    """The planner on a grid :data:`SCREEN_COARSENING` times coarser.

    Same code, same checks; lamps, spectra and schedules are shared with ``planner``.
    """
    screen = copy.copy(planner)
    if planner.spacing_m is not None:
        screen.spacing_m = planner.spacing_m * SCREEN_COARSENING
    screen.shape = tuple(max(8, n // SCREEN_COARSENING) for n in planner.shape)
    screen._cache = {k: planner._cache.setdefault(k, {})
                     for k in (*SITE_WIDE, "spectra", "profiles", "sun")}
    screen.result = None
    return screen


def find_plan(planner: WhatIfPlanner, checks_before=None) -> Plan:
    """The smallest set of changes to the planner's present plan that fixes every check.

    Candidates are screened on a coarser grid (:func:`_screening_planner`); the
    :data:`CONFIRMED` best are judged again by ``planner`` itself, so the plan and its
    ``checks_after`` are the planner's own.

    Parameters
    ----------
    planner : WhatIfPlanner
        Set to the enclosure as it is (the audit's output share, grid and uncertainty:
        :func:`audit_planner`); left at the chosen plan afterwards.
    checks_before : list of Check, optional
        The checks now (default: the planner's at its present plan).

    Returns
    -------
    Plan
    """
    base = planner.config
    start = planner.result or planner.update()
    before = list(checks_before if checks_before is not None else start.checks)
    screened = _search(_screening_planner(planner), base, start.checks)
    top = sorted(screened, key=_rank)[:CONFIRMED]  # ties keep the order tried
    best = min((_judge(planner, base, *entry[4]) for entry in top), key=_rank)
    planner.config = base
    score, _, kinds, settings, _ = best
    result = planner.update(**settings)  # the plan as the what-if panel shows it
    return _plan(planner, base, before, kinds, settings, result)


def _plan(planner, base, before, kinds, settings, result) -> Plan:
    after = list(result.checks)
    out = _outside(after)
    actions = [a for kind in kinds for a in _actions(planner, kind, base, result.config)]
    if not out:
        reason = ("No change is needed: every check is within range with its interval."
                  if not actions else
                  f"{len(actions)} change(s) bring every check within range with its 90 % "
                  "interval.")
    elif narrow := _too_narrow(planner, out):
        names = "; ".join(c.name for c in narrow)
        reason = (f"No change can bring {names} within range for sure: the target range is "
                  "narrower than the figure's own 90 % interval, so only a meter with a "
                  "smaller uncertainty (or readings corrected for its spectral mismatch) can "
                  "settle it; this is the best compromise.")
    else:
        names = "; ".join(f"{c.name} ({c.state})" for c in out)
        reason = (f"Nothing the site has can fix this with the lamps at hand: no mount height, "
                  f"position, dimming, emitter count, lamp model, screen or light hours tried "
                  f"brings {names} within range with its interval, so this is the best "
                  "compromise.")
    return Plan(actions=actions, checks_before=before, checks_after=after,
                resolves_all=not out, reason=reason,
                settings={**settings, **({"output_share": result.config.output_share})},
                lamp=base.lamp)


def _too_narrow(planner, checks) -> list:
    """Output-dependent checks whose target is narrower than their interval (ratio)."""
    if planner.uncertainty is None:
        return []
    f_lo, f_hi = planner.uncertainty.scale_factors()
    return [c for c in checks if c.id in OUTPUT_CHECKS and c.target_low > 0
            and c.target_high / c.target_low < f_hi / f_lo]


def _actions(planner, kind, base, new) -> list[PlanAction]:
    lamp = base.lamp
    if kind == "mount height":
        return [PlanAction(kind, "z_m", new.z_m, base.z_m, "m",
                           f"Mount the lamp {lamp} with its face {new.z_m:.2f} m above the "
                           f"floor (now {base.z_m:.2f} m).")]
    if kind == "position":
        return [PlanAction(kind, "x_m", new.x_m, base.x_m, "m",
                           f"Move the lamp {lamp} along the enclosure to {new.x_m:.2f} m from "
                           f"the left end (now {base.x_m:.2f} m).")]
    if kind == "dimming":
        if new.lamp_model == base.lamp_model:
            text = (f"Dim the lamp {lamp} to {100 * new.output_share / base.output_share:.0f} % "
                    "of its present output.")
        else:
            text = f"Dim the new lamp to {100 * new.output_share:.0f} % of its rated output."
        return [PlanAction(kind, "output_share", new.output_share, base.output_share, "-",
                           text)]
    if kind == "emitters":
        return [PlanAction(kind, "uv_per_row", new.uv_per_row, base.uv_per_row, "emitters",
                           f"Fit {new.uv_per_row} UV emitters per row in the lamp {lamp}.")]
    if kind == "lamp model":
        name = planner.lamp_models().get(new.lamp_model, new.lamp_model)
        return [PlanAction(kind, "lamp_model", new.lamp_model, base.lamp_model, "",
                           f"Replace the lamp {lamp} ({base.lamp_model}) with a new "
                           f"{name} ({new.lamp_model}).")]
    if kind == "screen":
        what = ("Take the screen away from under" if new.screen == "none"
                else f"Put the screen {new.screen} under")
        return [PlanAction(kind, "screen", new.screen, base.screen, "",
                           f"{what} the lamp {lamp} (now: {base.screen}).")]
    if kind == "light hours":
        return [PlanAction(kind, "on", f"{new.on}-{new.off}", base.on and f"{base.on}-{base.off}",
                           "", f"Switch the lamp {lamp} on at {new.on} and off at {new.off}.")]
    return []


# --- the audit's planner -------------------------------------------------------------------------


def audit_planner(site, audit) -> WhatIfPlanner:
    """A what-if planner set to the audited enclosure: its grid, output and uncertainty.

    At this setting the planner gives the report's checks (same maps, same scale).
    """
    main = max(audit.findings.uvi_at_peak, key=audit.findings.uvi_at_peak.get, default="")
    planner = WhatIfPlanner(site, audit.enclosure_id, lamp=main, audit_date=audit.audit_date,
                            spacing_m=audit.provenance.get("map_spacing_m"),
                            uncertainty=audit.findings.uncertainty)
    planner.update(output_share=audit.calibration)
    return planner


def plan_for_audit(site, audit) -> Plan | None:
    """The plan of an audited enclosure that is not "meets targets" (None otherwise)."""
    if audit.verdict not in (ATTENTION, targets.BORDERLINE) or not audit.scene.lamps:
        return None
    return find_plan(audit_planner(site, audit), checks_before=audit.checks)


def audit_with_plan(site, enclosure_id: str, *, with_plan: bool = True, **kwargs):
    """:func:`audit_lib.pipeline.audit.audit_enclosure` with ``plan`` set (the workbook's call).

    ``with_plan=False`` skips the search (``plan`` stays None).
    """
    audit = audit_enclosure(site, enclosure_id, **kwargs)
    if with_plan:
        audit.plan = plan_for_audit(site, audit)
    return audit


def plan_entry(plan: Plan | None, check_entry) -> dict | None:
    """The ``plan`` of an enclosure in ``results.json`` (``check_entry`` formats a check)."""
    if plan is None:
        return None
    return {"lamp": plan.lamp,
            "actions": [{"kind": a.kind, "setting": a.setting, "value": a.value,
                         "before": a.before, "unit": a.unit, "text": a.text}
                        for a in plan.actions],
            "checks_after": [check_entry(c) for c in plan.checks_after],
            "resolves_all": plan.resolves_all, "reason": plan.reason}


__all__ = ["PLAN_ACTION_KINDS", "Plan", "PlanAction", "audit_planner", "audit_with_plan",
           "find_plan", "output_share_range", "plan_entry", "plan_for_audit"]
