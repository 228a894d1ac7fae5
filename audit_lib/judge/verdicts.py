"""Verdicts: every check of one enclosure and species, the overall state, computed actions.

:func:`assess_enclosure` runs the checks of :mod:`audit_lib.judge.targets` on the figures of one
enclosure and species and bundles them into a :class:`Verdict`. :func:`recommend_actions`
computes actions from the checks and from numbers or functions that the caller takes from the
scene model and the history (the bounded height search of :mod:`audit_lib.scene.inverse`, an
emitter count function, a screen's transmission, a replacement forecast date). No action
text is canned: each sentence carries its own numbers. Checks are found by their stable id
(:data:`audit_lib.judge.targets.CHECK_IDS`), never by their wording. :func:`recommendation`
says "no change needed" only when every check is within range.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Callable
from dataclasses import dataclass

from audit_lib.errors import InputError
from audit_lib.judge.targets import (
    ABOVE,
    BASKING_UVI_MAX,
    BELOW,
    BORDERLINE,
    COMMON_PRACTICE,
    KEEPER_EXPOSURE_TIME,
    KEEPER_TIME_S,
    LIGHT_HOURS,
    LIGHT_HOURS_RANGE,
    NO_DATA,
    REFUGE_FLOOR_SHARE,
    REFUGE_MIN_SHARE,
    REFUGE_UVI_MAX,
    SHORT_UVB_SHARE,
    SHORT_UVB_TOLERANCE,
    UVI_TOP_CHECKS,
    SpeciesTarget,
    Zone,
    check_basking_max,
    check_keeper_limit,
    check_light_hours,
    check_mean_exposure,
    check_refuge,
    check_short_wave_share,
    check_used_area_max,
    with_interval,
)

MEETS, ATTENTION = "meets targets", "needs attention"
#: Overall states. ``BORDERLINE`` (the checks' word): no check is surely out of range but at
#: least one check's 90 % interval crosses a limit, so the enclosure may or may not meet
#: its targets; it is counted apart from both "meets targets" and "needs attention".
OVERALL_STATES = (MEETS, ATTENTION, BORDERLINE, NO_DATA)


@dataclass(frozen=True)
class Action:
    """A recommended action with the numbers it rests on.

    Attributes
    ----------
    kind : str
        One of :data:`ACTION_KINDS`.
    check : str
        Id of the check it answers (or ``""``).
    text : str
        One sentence for the report.
    value : float or None
        The key figure (e.g. height change) [``unit``].
    unit : str
        Its unit.
    lamp : str or None
        The lamp it concerns, if one.
    height_m : float or None
        New mount height of the lamp face above the floor when the action moves a lamp [m].
    """

    kind: str
    check: str
    text: str
    value: float | None = None
    unit: str = ""
    lamp: str | None = None
    height_m: float | None = None


#: Kinds of :class:`Action` (stable: ``results.json`` carries them).
ACTION_KINDS = ("move lamp", "change lamp", "change emitters", "remove screen", "add refuge",
                "replace lamp", "change photoperiod", "limit keeper time", "check spectrum")


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

    "needs attention" if any check is out of range (its whole interval outside); "not enough
    data" if the basking maximum is missing; "borderline" if any check is borderline (its
    interval crosses a limit); otherwise "meets targets", naming any check that lacked data.
    """
    out = [c for c in checks if c.state in (BELOW, ABOVE)]
    missing = [c for c in checks if c.state == NO_DATA]
    if out:
        names = "; ".join(f"{c.name} {c.state}" for c in out)
        return ATTENTION, f"{len(out)} of {len(checks)} checks are out of range: {names}."
    if not checks or any(c.id in UVI_TOP_CHECKS for c in missing):
        return NO_DATA, "The basking UV Index maximum is missing, so the zone cannot be judged."
    names = ", ".join(c.name for c in missing)
    extra = f" ({len(missing)} could not be made for lack of data: {names})" if missing else ""
    close = [c for c in checks if c.state == BORDERLINE]
    if close:
        names = "; ".join(c.name for c in close)
        return BORDERLINE, (f"No check is surely out of range, but {len(close)} of "
                            f"{len(checks)} are borderline (the figure's 90 % interval crosses "
                            f"a limit): {names}{extra}.")
    made = len(checks) - len(missing)
    lead = "The one check made is" if made == 1 else f"All {made} checks made are"
    return MEETS, f"{lead} within range{extra}."


def _top_words(check) -> str:
    """What the UV Index top check measures, for action sentences."""
    if check.id == BASKING_UVI_MAX:
        return "basking UV Index"
    return "highest UV Index over the area used"


def _mid(low, high):
    return 0.5 * (low + high)


