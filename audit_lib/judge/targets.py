"""Targets by species group and the checks of an enclosure's figures against them.

Target UV Index ranges come from the Ferguson zones (Ferguson et al. 2010, Zoo Biology
29:317-334), shipped in ``data/ferguson_zones.csv`` with a ``status`` column: the values there
are FROM MEMORY until checked against the paper, and every check built on them says so. A
species table (``data/species_demo.csv``, demo data to be checked) maps species to a zone and a
way of providing UV; sites add or override species.

Each check is a :class:`Check` record (stable id, figure, unit, target range, state, source,
one-sentence reason). Code finds a check by its id (:data:`CHECK_IDS`), never by its wording.
:mod:`audit_lib.judge.verdicts` bundles the checks of one enclosure and species into a verdict
with computed actions.

Boundaries are inclusive: a figure exactly on a limit is within range.
"""

from __future__ import annotations

import datetime as dt
import math
from collections.abc import Mapping
from dataclasses import dataclass, replace
from pathlib import Path

from audit_lib.errors import InputError
from audit_lib.light.sun import day_length_h

DATA_DIR = Path(__file__).resolve().parents[1] / "data"
FERGUSON_SOURCE = "Ferguson et al. 2010, Zoo Biology 29:317-334"

WITHIN, BELOW, ABOVE, NO_DATA = "within range", "below range", "above range", "not enough data"
STATES = (WITHIN, BELOW, ABOVE, NO_DATA)

UV_PROVISION_LABELS = {
    "gradient": "whole-enclosure gradient",
    "basking_patch": "basking patch, low UV elsewhere",
}

#: Defaults that rest on common practice, not on a published limit; sites may change them.
REFUGE_UVI_MAX = 0.5  # a place counts as low-UV refuge at or below this UV Index [-]
REFUGE_MIN_SHARE = 0.25  # refuge share of the floor area [-]
LIGHT_HOURS_RANGE = (10.0, 14.0)  # hours of light a day [h]
KEEPER_TIME_S = 1800.0  # keeper's time a day at the working distance [s]
SHORT_UVB_TOLERANCE = 0.001  # allowed 280-290 nm share of UVB above sunlight's [-]
COMMON_PRACTICE = "common practice (project default, set per site)"

#: Stable ids of the checks, in the order a verdict lists them. They are part of the
#: ``results.json`` contract (docs/batch-reports.md); the English names may change, these not.
BASKING_UVI_MAX = "basking_uvi_max"  # highest UV Index on the basking surfaces
ANIMAL_UVI_MEAN = "animal_uvi_mean"  # time-budget mean UV Index of the animal while active
REFUGE_FLOOR_SHARE = "refuge_floor_share"  # floor share at or below the refuge UV Index
LIGHT_HOURS = "light_hours"  # hours with any lamp on
SHORT_UVB_SHARE = "short_uvb_share"  # 280-290 nm share of the lamps' UVB
KEEPER_EXPOSURE_TIME = "keeper_exposure_time"  # keeper's permissible daily time [min]
CHECK_IDS = (BASKING_UVI_MAX, ANIMAL_UVI_MEAN, REFUGE_FLOOR_SHARE, LIGHT_HOURS, SHORT_UVB_SHARE,
             KEEPER_EXPOSURE_TIME)


@dataclass(frozen=True)
class Zone:
    """One Ferguson zone: UV Index ranges of a species group.

    Attributes
    ----------
    zone : int
        Zone number 1-4.
    description : str
        Short words for the group (the project's own).
    mean_uvi_low, mean_uvi_high : float
        Range of the mean voluntary exposure [-].
    max_uvi_low, max_uvi_high : float
        Range of the maximum UV Index met [-].
    source, status : str
        Where the values come from and how far they are checked ("from memory", "read").
    """

    zone: int
    description: str
    mean_uvi_low: float
    mean_uvi_high: float
    max_uvi_low: float
    max_uvi_high: float
    source: str = FERGUSON_SOURCE
    status: str = "from memory"


@dataclass(frozen=True)
class SpeciesTarget:
    """A species assigned to a zone and a way of providing UV.

    Attributes
    ----------
    id : str
        Identifier used in site files.
    scientific_name, common_name : str
        Names.
    zone : int
        Ferguson zone 1-4.
    uv_provision : str
        ``"gradient"`` (whole-enclosure gradient) or ``"basking_patch"`` (basking patch, low UV
        elsewhere).
    basking_note : str
        Optional note, e.g. on basking temperature.
    status : str
        How far the assignment is checked (e.g. "demo data - check", "site").
    native_latitude_deg : float or None
        A latitude inside the wild range, for drawing the sun's day there [deg].
    """

    id: str
    scientific_name: str
    common_name: str = ""
    zone: int = 1
    uv_provision: str = "gradient"
    basking_note: str = ""
    status: str = "site"
    native_latitude_deg: float | None = None


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


# --- tables -------------------------------------------------------------------------------


