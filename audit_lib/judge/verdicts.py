"""Verdicts: every check of one enclosure and species, the overall state, computed actions.

:func:`assess_enclosure` runs the checks of :mod:`audit_lib.judge.targets` on the figures of one
enclosure and species and bundles them into a :class:`Verdict`. :func:`recommend_actions`
computes actions from the checks and from numbers or functions that the caller takes from the
scene model and the history (a height-for-target function, an emitter count function, a
screen's transmission, a replacement forecast date), so this module imports neither the scene,
the site nor the history. No action text is canned: each sentence carries its own numbers.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Callable
from dataclasses import dataclass

from audit_lib.errors import InputError
from audit_lib.judge.targets import (
    ABOVE,
    BELOW,
    COMMON_PRACTICE,
    KEEPER_TIME_S,
    LIGHT_HOURS_RANGE,
    NO_DATA,
    REFUGE_MIN_SHARE,
    REFUGE_UVI_MAX,
    SHORT_UVB_TOLERANCE,
    SpeciesTarget,
    Zone,
    check_basking_max,
    check_keeper_limit,
    check_light_hours,
    check_mean_exposure,
    check_refuge,
    check_short_wave_share,
)

MEETS, ATTENTION = "meets targets", "needs attention"
OVERALL_STATES = (MEETS, ATTENTION, NO_DATA)


@dataclass(frozen=True)
class Action:
    """A recommended action with the numbers it rests on.

    Attributes
    ----------
    kind : str
        ``"move lamp"``, ``"change emitters"``, ``"remove screen"``, ``"add refuge"``,
        ``"replace lamp"``, ``"change photoperiod"``, ``"limit keeper time"``,
        ``"check spectrum"``.
    check : str
        Name of the check it answers (or ``""``).
    text : str
        One sentence for the report.
    value : float or None
        The key figure (e.g. height change) [``unit``].
    unit : str
        Its unit.
    """

    kind: str
    check: str
    text: str
    value: float | None = None
    unit: str = ""


@dataclass(frozen=True)
class Verdict:
    """The overall result for one enclosure and species.

    Attributes
    ----------
    enclosure : str
        Enclosure id.
    species : str
        Species id.
    state : str
        One of :data:`OVERALL_STATES`.
    reason : str
        One sentence.
    checks : tuple of Check
        Every check made.
    actions : tuple of Action
        Recommended actions.
    notes : tuple of str
        Caveats the report must show (e.g. targets from memory, demo species data).
    """

    enclosure: str
    species: str
    state: str
    reason: str
    checks: tuple = ()
    actions: tuple = ()
    notes: tuple = ()


# --- verdict and actions ------------------------------------------------------------------


def overall_state(checks) -> tuple[str, str]:
    """Overall state and reason from a set of checks.

    "needs attention" if any check is out of range; "not enough data" if the basking maximum
    is missing; otherwise "meets targets", naming any check that lacked data.
    """
    out = [c for c in checks if c.state in (BELOW, ABOVE)]
    missing = [c for c in checks if c.state == NO_DATA]
    if out:
        names = "; ".join(f"{c.name} {c.state}" for c in out)
        return ATTENTION, f"{len(out)} of {len(checks)} checks are out of range: {names}."
    if not checks or any(c.name == "basking UV Index maximum" for c in missing):
        return NO_DATA, "The basking UV Index maximum is missing, so the zone cannot be judged."
    names = ", ".join(c.name for c in missing)
    extra = f" ({len(missing)} could not be made for lack of data: {names})" if missing else ""
    made = len(checks) - len(missing)
    lead = "The one check made is" if made == 1 else f"All {made} checks made are"
    return MEETS, f"{lead} within range{extra}."


def _mid(low, high):
    return 0.5 * (low + high)


def _basking_actions(bask, height_for_uvi, current_height_m, emitters_for_uvi, current_emitters,
                     screen_transmission, lamp) -> list[Action]:  # fmt: skip
    target = _mid(bask.target_low, bask.target_high)
    goal = f"to bring the basking UV Index from {bask.value:.1f} to about {target:.1f}"
    out = []
    if height_for_uvi is not None and current_height_m is not None:
        new_h = height_for_uvi(target)
        if new_h is not None and math.isfinite(new_h) and new_h > 0:
            change = new_h - current_height_m
            verb = "Raise" if change > 0 else "Lower"
            name = f" {lamp}" if lamp else ""
            text = (
                f"{verb} the lamp{name} by {abs(change) * 100:.0f} cm (from "
                f"{current_height_m:.2f} m to {new_h:.2f} m above the basking surface) {goal}."
            )
            out.append(Action("move lamp", bask.name, text, change, "m"))
    if emitters_for_uvi is not None and current_emitters is not None:
        n = emitters_for_uvi(target)
        if n is not None and int(n) > 0 and int(n) != current_emitters:
            text = f"Use {int(n)} emitters instead of {current_emitters} {goal}."
            out.append(Action("change emitters", bask.name, text, float(n), "emitters"))
    if bask.state == BELOW and screen_transmission is not None and 0 < screen_transmission < 1:
        without = bask.value / screen_transmission
        text = (
            f"Remove or replace the screen under the lamp (it passes "
            f"{screen_transmission * 100:.0f} % of the UV): the basking UV Index would rise "
            f"from {bask.value:.1f} to about {without:.1f}."
        )
        out.append(Action("remove screen", bask.name, text, without, "UVI"))
    return out


def _replacement_action(replacement_date, audit_date, lamp) -> Action:
    name = f"lamp {lamp}" if lamp else "the lamp"
    when = replacement_date.isoformat()
    if audit_date is not None and replacement_date <= audit_date:
        text = f"Replace {name} now: its output was forecast to fall below target on {when}."
    else:
        text = (
            f"Plan to replace {name} by {when}, when its output is forecast to fall below target."
        )
    days = None if audit_date is None else float((replacement_date - audit_date).days)
    return Action("replace lamp", "", text, days, "days")


def recommend_actions(
    checks,
    *,
    height_for_uvi: Callable[[float], float] | None = None,
    current_height_m: float | None = None,
    emitters_for_uvi: Callable[[float], int] | None = None,
    current_emitters: int | None = None,
    screen_transmission: float | None = None,
    floor_area_m2: float | None = None,
    replacement_date: dt.date | None = None,
    audit_date: dt.date | None = None,
    lamp: str = "",
) -> list[Action]:
    """Actions computed from the checks and from numbers or functions of the scene model.

    The basking target is the middle of the zone's maximum range; the refuge target the
    check's minimum share; the photoperiod target the nearer end of its range.

    Parameters
    ----------
    checks : iterable of Check
        Results of the check functions.
    height_for_uvi : callable, optional
        Lamp height above the basking surface that gives a basking UV Index [UVI -> m].
    current_height_m : float, optional
        Present height [m].
    emitters_for_uvi : callable, optional
        Number of emitters that gives a basking UV Index [UVI -> count].
    current_emitters : int, optional
        Present number of emitters.
    screen_transmission : float, optional
        UV transmission of a screen between lamp and basking area [-].
    floor_area_m2 : float, optional
        Floor area, to size a refuge [m2].
    replacement_date : datetime.date, optional
        Date the lamp's output is forecast to fall below target (from the history's decay fit).
    audit_date : datetime.date, optional
        Date of the audit (replacement "now" if the forecast date is not after it).
    lamp : str
        Lamp id named in the text.

    Returns
    -------
    list of Action
    """
    by_name = {c.name: c for c in checks}
    actions: list[Action] = []
    bask = by_name.get("basking UV Index maximum")
    if bask is not None and bask.state in (BELOW, ABOVE):
        actions += _basking_actions(
            bask, height_for_uvi, current_height_m, emitters_for_uvi, current_emitters,
            screen_transmission, lamp,
        )  # fmt: skip
    refuge = by_name.get("low-UV refuge share of floor")
    if refuge is not None and refuge.state == BELOW and floor_area_m2:
        need = (refuge.target_low - refuge.value) * floor_area_m2
        text = (
            f"Add at least {need:.2f} m2 of low-UV refuge (shade or hide): now "
            f"{refuge.value * 100:.0f} % of the {floor_area_m2:.2f} m2 floor, target at least "
            f"{refuge.target_low * 100:.0f} %."
        )
        actions.append(Action("add refuge", refuge.name, text, need, "m2"))
    hours = by_name.get("hours of light")
    if hours is not None and hours.state in (BELOW, ABOVE):
        bound = hours.target_low if hours.state == BELOW else hours.target_high
        change = bound - hours.value
        verb = "Lengthen" if change > 0 else "Shorten"
        text = (
            f"{verb} the light period by {abs(change):.1f} h (now {hours.value:.1f} h, "
            f"target {hours.target_low:.1f}-{hours.target_high:.1f} h)."
        )
        actions.append(Action("change photoperiod", hours.name, text, change, "h"))
    keeper = by_name.get("keeper exposure limit")
    if keeper is not None and keeper.state == BELOW:
        text = (
            f"Keep work near the lamp under {keeper.value:.0f} min a day or switch the UV lamp "
            "off while working, and wear UV-protective eyewear."
        )
        actions.append(Action("limit keeper time", keeper.name, text, keeper.value, "min"))
    short = by_name.get("short-wave UVB share (280-290 nm)")
    if short is not None and short.state == ABOVE:
        text = (
            f"Check the lamp's spectrum: {short.value * 100:.2f} % of its UVB is below 290 nm; "
            "a lamp or filter without this short-wave part is closer to sunlight."
        )
        actions.append(Action("check spectrum", short.name, text, short.value, "-"))
    if replacement_date is not None:
        actions.append(_replacement_action(replacement_date, audit_date, lamp))
    return actions


def assess_enclosure(
    enclosure: str,
    species: SpeciesTarget,
    zone: Zone,
    *,
    basking_max_uvi=None,
    mean_uvi=None,
    refuge_share=None,
    refuge_min_share: float = REFUGE_MIN_SHARE,
    refuge_uvi_max: float = REFUGE_UVI_MAX,
    light_hours=None,
    light_hours_range=LIGHT_HOURS_RANGE,
    light_hours_source: str = COMMON_PRACTICE,
    short_uvb_fraction=None,
    sun_short_uvb_fraction: float = 0.0,
    short_uvb_tolerance: float = SHORT_UVB_TOLERANCE,
    keeper_limit_s=None,
    keeper_time_s: float = KEEPER_TIME_S,
    working_distance_m=None,
    **action_inputs,
) -> Verdict:
    """Every check for one enclosure and species, the overall verdict and the actions.

    Parameters
    ----------
    enclosure : str
        Enclosure id.
    species : SpeciesTarget
        The species (its zone must match ``zone``).
    zone : Zone
        Target ranges.
    basking_max_uvi, mean_uvi, refuge_share, light_hours, short_uvb_fraction, keeper_limit_s
        Figures for the checks (None: not enough data) [UVI, UVI, -, h, -, s].
    refuge_min_share, refuge_uvi_max : float
        Refuge target share of the floor and the UV Index at or below which a place counts
        as refuge (project defaults, common practice) [-].
    light_hours_range : (float, float)
        Target hours of light [h].
    light_hours_source : str
        Source of that range.
    sun_short_uvb_fraction : float
        Sunlight's 280-290 nm share of UVB [-].
    short_uvb_tolerance : float
        Share allowed above sunlight's (project default, not a published limit) [-].
    keeper_time_s : float
        Keeper's daily time at the working distance [s].
    working_distance_m : float, optional
        Keeper's working distance [m].
    **action_inputs
        Passed to :func:`recommend_actions` (``height_for_uvi``, ``current_height_m``, ...).

    Returns
    -------
    Verdict
    """
    if species.zone != zone.zone:
        raise InputError(
            f"species {species.id!r} is in zone {species.zone}, not {zone.zone}", field="zone"
        )
    checks = (
        check_basking_max(basking_max_uvi, zone),
        check_mean_exposure(mean_uvi, zone),
        check_refuge(refuge_share, min_share=refuge_min_share, refuge_uvi_max=refuge_uvi_max),
        check_light_hours(light_hours, light_hours_range, light_hours_source),
        check_short_wave_share(short_uvb_fraction, sun_short_uvb_fraction, short_uvb_tolerance),
        check_keeper_limit(
            keeper_limit_s, working_time_s=keeper_time_s, working_distance_m=working_distance_m
        ),
    )
    state, reason = overall_state(checks)
    actions = tuple(recommend_actions(checks, **action_inputs))
    notes = []
    if zone.status != "read":
        notes.append(
            f"Zone {zone.zone} target ranges are {zone.status}: check them against "
            f"{zone.source} before relying on this verdict."
        )
    if species.status != "site":
        notes.append(
            f"The zone of {species.scientific_name} comes from the library's species table "
            f"(status: {species.status}); check it with your own sources."
        )
    return Verdict(enclosure, species.id, state, reason, checks, actions, tuple(notes))
