"""Daily doses: UV Index at full output x lamp schedules, integrated over the day.

Weighted irradiances are linear in lamp output, so the UV Index at a point (or every point of
a map) at time t is the sum over lamps of the lamp's full-output UV Index there times its
output fraction at t (the profile from :mod:`audit_lib.day.photoperiod`). The functions here
integrate that sum over the day:

* erythemally weighted dose [J m-2] and in SED (1 SED = 100 J m-2 erythemal, CIE S 007/E-1998;
  one hour at UVI 1 = 0.025 W m-2 x 3600 s = 90 J m-2 = 0.9 SED, WHO 2002 for the index);
* vitamin-D-weighted dose [J m-2] (CIE 174:2006 action spectrum, weighted by the caller);
* hours with the UV Index inside a target range (counted only while exposed, UVI > 0);
* peak UV Index and mean UV Index while exposed;
* time budgets: shares of the active day spent at named positions or on surfaces;
* a month-by-month table over a year of schedules.

Integration is the sum of per-step means times the step, which is exact for the piecewise
linear schedules of :mod:`audit_lib.day.photoperiod`.
"""

from __future__ import annotations

import datetime as dt
from collections.abc import Mapping
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from audit_lib.day.photoperiod import (
    DAY_S,
    DAY_SCHEDULES,
    DailyProfile,
    SeasonalSchedule,
    daily_profile,
    lit_hours,
    parse_clock,
)
from audit_lib.errors import InputError
from audit_lib.light.metrics import SED_J_M2, erythemal_from_uv_index
from audit_lib.light.sun import clear_sky_daily_dose_sed

_CHUNK = 32  # distinct time steps per block when integrating maps (bounds memory)


@dataclass(frozen=True)
class DailyDose:
    """What a point, a surface or an animal receives over one day.

    Each figure is a float for a point or an array with the map's shape for a surface.

    Attributes
    ----------
    erythemal_j_m2 : float or ndarray
        Erythemally weighted daily dose [J m-2].
    sed : float or ndarray
        The same in standard erythema doses [SED].
    vitamin_d_j_m2 : float or ndarray
        Vitamin-D-weighted daily dose; NaN when no vitamin-D irradiance was given [J m-2].
    hours_in_range : float or ndarray
        Hours exposed with low <= UVI <= high; NaN when no range was given [h].
    exposed_hours : float or ndarray
        Hours with UVI above zero (or the active hours of a time budget) [h].
    peak_uvi : float or ndarray
        Highest UV Index of the day (over the step means) [-].
    mean_uvi_exposed : float or ndarray
        Time-weighted mean UV Index while exposed [-].
    uvi_range : tuple of float or None
        The (low, high) range used for ``hours_in_range`` [-].
    """

    erythemal_j_m2: object
    sed: object
    vitamin_d_j_m2: object
    hours_in_range: object
    exposed_hours: object
    peak_uvi: object
    mean_uvi_exposed: object
    uvi_range: tuple | None = None


@dataclass(frozen=True)
class TimeBudget:
    """Shares of the active day an animal spends at named positions or on surfaces.

    Attributes
    ----------
    shares : dict of str to float
        Position or surface name to its share of the active day [-]. The shares add up to
        at most 1; the rest of the active day counts as time out of the UV (buried, in a
        closed hide).
    active_from, active_to : str, optional
        Local clock times ``"HH:MM"`` of the animal's active day; by default the hours when
        any lamp is on. Outside it the animal is assumed in shelter with no UV.
    name : str
        Label.
    """

    shares: dict = field(default_factory=dict)
    active_from: str | None = None
    active_to: str | None = None
    name: str = ""

    def __post_init__(self):
        if not self.shares:
            raise InputError(
                "a time budget needs at least one position",
                field="shares",
                hint="shares = {basking = 0.3, floor = 0.7}",
            )
        for key, share in self.shares.items():
            if not 0.0 <= float(share) <= 1.0:
                raise InputError(
                    f"share {share!r} of {key!r} is outside 0..1", field=f"shares.{key}"
                )
        total = float(sum(self.shares.values()))
        if total > 1.0 + 1e-6:
            raise InputError(
                f"the shares add up to {total:g}, more than 1",
                field="shares",
                hint="shares are fractions of the active day",
            )
        if (self.active_from is None) != (self.active_to is None):
            raise InputError("give both active_from and active_to, or neither", field="active_from")
        if self.active_from is not None:
            parse_clock(self.active_from, field_name="active_from")
            parse_clock(self.active_to, field_name="active_to")