def read_zone_table(path=None) -> dict[int, Zone]:
    """The Ferguson zone table.

    Parameters
    ----------
    path : str or Path, optional
        A CSV with the columns of ``data/ferguson_zones.csv`` (``#`` lines are comments);
        the shipped file by default.

    Returns
    -------
    dict of int to Zone
    """
    import pandas as pd

    path = Path(path) if path is not None else DATA_DIR / "ferguson_zones.csv"
    table = pd.read_csv(path, comment="#")
    zones = {}
    for row in table.itertuples(index=False):
        zones[int(row.zone)] = Zone(
            zone=int(row.zone),
            description=str(row.description),
            mean_uvi_low=float(row.mean_uvi_low),
            mean_uvi_high=float(row.mean_uvi_high),
            max_uvi_low=float(row.max_uvi_low),
            max_uvi_high=float(row.max_uvi_high),
            status=str(row.status),
        )
    return zones


def read_species_table(path=None):
    """The species table as a DataFrame (columns as in ``data/species_demo.csv``).

    Parameters
    ----------
    path : str or Path, optional
        A CSV with columns ``id, scientific_name, common_name, zone, uv_provision,
        basking_note, status`` and optionally ``native_latitude_deg``; the shipped demo table
        (DEMO DATA, to be checked) by default.

    Returns
    -------
    pandas.DataFrame
    """
    import pandas as pd

    path = Path(path) if path is not None else DATA_DIR / "species_demo.csv"
    table = pd.read_csv(path, comment="#", dtype={"id": str}, keep_default_na=False)
    bad = table[~table["uv_provision"].isin(list(UV_PROVISION_LABELS))]
    if len(bad):
        raise InputError(
            f"unknown uv_provision {bad['uv_provision'].iloc[0]!r}",
            path=path,
            field="uv_provision",
            hint=f"use one of {', '.join(UV_PROVISION_LABELS)}",
        )
    return table


def species_targets(site_species=(), path=None) -> dict[str, SpeciesTarget]:
    """The library's species table with a site's additions and overrides applied.

    Parameters
    ----------
    site_species : iterable of records or dicts
        Each with ``id``, ``scientific_name``, ``zone`` and optionally ``common_name``,
        ``uv_provision``, ``basking_note`` (e.g. the site file's ``[[species]]`` tables).
    path : str or Path, optional
        Species table to start from (see :func:`read_species_table`).

    Returns
    -------
    dict of str to SpeciesTarget
    """
    result = {}
    for row in read_species_table(path).itertuples(index=False):
        result[row.id] = SpeciesTarget(
            id=row.id,
            scientific_name=row.scientific_name,
            common_name=row.common_name,
            zone=int(row.zone),
            uv_provision=row.uv_provision,
            basking_note=row.basking_note,
            status=row.status,
            native_latitude_deg=_optional_float(getattr(row, "native_latitude_deg", None)),
        )
    for item in site_species:
        get = (
            item.get if isinstance(item, Mapping) else (lambda k, d=None, i=item: getattr(i, k, d))
        )
        zone = int(get("zone"))
        if zone not in (1, 2, 3, 4):
            raise InputError(f"zone {zone} is not 1-4", field=f"species.{get('id')}.zone")
        provision = get("uv_provision", "gradient") or "gradient"
        if provision not in UV_PROVISION_LABELS:
            raise InputError(
                f"unknown uv_provision {provision!r}",
                field=f"species.{get('id')}.uv_provision",
                hint=f"use one of {', '.join(UV_PROVISION_LABELS)}",
            )
        result[str(get("id"))] = SpeciesTarget(
            id=str(get("id")),
            scientific_name=str(get("scientific_name")),
            common_name=str(get("common_name", "") or ""),
            zone=zone,
            uv_provision=provision,
            basking_note=str(get("basking_note", "") or ""),
            status="site",
            native_latitude_deg=_optional_float(get("native_latitude_deg", None)),
        )
    return result


def _optional_float(value) -> float | None:
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    number = float(value)
    return None if math.isnan(number) else number


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
                 digits=2) -> Check:
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
    )


def check_basking_max(max_uvi, zone: Zone) -> Check:
    """Basking-area maximum UV Index against the zone's maximum range (Ferguson et al. 2010).

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
        f"{zone.source}, zone {zone.zone} maximum",
        zone.status,
        "highest basking UV Index",
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
        f"{zone.source}, zone {zone.zone} mean",
        zone.status,
        "mean UV Index over the active day",
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
    c = _range_check(
        REFUGE_FLOOR_SHARE,
        "low-UV refuge share of floor",
        refuge_share,
        "-",
        min_share,
        1.0,
        COMMON_PRACTICE,
        "common practice",
        f"floor share with UV Index at or below {_fmt(refuge_uvi_max)}",
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
        Where the range comes from.
    """
    status = "common practice" if source == COMMON_PRACTICE else "computed"
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
    c = _range_check(
        SHORT_UVB_SHARE,
        "short-wave UVB share (280-290 nm)",
        short_uvb_fraction,
        "-",
        0.0,
        high,
        "ASTM G173-03 sunlight plus a project tolerance",
        "common practice",
        "share of UVB below 290 nm",
        digits=4,
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
    c = _range_check(
        KEEPER_EXPOSURE_TIME,
        "keeper exposure limit",
        value,
        "min",
        working_time_s / 60.0,
        math.inf,
        "ICNIRP 2004 actinic limit (30 J m-2 a day)",
        "read",
        f"keeper's permissible daily time{where}",
        digits=0,
    )
    if value is not None and math.isinf(value):
        c = replace(
            c, reason=f"No actinic UV reaches the keeper{where}, so there is no time limit."
        )
    return c
