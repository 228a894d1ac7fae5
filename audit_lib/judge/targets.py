"""Targets by species group and the checks of an enclosure's figures against them.

The zone and species tables (Ferguson et al. 2010 zones, FROM MEMORY until checked against
the paper; demo species) are in :mod:`audit_lib.judge.zones` and re-exported here.

Each check is a :class:`Check` record (stable id, figure, unit, target range, state, source,
basis, one-sentence reason). Code finds a check by its id (:data:`CHECK_IDS`), never by its
wording. ``basis`` says what the target rests on (published, project default, from memory,
or a site setting; :mod:`audit_lib.judge.defaults`), ``source`` names it in words. Which
checks a species gets depends on how it is given UV (:data:`PROVISION_CHECK_IDS`).
:mod:`audit_lib.judge.verdicts` bundles the checks of one enclosure and species into a verdict
with computed actions.

Boundaries are inclusive: a figure exactly on a limit is within range.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, replace

from audit_lib.judge.defaults import (  # noqa: F401 - re-exported for callers
    BASES,
    COMMON_PRACTICE,
    FROM_MEMORY,
    KEEPER_TIME_S,
    LIGHT_HOURS_RANGE,
    PROJECT_DEFAULT,
    PUBLISHED,
    REFUGE_MIN_SHARE,
    REFUGE_UVI_MAX,
    SHORT_UVB_TOLERANCE,
    SITE_SETTING,
    SITE_TARGETS_TABLE,
    TargetSettings,
    setting_basis,
    zone_basis,
)
from audit_lib.judge.zones import (  # noqa: F401 - the tables, re-exported for callers
    DATA_DIR,
    FERGUSON_SOURCE,
    UV_PROVISION_LABELS,
    SpeciesTarget,
    Zone,
    read_species_table,
    read_zone_table,
    species_targets,
)
from audit_lib.light.sun import day_length_h

WITHIN, BELOW, ABOVE, NO_DATA = "within range", "below range", "above range", "not enough data"
#: The figure's uncertainty interval crosses a limit: neither inside nor outside for sure.
BORDERLINE = "borderline"
STATES = (WITHIN, BELOW, ABOVE, BORDERLINE, NO_DATA)

#: Stable ids of the checks, in the order a verdict lists them. They are part of the
#: ``results.json`` contract (docs/batch-reports.md); the English names may change, these not.
BASKING_UVI_MAX = "basking_uvi_max"  # highest UV Index on the basking surfaces
ANIMAL_UVI_MEAN = "animal_uvi_mean"  # time-budget mean UV Index of the animal while active
REFUGE_FLOOR_SHARE = "refuge_floor_share"  # floor share at or below the refuge UV Index
LIGHT_HOURS = "light_hours"  # hours with any lamp on
SHORT_UVB_SHARE = "short_uvb_share"  # 280-290 nm share of the lamps' UVB
KEEPER_EXPOSURE_TIME = "keeper_exposure_time"  # keeper's permissible daily time [min]
#: Highest UV Index over the area the animal uses (whole-enclosure gradient species; takes
#: the place of ``basking_uvi_max`` in their verdicts, see :data:`PROVISION_CHECKS`).
USED_AREA_UVI_MAX = "used_area_uvi_max"
CHECK_IDS = (BASKING_UVI_MAX, ANIMAL_UVI_MEAN, REFUGE_FLOOR_SHARE, LIGHT_HOURS, SHORT_UVB_SHARE,
             KEEPER_EXPOSURE_TIME, USED_AREA_UVI_MAX)
#: The check of the UV Index top that each way of providing UV gets (the other checks apply
#: to both): a basking patch is judged at the patch against the zone's maximum range, a
#: whole-enclosure gradient over the area the animal uses against the zone's mean range.
PROVISION_CHECKS = {"basking_patch": BASKING_UVI_MAX, "gradient": USED_AREA_UVI_MAX}
#: Check ids in the order a verdict of each way of providing UV lists them.
PROVISION_CHECK_IDS = {
    provision: (top, *(c for c in CHECK_IDS if c not in PROVISION_CHECKS.values()))
    for provision, top in PROVISION_CHECKS.items()
}
#: Either UV Index top check (code that wants "the" top check of a verdict looks for these).
UVI_TOP_CHECKS = (BASKING_UVI_MAX, USED_AREA_UVI_MAX)


@dataclass(frozen=True)
class Check:
    """One figure compared with its target range.

    Attributes
    ----------
    name : str
        What is checked, e.g. ``"basking UV Index maximum"``.
    value : float or None
        The measured or modelled figure (None: not enough data) [``unit``].
    unit : str
        Unit of value and targets.
    target_low, target_high : float
        Inclusive target range (``inf`` for no upper limit) [``unit``].
    state : str
        One of :data:`STATES`.
    source : str
        Where the target comes from.
    reason : str
        One sentence saying why the state is what it is.
    status : str
        How far the target values are checked ("from memory", "common practice", ...).
    id : str
        Stable id, one of :data:`CHECK_IDS` (what code and results files match on).
    basis : str
        What the target rests on, one of :data:`BASES` (empty until set).
    value_low, value_high : float or None
        The figure's 90 % uncertainty interval, containing ``value`` (None: not estimated)
        [``unit``].
    """

    name: str
    value: float | None
    unit: str
    target_low: float
    target_high: float
    state: str
    source: str
    reason: str
    status: str = ""
    id: str = ""
    basis: str = ""
    value_low: float | None = None
    value_high: float | None = None


# --- checks -------------------------------------------------------------------------------


def classify(value, low: float, high: float) -> str:
    """State of a figure against an inclusive range: within, below, above or not enough data.

    Parameters
    ----------
    value : float or None
        The figure (None or NaN: not enough data).
    low, high : float
        Inclusive limits.

    Returns
    -------
    str
        One of :data:`STATES`.
    """
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return NO_DATA
    if value < low:
        return BELOW
    if value > high:
        return ABOVE
    return WITHIN


def _fmt(x: float, digits: int = 2) -> str:
    if x is None:
        return "n/a"
    if math.isinf(x):
        return "no limit"
    return f"{x:.{digits}f}".rstrip("0").rstrip(".") if digits else f"{x:.0f}"


def _range_check(check_id, name, value, unit, low, high, source, status, what,
                 digits=2, basis="") -> Check:
    state = classify(value, low, high)
    target = (
        f"{_fmt(low, digits)}-{_fmt(high, digits)}"
        if not math.isinf(high)
        else (f"of at least {_fmt(low, digits)}")
    )
    unit_text = f" {unit}" if unit not in ("", "-", "UVI") else ""
    if state == NO_DATA:
        reason = f"No {what} is available to compare with the target {target}{unit_text}."
    else:
        words = {WITHIN: "within", BELOW: "below", ABOVE: "above"}[state]
        value_text = _fmt(value, digits)
        reason = f"The {what} is {value_text}{unit_text}, {words} the target {target}{unit_text}."
    return Check(
        name,
        None if state == NO_DATA else float(value),
        unit,
        float(low),
        float(high),
        state,
        source,
        reason,
        status,
        check_id,
        basis,
    )


def check_basking_max(max_uvi, zone: Zone) -> Check:
    """Basking-patch maximum UV Index against the zone's maximum range (Ferguson et al. 2010).

    The check of species given UV as a basking patch with low UV elsewhere (the low-UV
    remainder is :func:`check_refuge`). Judging the patch on the zone's maximum range is our
    reading of the paper's maximum-exposure ranges; the ranges are from memory until read.

    Parameters
    ----------
    max_uvi : float or None
        Highest UV Index at the basking area at full output [-].
    zone : Zone
        The species' zone.
    """
    return _range_check(
        BASKING_UVI_MAX,
        "basking UV Index maximum",
        max_uvi,
        "UVI",
        zone.max_uvi_low,
        zone.max_uvi_high,
        f"{zone.source}, zone {zone.zone} maximum range (values {zone.status})",
        zone.status,
        "highest basking UV Index",
        basis=zone_basis(zone),
    )


def check_used_area_max(max_uvi, zone: Zone) -> Check:
    """Highest UV Index over the area the animal uses against the zone's mean range.

    The check of species given UV as a whole-enclosure gradient: the top of the gradient,
    wherever the animal goes, should lie in the zone's mean-exposure range (Ferguson et al.
    2010; ranges from memory) -- not below it (too little UV anywhere) and not above it (a
    basking-patch level the species is not given a patch for). Using the mean range for a
    gradient is our own rule, built on the paper's two ranges.

    Parameters
    ----------
    max_uvi : float or None
        Highest UV Index over the places of the time budget (all surfaces and the floor
        without one) at full output [-].
    zone : Zone
        The species' zone.
    """
    return _range_check(
        USED_AREA_UVI_MAX,
        "highest UV Index over the area used",
        max_uvi,
        "UVI",
        zone.mean_uvi_low,
        zone.mean_uvi_high,
        f"{zone.source}, zone {zone.zone} mean range (values {zone.status}); applied to a "
        "whole-enclosure gradient by our own rule",
        zone.status,
        "highest UV Index over the area the animal uses",
        basis=zone_basis(zone),
    )


def check_mean_exposure(mean_uvi, zone: Zone) -> Check:
    """Animal's mean UV Index over its active day against the zone's mean range.

    Parameters
    ----------
    mean_uvi : float or None
        Time-budget mean UV Index (see :func:`audit_lib.day.dose.integrate_time_budget`) [-].
    zone : Zone
        The species' zone (Ferguson et al. 2010 mean voluntary exposure).
    """
    return _range_check(
        ANIMAL_UVI_MEAN,
        "mean UV Index of the animal",
        mean_uvi,
        "UVI",
        zone.mean_uvi_low,
        zone.mean_uvi_high,
        f"{zone.source}, zone {zone.zone} mean range (values {zone.status})",
        zone.status,
        "mean UV Index over the active day",
        basis=zone_basis(zone),
    )


def check_refuge(
    refuge_share, *, min_share: float = REFUGE_MIN_SHARE, refuge_uvi_max: float = REFUGE_UVI_MAX
) -> Check:
    """Share of the floor that is a low-UV refuge (UV Index at or below ``refuge_uvi_max``).

    Parameters
    ----------
    refuge_share : float or None
        Floor share with UVI <= ``refuge_uvi_max`` at full output [-].
    min_share : float
        Smallest acceptable share (common practice default) [-].
    refuge_uvi_max : float
        UV Index below which a place counts as refuge (common practice default) [-].
    """
    basis, site = setting_basis({"refuge_min_share": (min_share, REFUGE_MIN_SHARE),
                                 "refuge_uvi_max": (refuge_uvi_max, REFUGE_UVI_MAX)})
    c = _range_check(
        REFUGE_FLOOR_SHARE,
        "low-UV refuge share of floor",
        refuge_share,
        "-",
        min_share,
        1.0,
        site or f"project default: at least {100 * REFUGE_MIN_SHARE:.0f} % of the floor at or "
        f"below UV Index {_fmt(REFUGE_UVI_MAX)} (common practice, not a published limit)",
        "common practice",
        f"floor share with UV Index at or below {_fmt(refuge_uvi_max)}",
        basis=basis,
    )
    if c.state in (BELOW, ABOVE, WITHIN):
        words = "below" if c.state == BELOW else "meeting"
        c = replace(
            c,
            reason=f"Low-UV refuge (UV Index at or below {_fmt(refuge_uvi_max)}) covers "
            f"{100 * c.value:.0f} % of the floor, {words} the target of at least "
            f"{100 * min_share:.0f} %.",
        )
    return c


def check_light_hours(hours, hours_range=LIGHT_HOURS_RANGE, source: str = COMMON_PRACTICE) -> Check:
    """Hours of light a day against a range.

    Parameters
    ----------
    hours : float or None
        Hours any lamp is on [h].
    hours_range : (float, float)
        Target range; e.g. :func:`natural_day_range_h` of the native latitude [h].
    source : str
        Where the range comes from (:data:`COMMON_PRACTICE`: the project default or a site
        setting, told apart by the values).
    """
    status = "common practice" if source == COMMON_PRACTICE else "computed"
    basis = PROJECT_DEFAULT
    if source == COMMON_PRACTICE:
        basis, site = setting_basis({"light_hours_min": (hours_range[0], LIGHT_HOURS_RANGE[0]),
                                     "light_hours_max": (hours_range[1], LIGHT_HOURS_RANGE[1])})
        source = site or (f"project default: {_fmt(LIGHT_HOURS_RANGE[0], 0)}-"
                          f"{_fmt(LIGHT_HOURS_RANGE[1], 0)} h of light a day (common practice, "
                          "not a published limit)")
    else:
        source = f"{source} (our own rule)"
    return _range_check(
        LIGHT_HOURS,
        "hours of light",
        hours,
        "h",
        hours_range[0],
        hours_range[1],
        source,
        status,
        "light period",
        digits=1,
        basis=basis,
    )


def natural_day_range_h(latitude_deg: float, year: int = 2026) -> tuple[float, float]:
    """Shortest and longest day length of the year at a latitude (NOAA equations) [h]."""
    lengths = [
        day_length_h(latitude_deg, dt.date(year, 1, 1) + dt.timedelta(days=d))
        for d in range(0, 365, 2)
    ]
    return min(lengths), max(lengths)


def check_short_wave_share(
    short_uvb_fraction, sun_fraction: float = 0.0, tolerance: float = SHORT_UVB_TOLERANCE
) -> Check:
    """Share of the lamp's UVB below 290 nm against sunlight's share plus a tolerance.

    Parameters
    ----------
    short_uvb_fraction : float or None
        Lamp's 280-290 nm irradiance over its 280-315 nm irradiance [-].
    sun_fraction : float
        The same for sunlight (ASTM G173 global tilt: about 4e-9; see
        :func:`audit_lib.light.metrics.sun_reference`) [-].
    tolerance : float
        Share allowed above sunlight's (project default, not a published limit) [-].
    """
    high = float(sun_fraction) + float(tolerance)
    basis, site = setting_basis({"short_uvb_tolerance": (tolerance, SHORT_UVB_TOLERANCE)})
    allowance = site or (f"a tolerance of {100 * SHORT_UVB_TOLERANCE:g} % (project default, "
                         "not a published limit)")
    c = _range_check(
        SHORT_UVB_SHARE,
        "short-wave UVB share (280-290 nm)",
        short_uvb_fraction,
        "-",
        0.0,
        high,
        f"sunlight's share from ASTM G173-03 (published) plus {allowance}",
        "common practice",
        "share of UVB below 290 nm",
        digits=4,
        basis=basis,
    )
    if c.state == ABOVE:
        c = replace(
            c,
            reason=f"{_fmt(100 * short_uvb_fraction, 2)} % of the lamp's UVB lies at 280-290 nm, "
            "where sunlight at ground has practically none.",
        )
    return c


def check_keeper_limit(
    limit_s, *, working_time_s: float = KEEPER_TIME_S, working_distance_m: float | None = None
) -> Check:
    """Keeper's permissible daily time at the working distance against the time spent there.

    Parameters
    ----------
    limit_s : float or None
        Permissible daily exposure time, 30 J m-2 / E_S (ICNIRP 2004; see
        :func:`audit_lib.light.metrics.keeper_limit_s`) [s].
    working_time_s : float
        Time a keeper spends at that distance a day (project default) [s].
    working_distance_m : float, optional
        The distance, named in the reason [m].
    """
    value = None if limit_s is None else float(limit_s) / 60.0
    where = f" at {_fmt(working_distance_m * 100, 0)} cm" if working_distance_m else ""
    basis, site = setting_basis({"keeper_time_s": (working_time_s, KEEPER_TIME_S)})
    target = site or (f"the target of {_fmt(KEEPER_TIME_S / 60, 0)} min a day near the lamps is "
                      "a project default, not a published limit")
    c = _range_check(
        KEEPER_EXPOSURE_TIME,
        "keeper exposure limit",
        value,
        "min",
        working_time_s / 60.0,
        math.inf,
        "permissible time from the ICNIRP 2004 actinic limit of 30 J m-2 a day (published); "
        + target,
        "common practice",
        f"keeper's permissible daily time{where}",
        digits=0,
        basis=basis,
    )
    if value is not None and math.isinf(value):
        c = replace(
            c, reason=f"No actinic UV reaches the keeper{where}, so there is no time limit."
        )
    return c


# --- the figure's uncertainty interval ----------------------------------------------------


def classify_interval(value, low, high, target_low: float, target_high: float) -> str:
    """State of a figure with its uncertainty interval against an inclusive target range.

    The borderline rule: *within*, *below* or *above range* only when the whole interval
    ``[low, high]`` lies on one side (limits inclusive, as in :func:`classify`);
    :data:`BORDERLINE` exactly when the interval crosses a limit, whichever side the value
    itself is on. Without an interval (``low`` or ``high`` None) the value alone decides.

    Parameters
    ----------
    value : float or None
        The figure (None or NaN: not enough data) [unit].
    low, high : float or None
        Its interval, ``low <= value <= high`` [unit].
    target_low, target_high : float
        Inclusive target range [unit].

    Returns
    -------
    str
        One of :data:`STATES`.
    """
    state = classify(value, target_low, target_high)
    if state == NO_DATA or low is None or high is None:
        return state
    if high < target_low:
        return BELOW
    if low > target_high:
        return ABOVE
    if low >= target_low and high <= target_high:
        return WITHIN
    return BORDERLINE


def _sig(x: float) -> str:
    if math.isinf(x):
        return "no limit"
    return f"{x:.3g}"


def with_interval(check: Check, low, high) -> Check:
    """The check with its 90 % interval set and its state judged by :func:`classify_interval`.

    The value is never moved. When the interval changes the state, the reason is rewritten
    in one sentence naming the interval and the limit it crosses; otherwise the reason stays.

    Parameters
    ----------
    check : Check
        A check made on the value alone.
    low, high : float or None
        The figure's 90 % interval; must contain the value [``check.unit``].

    Raises
    ------
    ValueError
        The interval does not contain the value.
    """
    if check.value is None or low is None or high is None:
        return check
    low, high = float(low), float(high)
    if not low <= check.value <= high:
        raise ValueError(f"interval {low:g}-{high:g} of {check.id!r} does not contain its "
                         f"value {check.value:g}")
    state = classify_interval(check.value, low, high, check.target_low, check.target_high)
    out = replace(check, value_low=low, value_high=high, state=state)
    if state == check.state:
        return out
    unit = f" {check.unit}" if check.unit not in ("", "-", "UVI") else ""
    target = (f"{_sig(check.target_low)}-{_sig(check.target_high)}"
              if not math.isinf(check.target_high) else f"of at least {_sig(check.target_low)}")
    crossed = [x for x, hit in ((check.target_low, low < check.target_low <= high),
                                (check.target_high, low <= check.target_high < high)) if hit]
    limit = " and ".join(_sig(x) for x in crossed) or _sig(check.target_low)
    return replace(out, reason=(
        f"The {check.name} is {_sig(check.value)}{unit} with a 90 % interval of "
        f"{_sig(low)}-{_sig(high)}{unit}, which crosses the limit {limit} of the target "
        f"{target}{unit}: it may lie on either side."))