def _profile_fractions(profiles) -> tuple[dict, float]:
    """Normalise a DailyProfile, a dict of them, or a daily_profiles() table."""
    if isinstance(profiles, DailyProfile):
        return {None: profiles.fraction}, profiles.step_s
    if hasattr(profiles, "columns") and hasattr(profiles, "index"):  # pandas DataFrame
        n = len(profiles.index)
        if n == 0 or abs(DAY_S / n - round(DAY_S / n)) > 1e-9:
            raise InputError(
                f"a profile table of {n} rows does not cover one day in whole steps",
                field="profiles",
            )
        return {c: profiles[c].to_numpy(dtype=float) for c in profiles.columns}, DAY_S / n
    if isinstance(profiles, Mapping) and profiles:
        steps = {p.step_s for p in profiles.values()}
        if len(steps) != 1:
            raise InputError(
                f"profiles have different time steps {sorted(steps)} s",
                field="profiles",
                hint="build them with the same step_s",
            )
        return {k: p.fraction for k, p in profiles.items()}, steps.pop()
    raise InputError(
        "no lamp profiles given",
        field="profiles",
        hint="pass photoperiod.daily_profile(...) or a dict of them",
    )


def _contributions(uvi_full, fractions: dict, what: str) -> list:
    """Pair each lamp's full-output value with its fraction series."""
    if not isinstance(uvi_full, Mapping):
        if len(fractions) != 1:
            raise InputError(
                f"one {what} value given for {len(fractions)} lamps",
                field=what,
                hint="give a dict: lamp id -> value at full output",
            )
        return [(np.asarray(uvi_full, dtype=float), next(iter(fractions.values())))]
    missing = [k for k in uvi_full if k not in fractions]
    if missing:
        raise InputError(
            f"no schedule profile for lamp(s) {missing}",
            field=what,
            hint=f"profiles exist for {sorted(map(str, fractions))}",
        )
    return [(np.asarray(v, dtype=float), fractions[k]) for k, v in uvi_full.items()]


def _series_stats(pairs, n_steps, step_s, uvi_range, mask):
    """Integral, peak, exposed time and time in range of sum_l value_l * fraction_l(t).

    Steps with the same output fractions of every lamp give the same values, so each
    distinct combination is evaluated once and weighted by how often it occurs (exact; it
    makes plateaus of on/off schedules cheap on large maps).
    """
    shape = np.broadcast_shapes(*(v.shape for v, _ in pairs)) if pairs else ()
    integral = np.zeros(shape)
    peak = np.zeros(shape)
    exposed = np.zeros(shape)
    in_range = np.zeros(shape)
    fractions = np.column_stack([frac for _, frac in pairs]) if pairs else np.zeros((n_steps, 0))
    if mask is not None:
        fractions = fractions * np.asarray(mask, dtype=float)[:, None]
    fractions = fractions[np.any(fractions > 0, axis=1)]
    if len(fractions) == 0:
        return integral, peak, exposed, in_range
    combos, counts = _distinct_steps(fractions.tobytes(), fractions.shape[1])
    values = [v for v, _ in pairs]
    expand = (1,) * len(shape)
    for a in range(0, len(combos), _CHUNK):
        rows, weight = combos[a : a + _CHUNK], counts[a : a + _CHUNK].reshape((-1, *expand))
        block = np.zeros((len(rows), *shape))
        for j, value in enumerate(values):
            block += rows[:, j].reshape((-1, *expand)) * value
        integral += (block * weight).sum(axis=0) * step_s
        peak = np.maximum(peak, block.max(axis=0))
        on = block > 0
        exposed += (on * weight).sum(axis=0) * step_s
        if uvi_range is not None:
            lo, hi = uvi_range
            in_range += ((on & (block >= lo) & (block <= hi)) * weight).sum(axis=0) * step_s
    return integral, peak, exposed, in_range