def _height_actions(bask, height_search, goal) -> list[Action]:
    """Move the lamp to the bounded search's height, or say plainly that no height can."""
    target = _mid(bask.target_low, bask.target_high)
    answer = height_search((bask.target_low, bask.target_high), target)
    lamp = answer.lamp
    if answer.achievable:
        change = answer.suggested_height_m - answer.present_height_m
        if abs(change) < 0.005:
            return []
        verb = "Raise" if change > 0 else "Lower"
        above = answer.suggested_height_m - answer.surface_z_m
        now = answer.present_height_m - answer.surface_z_m
        text = (f"{verb} the lamp {lamp} by {abs(change) * 100:.0f} cm (from {now:.2f} m to "
                f"{above:.2f} m above the basking surface) {goal}.")
        return [Action("move lamp", bask.id, text, change, "m", lamp,
                       answer.suggested_height_m)]
    if answer.side == "above":
        where = (f"up to the top of the enclosure ({answer.top_m:.2f} m above the floor, "
                 f"{answer.top_m - answer.surface_z_m:.2f} m above the basking surface)")
        fix = "use a weaker lamp, fewer emitters or a UV-reducing screen"
    else:
        where = (f"down to {answer.heights_m.min() - answer.surface_z_m:.2f} m above the "
                 "basking surface")
        fix = "use a stronger lamp or more emitters"
    text = (f"No mount height of the lamp {lamp} {where} brings the {_top_words(bask)} into "
            f"{bask.target_low:g}-{bask.target_high:g}: the closest is "
            f"{answer.suggested_uvi:.1f} at {answer.suggested_height_m:.2f} m above the floor; "
            f"{fix}.")
    return [Action("change lamp", bask.id, text, answer.suggested_uvi, "UVI", lamp)]


def _basking_actions(bask, height_search, emitters_for_uvi, current_emitters,
                     screen_transmission, lamp) -> list[Action]:
    target = _mid(bask.target_low, bask.target_high)
    goal = f"to bring the {_top_words(bask)} from {bask.value:.1f} to about {target:.1f}"
    out = []
    if height_search is not None:
        out += _height_actions(bask, height_search, goal)
    if emitters_for_uvi is not None and current_emitters is not None:
        n = emitters_for_uvi(target)
        if n is not None and int(n) > 0 and int(n) != current_emitters:
            text = f"Use {int(n)} emitters instead of {current_emitters} {goal}."
            out.append(Action("change emitters", bask.id, text, float(n), "emitters",
                              lamp or None))
    if bask.state == BELOW and screen_transmission is not None and 0 < screen_transmission < 1:
        without = bask.value / screen_transmission
        text = (
            f"Remove or replace the screen under the lamp (it passes "
            f"{screen_transmission * 100:.0f} % of the UV): the basking UV Index would rise "
            f"from {bask.value:.1f} to about {without:.1f}."
        )
        out.append(Action("remove screen", bask.id, text, without, "UVI"))
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
    return Action("replace lamp", "", text, days, "days", lamp or None)