@lru_cache(maxsize=32)
def _distinct_steps(key: bytes, n_lamps: int):
    """Distinct rows of a (steps, lamps) fraction table and their counts.

    Memoised: every place and candidate of one day shares its table; the arrays are
    read-only.
    """
    combos, counts = np.unique(np.frombuffer(key).reshape(-1, n_lamps), axis=0,
                               return_counts=True)
    combos.flags.writeable = counts.flags.writeable = False
    return combos, counts


def _scalar(x):
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _check_range(uvi_range):
    if uvi_range is None:
        return None
    lo, hi = (float(v) for v in uvi_range)
    if not 0 <= lo <= hi:
        raise InputError(f"UV Index range {uvi_range!r} needs 0 <= low <= high", field="uvi_range")
    return lo, hi


def integrate_daily_dose(
    uvi_full, profiles, *, vitamin_d_w_m2_full=None, uvi_range=None, active=None
) -> DailyDose:
    """Daily doses at a point or over a surface.

    Parameters
    ----------
    uvi_full : float, ndarray or dict of str to float/ndarray
        UV Index at full lamp output (one value or map for a single lamp, or lamp id to its
        contribution) [-].
    profiles : DailyProfile, dict of str to DailyProfile, or pandas.DataFrame
        Output fraction through the day (from :func:`audit_lib.day.photoperiod.daily_profile` or
        :func:`~audit_lib.day.photoperiod.daily_profiles`).
    vitamin_d_w_m2_full : same form as ``uvi_full``, optional
        Vitamin-D-weighted irradiance at full output [W m-2].
    uvi_range : (float, float), optional
        Target UV Index range for ``hours_in_range`` (inclusive) [-].
    active : ndarray of bool, optional
        Steps that count (a time-budget window); all steps by default.

    Returns
    -------
    DailyDose

    Notes
    -----
    Erythemal irradiance = UVI / 40 m2 W-1 (WHO 2002, via
    :func:`audit_lib.light.metrics.erythemal_from_uv_index`); SED = dose / 100 J m-2 (CIE S 007).
    """
    fractions, step_s = _profile_fractions(profiles)
    return _daily_dose(uvi_full, fractions, step_s, vitamin_d_w_m2_full, uvi_range, active)


def _daily_dose(uvi_full, fractions, step_s, vitamin_d_w_m2_full, uvi_range, active):
    """:func:`integrate_daily_dose` with the profiles already normalised."""
    n = int(round(DAY_S / step_s))
    uvi_range = _check_range(uvi_range)
    pairs = _contributions(uvi_full, fractions, "uvi_full")
    mask = None if active is None else np.asarray(active, dtype=float)
    uvi_s, peak, exposed, in_range = _series_stats(pairs, n, step_s, uvi_range, mask)
    erythemal = erythemal_from_uv_index(uvi_s)  # UVI s -> J m-2 (linear)
    if vitamin_d_w_m2_full is None:
        vit_d = np.full(np.shape(uvi_s), np.nan)
    else:
        vit_pairs = _contributions(vitamin_d_w_m2_full, fractions, "vitamin_d_w_m2_full")
        vit_d = _series_stats(vit_pairs, n, step_s, None, mask)[0]
    with np.errstate(invalid="ignore", divide="ignore"):
        mean = np.where(exposed > 0, uvi_s / np.where(exposed > 0, exposed, 1.0), 0.0)
    return DailyDose(
        erythemal_j_m2=_scalar(erythemal),
        sed=_scalar(np.asarray(erythemal) / SED_J_M2),
        vitamin_d_j_m2=_scalar(vit_d),
        hours_in_range=_scalar(
            in_range / 3600.0 if uvi_range else np.full(np.shape(uvi_s), np.nan)
        ),
        exposed_hours=_scalar(exposed / 3600.0),
        peak_uvi=_scalar(peak),
        mean_uvi_exposed=_scalar(mean),
        uvi_range=uvi_range,
    )


def uvi_series(uvi_full, profiles):
    """UV Index through the day at one point.

    Parameters
    ----------
    uvi_full : float or dict of str to float
        UV Index at full output (single lamp, or lamp id to contribution) [-].
    profiles : DailyProfile, dict of str to DailyProfile, or pandas.DataFrame
        Lamp profiles.

    Returns
    -------
    pandas.Series
        UV Index [-] indexed by ``time_h`` (middle of each step, local clock hours).

    Notes
    -----
    Superposition of lamp contributions (weighted irradiances are linear in output).
    """
    import pandas as pd

    fractions, step_s = _profile_fractions(profiles)
    pairs = _contributions(uvi_full, fractions, "uvi_full")
    if any(v.ndim for v, _ in pairs):
        raise InputError("uvi_series takes point values, not maps", field="uvi_full")
    n = int(round(DAY_S / step_s))
    uvi = np.zeros(n)
    for value, frac in pairs:
        uvi += float(value) * frac
    time_h = (np.arange(n) + 0.5) * step_s / 3600.0
    return pd.Series(uvi, index=pd.Index(time_h, name="time_h"), name="uvi")


def active_steps(budget: TimeBudget, profiles) -> np.ndarray:
    """Boolean mask of the time steps in the budget's active day.

    Parameters
    ----------
    budget : TimeBudget
        Its ``active_from``/``active_to`` window, or (if absent) the hours any lamp is on.
    profiles : DailyProfile, dict or DataFrame
        Lamp profiles.

    Returns
    -------
    ndarray of bool
        One value per time step.
    """
    return _active_steps(budget, *_profile_fractions(profiles))


def _active_steps(budget, fractions, step_s):
    n = int(round(DAY_S / step_s))
    if budget.active_from is None:
        return np.any(np.vstack(list(fractions.values())) > 0, axis=0)
    t = (np.arange(n) + 0.5) * step_s
    a, b = parse_clock(budget.active_from), parse_clock(budget.active_to)
    return ((t >= a) & (t < b)) if a <= b else ((t >= a) | (t < b))


def integrate_time_budget(
    budget: TimeBudget,
    uvi_full_by_position,
    profiles,
    *,
    vitamin_d_by_position=None,
    uvi_range=None,
    with_table: bool = True,
):
    """Daily doses of an animal that shares its active day between positions.

    Parameters
    ----------
    budget : TimeBudget
        Shares of the active day per position.
    uvi_full_by_position : dict of str to (float or dict of str to float)
        Position name to its full-output UV Index (single lamp) or per-lamp contributions [-].
    profiles : DailyProfile, dict or DataFrame
        Lamp profiles.
    vitamin_d_by_position : dict, optional
        The same for vitamin-D-weighted irradiance [W m-2].
    uvi_range : (float, float), optional
        Target UV Index range [-].
    with_table : bool
        Build ``per_position`` (False: None, when only the animal's figures are needed).

    Returns
    -------
    animal : DailyDose
        Share-weighted doses and hours in range; ``peak_uvi`` is the highest UV Index of any
        position used; ``mean_uvi_exposed`` is the share-weighted mean over the active hours;
        ``exposed_hours`` the active hours.
    per_position : pandas.DataFrame or None
        One row per position: ``share``, and the position's doses within the active day.

    Notes
    -----
    Assumes the time at each position is spread evenly over the active day (no preference
    for midday basking); common practice for a first estimate when only shares are known.
    """
    import pandas as pd

    missing = [p for p in budget.shares if p not in uvi_full_by_position]
    if missing:
        raise InputError(
            f"no UV Index for position(s) {missing}",
            field="uvi_full_by_position",
            hint=f"known positions: {sorted(uvi_full_by_position)}",
        )
    fractions, step_s = _profile_fractions(profiles)
    mask = _active_steps(budget, fractions, step_s)
    active_h = float(mask.sum() * step_s / 3600.0)
    rows = {}
    for pos, share in budget.shares.items():
        vit = None if vitamin_d_by_position is None else vitamin_d_by_position[pos]
        d = _daily_dose(uvi_full_by_position[pos], fractions, step_s, vit, uvi_range, mask)
        rows[pos] = {"share": float(share), **_dose_row(d)}
    columns = {k: np.array([r[k] for r in rows.values()], dtype=float)
               for k in next(iter(rows.values()))}
    table = (pd.DataFrame(columns, index=pd.Index(list(rows), name="position"))
             if with_table else None)
    w = columns["share"]

    def wsum(col):
        return float(np.sum(w * columns[col]))

    erythemal = wsum("erythemal_j_m2")
    uvi_hours = float(np.sum(w * columns["mean_uvi_exposed"] * columns["exposed_hours"]))
    used = columns["peak_uvi"][w > 0]
    animal = DailyDose(
        erythemal_j_m2=erythemal,
        sed=erythemal / SED_J_M2,
        vitamin_d_j_m2=wsum("vitamin_d_j_m2"),
        hours_in_range=wsum("hours_in_range"),
        exposed_hours=active_h,
        peak_uvi=float(used.max()) if len(used) else 0.0,
        mean_uvi_exposed=uvi_hours / active_h if active_h > 0 else 0.0,
        uvi_range=_check_range(uvi_range),
    )
    return animal, table