def recommend_actions(
    checks,
    *,
    height_search: Callable | None = None,
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
    height_search : callable, optional
        ``height_search(uvi_range, aim_uvi)`` returns a
        :class:`audit_lib.scene.inverse.HeightAnswer`-like record (``lamp``, ``achievable``,
        ``suggested_height_m``, ``suggested_uvi``, ``present_height_m``, ``surface_z_m``,
        ``top_m``, ``side``, ``heights_m``): the bounded height search of the scene model.
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
    by_id = {c.id: c for c in checks}
    actions: list[Action] = []
    bask = by_id.get(BASKING_UVI_MAX) or next(
        (by_id[i] for i in UVI_TOP_CHECKS if i in by_id), None)  # the UV Index top check
    if bask is not None and bask.state in (BELOW, ABOVE):
        actions += _basking_actions(
            bask, height_search, emitters_for_uvi, current_emitters, screen_transmission, lamp,
        )  # fmt: skip
    refuge = by_id.get(REFUGE_FLOOR_SHARE)
    if refuge is not None and refuge.state == BELOW and floor_area_m2:
        need = (refuge.target_low - refuge.value) * floor_area_m2
        text = (
            f"Add at least {need:.2f} m2 of low-UV refuge (shade or hide): now "
            f"{refuge.value * 100:.0f} % of the {floor_area_m2:.2f} m2 floor, target at least "
            f"{refuge.target_low * 100:.0f} %."
        )
        actions.append(Action("add refuge", refuge.id, text, need, "m2"))
    hours = by_id.get(LIGHT_HOURS)
    if hours is not None and hours.state in (BELOW, ABOVE):
        bound = hours.target_low if hours.state == BELOW else hours.target_high
        change = bound - hours.value
        verb = "Lengthen" if change > 0 else "Shorten"
        text = (
            f"{verb} the light period by {abs(change):.1f} h (now {hours.value:.1f} h, "
            f"target {hours.target_low:.1f}-{hours.target_high:.1f} h)."
        )
        actions.append(Action("change photoperiod", hours.id, text, change, "h"))
    keeper = by_id.get(KEEPER_EXPOSURE_TIME)
    if keeper is not None and keeper.state == BELOW:
        text = (
            f"Keep work near the lamp under {keeper.value:.0f} min a day or switch the UV lamp "
            "off while working, and wear UV-protective eyewear."
        )
        actions.append(Action("limit keeper time", keeper.id, text, keeper.value, "min"))
    short = by_id.get(SHORT_UVB_SHARE)
    if short is not None and short.state == ABOVE:
        text = (
            f"Check the lamp's spectrum: {short.value * 100:.2f} % of its UVB is below 290 nm; "
            "a lamp or filter without this short-wave part is closer to sunlight."
        )
        actions.append(Action("check spectrum", short.id, text, short.value, "-"))
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
    used_area_max_uvi=None,
    intervals=None,
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
    used_area_max_uvi : float, optional
        Highest UV Index over the area the animal uses: judged instead of the basking
        maximum for a species given UV as a whole-enclosure gradient
        (:data:`audit_lib.judge.targets.PROVISION_CHECKS`) [-].
    intervals : dict of str to (float, float), optional
        Check id to the figure's 90 % interval (:func:`audit_lib.judge.targets.with_interval`
        sets it and applies the borderline rule) [the check's unit].
    **action_inputs
        Passed to :func:`recommend_actions` (``height_search``, ``screen_transmission``, ...).

    Returns
    -------
    Verdict
    """
    if species.zone != zone.zone:
        raise InputError(
            f"species {species.id!r} is in zone {species.zone}, not {zone.zone}", field="zone"
        )
    top = (check_used_area_max(used_area_max_uvi, zone) if species.uv_provision == "gradient"
           else check_basking_max(basking_max_uvi, zone))
    checks = (
        top,
        check_mean_exposure(mean_uvi, zone),
        check_refuge(refuge_share, min_share=refuge_min_share, refuge_uvi_max=refuge_uvi_max),
        check_light_hours(light_hours, light_hours_range, light_hours_source),
        check_short_wave_share(short_uvb_fraction, sun_short_uvb_fraction, short_uvb_tolerance),
        check_keeper_limit(
            keeper_limit_s, working_time_s=keeper_time_s, working_distance_m=working_distance_m
        ),
    )
    if intervals:
        checks = tuple(with_interval(c, *intervals.get(c.id, (None, None))) for c in checks)
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


#: The recommendation when every check made is within range and nothing is to be done.
NO_CHANGE = "No change needed: every check made is within range."


def unanswered_sentence(checks, actions) -> str:
    """One plain sentence naming the out-of-range checks that no action answers ("" if none)."""
    answered = {a.check for a in actions}
    left = [c for c in checks if c.state in (BELOW, ABOVE) and c.id not in answered]
    if not left:
        return ""
    names = "; ".join(f"{c.name} {c.state}" for c in left)
    return (f"No single change computed here brings {names} into range: review the lamp, its "
            "schedule and the furnishings with the keeper.")


def recommendation(verdicts) -> str:
    """The recommendation that follows the checks of one or more verdicts.

    "No change needed" only when every check made is within range and no action (such as
    a planned lamp replacement) is due; otherwise the actions' sentences, followed by a plain
    sentence for any out-of-range check that no single change computed here fixes.
    """
    verdicts = list(verdicts)
    if not verdicts:
        return "No species with a known zone is chosen: no targets to compare with."
    checks = [c for v in verdicts for c in v.checks]
    seen, actions = set(), []
    for a in (a for v in verdicts for a in v.actions):
        if a.text not in seen:
            seen.add(a.text)
            actions.append(a)
    out = [c for c in checks if c.state in (BELOW, ABOVE)]
    close = [c for c in checks if c.state == BORDERLINE]
    if not out and not actions and not close:
        return NO_CHANGE
    parts = [a.text for a in actions]
    left = unanswered_sentence(checks, actions)
    if left:
        parts.append(left)
    if close:
        names = "; ".join(c.name for c in close)
        parts.append(f"Too close to call: {names}. Measure again with a recently calibrated "
                     "meter, or follow the plan to gain margin.")
    return " ".join(parts)