def _dose_row(d: DailyDose) -> dict:
    return {
        "erythemal_j_m2": d.erythemal_j_m2,
        "sed": d.sed,
        "vitamin_d_j_m2": d.vitamin_d_j_m2,
        "hours_in_range": d.hours_in_range,
        "exposed_hours": d.exposed_hours,
        "peak_uvi": d.peak_uvi,
        "mean_uvi_exposed": d.mean_uvi_exposed,
    }


def monthly_table(
    uvi_full,
    schedules,
    year: int,
    *,
    vitamin_d_w_m2_full=None,
    uvi_range=None,
    budget=None,
    day_of_month: int = 15,
    step_s: float = 60.0,
    reference_latitude_deg=None,
    ozone_du=300.0,
):
    """Month-by-month daily figures over a year of schedules (one representative day a month).

    Parameters
    ----------
    uvi_full : float or dict
        As in :func:`integrate_daily_dose` (point values), or, with ``budget``, position name
        to value or per-lamp dict [-].
    schedules : schedule or dict of str to schedule
        One schedule (single lamp) or lamp id to schedule (any :mod:`audit_lib.day.photoperiod`
        type; seasonal and natural-day schedules change through the year).
    year : int
        Calendar year.
    vitamin_d_w_m2_full : optional
        Same form as ``uvi_full`` [W m-2].
    uvi_range : (float, float), optional
        Target UV Index range [-].
    budget : TimeBudget, optional
        Integrate for an animal over positions instead of one point.
    day_of_month : int
        Representative day of each month.
    step_s : float
        Time step [s].
    reference_latitude_deg : float, optional
        Adds ``sun_clear_sky_sed``: the clear-sky erythemal dose of the same day at that
        latitude (Madronich 2007; see :mod:`audit_lib.light.sun`) [SED].
    ozone_du : float
        Total ozone for the reference [DU].

    Returns
    -------
    pandas.DataFrame
        Index ``month`` 1-12; columns ``date``, ``lit_hours``, ``erythemal_j_m2``, ``sed``,
        ``vitamin_d_j_m2``, ``hours_in_range``, ``exposed_hours``, ``peak_uvi``,
        ``mean_uvi_exposed`` (and ``sun_clear_sky_sed``).
    """
    import pandas as pd


    single = isinstance(schedules, (*DAY_SCHEDULES, SeasonalSchedule))
    rows = []
    for month in range(1, 13):
        day = dt.date(year, month, day_of_month)
        if single:
            profiles = daily_profile(schedules, day, step_s)
            lit = lit_hours(profiles)
        else:
            profiles = {k: daily_profile(s, day, step_s) for k, s in schedules.items()}
            on = np.any(np.vstack([p.fraction for p in profiles.values()]) > 0, axis=0)
            lit = float(on.sum() * step_s / 3600.0)
        if budget is None:
            d = integrate_daily_dose(
                uvi_full, profiles, vitamin_d_w_m2_full=vitamin_d_w_m2_full, uvi_range=uvi_range
            )
        else:
            d, _ = integrate_time_budget(
                budget,
                uvi_full,
                profiles,
                vitamin_d_by_position=vitamin_d_w_m2_full,
                uvi_range=uvi_range,
            )
        row = {"month": month, "date": day, "lit_hours": lit, **_dose_row(d)}
        if reference_latitude_deg is not None:

            row["sun_clear_sky_sed"] = clear_sky_daily_dose_sed(
                reference_latitude_deg, day, ozone_du=ozone_du
            )
        rows.append(row)
    return pd.DataFrame(rows).set_index("month")
