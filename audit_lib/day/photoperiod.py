"""Lamp schedules and the daily output profile they give.

A schedule says, for each minute of the local day, what fraction of its full output a lamp or
circuit gives. Four record types, whose fields are the keys of a ``[schedules.<id>]`` table in
the site TOML (times are local clock times written ``"HH:MM"``):

* :class:`OnOffSchedule` - on and off times, a dimming level, optional linear or stepped ramps;
* :class:`LevelSchedule` - a list of (time, level) points joined by straight lines or held;
* :class:`NaturalDaySchedule` - on for the day length of a latitude on the date, centred on a
  chosen clock time, either flat or following the shape of the sun's UV Index;
* :class:`SeasonalSchedule` - a different day schedule by month (or meteorological season).

:func:`daily_profile` turns any of them into a :class:`DailyProfile`: the mean output fraction
over each time step (1 minute by default). The means are exact integrals of the piecewise
linear schedule over each step, so a profile integrates to the schedule's analytic area at any
step size. Schedules are periodic over the day: one that switches off after midnight wraps.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field

import numpy as np

from audit_lib.errors import InputError
from audit_lib.light import sun as sunlight

DAY_S = 86400.0
RAMP_KINDS = ("linear", "steps")
BETWEEN_KINDS = ("linear", "hold")
SHAPES = ("flat", "sun")
#: Meteorological seasons of the northern hemisphere; the southern one is shifted six months.
SEASON_MONTHS = {
    "winter": (12, 1, 2),
    "spring": (3, 4, 5),
    "summer": (6, 7, 8),
    "autumn": (9, 10, 11),
}


def parse_clock(text, *, field_name: str = "time") -> float:
    """Seconds after midnight of a ``"HH:MM"`` or ``"HH:MM:SS"`` clock time (``"24:00"`` allowed).

    Parameters
    ----------
    text : str
        Local clock time.
    field_name : str
        Key named in the error message.

    Returns
    -------
    float
        Seconds after local midnight [s].
    """
    parts = str(text).strip().split(":")
    try:
        if len(parts) not in (2, 3) or not all(p.isdigit() for p in parts):
            raise ValueError
        h, m = int(parts[0]), int(parts[1])
        s = int(parts[2]) if len(parts) == 3 else 0
    except ValueError:
        raise InputError(
            f"{text!r} is not a clock time",
            field=field_name,
            hint='write it as "HH:MM", e.g. "07:30"',
        ) from None
    if m > 59 or s > 59 or h * 3600 + m * 60 + s > DAY_S:
        raise InputError(
            f"{text!r} is not a clock time between 00:00 and 24:00",
            field=field_name,
            hint='write it as "HH:MM", e.g. "07:30"',
        )
    return float(h * 3600 + m * 60 + s)


def format_clock(seconds: float) -> str:
    """``"HH:MM"`` of a time in seconds after midnight, rounded to the minute [s]."""
    minutes = int(round(seconds / 60.0)) % (24 * 60)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _on_length(t_on: float, t_off: float) -> float:
    """Seconds from on to off, wrapping past midnight; "00:00" to "24:00" is the whole day."""
    if t_off - t_on == DAY_S:
        return DAY_S
    return (t_off - t_on) % DAY_S


def _check_level(value, name):
    if not (0.0 <= float(value) <= 1.0):
        raise InputError(
            f"level {value!r} is outside 0..1",
            field=name,
            hint="levels are fractions of full output: 1 = full, 0.5 = half",
        )


def _check_choice(value, choices, name):
    if value not in choices:
        raise InputError(f"{value!r} is not one of {', '.join(choices)}", field=name)


@dataclass(frozen=True)
class OnOffSchedule:
    """On at ``on``, off at ``off``, at ``level`` in between, with optional ramps.

    Attributes
    ----------
    on, off : str
        Local clock times ``"HH:MM"`` when output leaves zero and when it is back at zero; an
        ``off`` earlier than ``on`` runs past midnight.
    level : float
        Dimming level between the ramps [-] (1 = full output).
    ramp_up_min, ramp_down_min : float
        Length of the dawn and dusk ramps, inside the on-off period [min].
    ramp : str
        ``"linear"`` or ``"steps"`` (equal steps of ``level / ramp_steps``).
    ramp_steps : int
        Number of steps of a stepped ramp.
    name : str
        Label.
    """

    on: str = "08:00"
    off: str = "20:00"
    level: float = 1.0
    ramp_up_min: float = 0.0
    ramp_down_min: float = 0.0
    ramp: str = "linear"
    ramp_steps: int = 4
    name: str = ""

    def __post_init__(self):
        t_on = parse_clock(self.on, field_name="on")
        t_off = parse_clock(self.off, field_name="off")
        _check_level(self.level, "level")
        _check_choice(self.ramp, RAMP_KINDS, "ramp")
        if int(self.ramp_steps) < 1:
            raise InputError(
                f"ramp_steps {self.ramp_steps!r} must be at least 1", field="ramp_steps"
            )
        if self.ramp_up_min < 0 or self.ramp_down_min < 0:
            raise InputError("ramp lengths must not be negative", field="ramp_up_min")
        length = _on_length(t_on, t_off)
        if (self.ramp_up_min + self.ramp_down_min) * 60.0 > length:
            raise InputError(
                f"ramps of {self.ramp_up_min:g} + {self.ramp_down_min:g} min do not fit in the "
                f"{length / 60:g} min between on {self.on} and off {self.off}",
                field="ramp_up_min",
                hint="shorten the ramps or widen on..off",
            )


@dataclass(frozen=True)
class LevelSchedule:
    """Output levels at given clock times, joined by straight lines or held until the next.

    Attributes
    ----------
    points : tuple of (str, float)
        ``("HH:MM", level)`` pairs in clock order; the day wraps from the last to the first.
    between : str
        ``"linear"`` (straight lines) or ``"hold"`` (each level holds until the next point).
    name : str
        Label.
    """

    points: tuple = ()
    between: str = "linear"
    name: str = ""

    def __post_init__(self):
        if len(self.points) < 1:
            raise InputError(
                "a level schedule needs at least one point",
                field="points",
                hint='points = [["08:00", 0.0], ["09:00", 1.0], ...]',
            )
        times = []
        for i, point in enumerate(self.points):
            if len(point) != 2:
                raise InputError(
                    f"point {point!r} is not a [time, level] pair", field=f"points[{i}]"
                )
            times.append(parse_clock(point[0], field_name=f"points[{i}]"))
            _check_level(point[1], f"points[{i}]")
        if any(b <= a for a, b in zip(times, times[1:], strict=False)):
            raise InputError("point times must increase", field="points")
        if times[-1] - times[0] >= DAY_S:
            raise InputError("points must lie within one day", field="points")
        _check_choice(self.between, BETWEEN_KINDS, "between")


@dataclass(frozen=True)
class NaturalDaySchedule:
    """On for the day length at ``latitude_deg`` on the date, centred on ``midday``.

    Attributes
    ----------
    latitude_deg : float
        Latitude whose day length the lamp follows, north positive [deg].
    midday : str
        Local clock time ``"HH:MM"`` at the middle of the lit period.
    level : float
        Output level (flat) or peak level (sun shape) [-].
    ramp_up_min, ramp_down_min : float
        Ramps as in :class:`OnOffSchedule` (flat shape only) [min].
    ramp : str
        ``"linear"`` or ``"steps"``.
    ramp_steps : int
        Steps of a stepped ramp.
    shape : str
        ``"flat"`` or ``"sun"``: output proportional to the clear-sky UV Index of the day,
        cos(zenith)^2.42 (Madronich 2007), scaled to ``level`` at solar noon.
    name : str
        Label.
    """

    latitude_deg: float = 0.0
    midday: str = "12:00"
    level: float = 1.0
    ramp_up_min: float = 0.0
    ramp_down_min: float = 0.0
    ramp: str = "linear"
    ramp_steps: int = 4
    shape: str = "flat"
    name: str = ""

    def __post_init__(self):
        parse_clock(self.midday, field_name="midday")
        _check_level(self.level, "level")
        _check_choice(self.shape, SHAPES, "shape")
        _check_choice(self.ramp, RAMP_KINDS, "ramp")
        if not -90.0 <= float(self.latitude_deg) <= 90.0:
            raise InputError(
                f"latitude {self.latitude_deg!r} is outside -90..90", field="latitude_deg"
            )
        if self.shape == "sun" and (self.ramp_up_min or self.ramp_down_min):
            raise InputError(
                "ramps do not apply to the sun shape, which ramps by itself",
                field="ramp_up_min",
                hint='remove the ramps or use shape = "flat"',
            )


@dataclass(frozen=True)
class SeasonalSchedule:
    """A day schedule per month.

    Attributes
    ----------
    by_month : dict of int to schedule
        Month number (1-12) to an :class:`OnOffSchedule`, :class:`LevelSchedule` or
        :class:`NaturalDaySchedule`; every month must be present.
    name : str
        Label.
    """

    by_month: dict = field(default_factory=dict)
    name: str = ""

    def __post_init__(self):
        missing = sorted(set(range(1, 13)) - set(self.by_month))
        if missing:
            raise InputError(
                f"no schedule for month(s) {missing}",
                field="seasons",
                hint="give base keys that apply to the other months",
            )


DAY_SCHEDULES = (OnOffSchedule, LevelSchedule, NaturalDaySchedule)


def schedule_by_season(parts, *, default=None, hemisphere: str = "north", name: str = ""):
    """A :class:`SeasonalSchedule` from schedules given by season name or by months.

    Parameters
    ----------
    parts : dict
        Keys are season names (``"winter"``, ``"spring"``, ``"summer"``, ``"autumn"``;
        meteorological seasons) or tuples of month numbers; values are day schedules.
    default : day schedule, optional
        For the months no key covers.
    hemisphere : str
        ``"north"`` or ``"south"`` (southern seasons are shifted by six months).
    name : str
        Label.

    Returns
    -------
    SeasonalSchedule
    """
    _check_choice(hemisphere, ("north", "south"), "hemisphere")
    by_month = {m: default for m in range(1, 13)} if default is not None else {}
    for key, schedule in parts.items():
        if isinstance(key, str):
            if key not in SEASON_MONTHS:
                raise InputError(
                    f"{key!r} is not a season",
                    field="seasons",
                    hint=f"use {', '.join(SEASON_MONTHS)} or a list of months",
                )
            months = SEASON_MONTHS[key]
            if hemisphere == "south":
                months = tuple((m + 5) % 12 + 1 for m in months)
        else:
            months = tuple(int(m) for m in key)
            if not all(1 <= m <= 12 for m in months):
                raise InputError(f"months {key!r} must be 1-12", field="seasons")
        by_month.update({m: schedule for m in months})
    return SeasonalSchedule(by_month=by_month, name=name)


@dataclass(frozen=True)
class DailyProfile:
    """Output fraction of one lamp or circuit through one day.

    Attributes
    ----------
    time_s : ndarray
        Middle of each time step, after local midnight [s].
    fraction : ndarray
        Mean output fraction over each step [-].
    step_s : float
        Time step [s].
    name : str
        Label.
    """

    time_s: np.ndarray
    fraction: np.ndarray
    step_s: float
    name: str = ""


def _ramp_knots(t0, duration, level, kind, steps, up):
    """Knots of a ramp starting at t0 (rising if ``up``)."""
    if duration <= 0:
        return [(t0, 0.0 if up else level), (t0, level if up else 0.0)]
    if kind == "linear":
        return [(t0, 0.0 if up else level), (t0 + duration, level if up else 0.0)]
    knots = []
    width = duration / steps
    for k in range(steps):
        a, b = t0 + k * width, t0 + (k + 1) * width
        value = level * (k + 1) / steps if up else level * (steps - k) / steps
        knots += [(a, value), (b, value)]
    start = (t0, 0.0) if up else (t0, level)
    end = (t0 + duration, level) if up else (t0 + duration, 0.0)
    return [start, *knots, end]


def _knots(schedule, date) -> tuple[np.ndarray, np.ndarray]:
    """Piecewise-linear knots (t [s], value [-]) of a day schedule; zero outside them."""
    if isinstance(schedule, SeasonalSchedule):
        return _knots(schedule_for_date(schedule, date), date)
    if isinstance(schedule, OnOffSchedule):
        t_on = parse_clock(schedule.on)
        t_off = t_on + _on_length(t_on, parse_clock(schedule.off))
        if t_off == t_on:
            return np.array([0.0, 0.0]), np.array([0.0, 0.0])
        up = _ramp_knots(
            t_on,
            schedule.ramp_up_min * 60.0,
            schedule.level,
            schedule.ramp,
            int(schedule.ramp_steps),
            True,
        )
        down = _ramp_knots(
            t_off - schedule.ramp_down_min * 60.0,
            schedule.ramp_down_min * 60.0,
            schedule.level,
            schedule.ramp,
            int(schedule.ramp_steps),
            False,
        )
        t, v = zip(*(up + down), strict=True)
        return np.array(t), np.array(v)
    if isinstance(schedule, LevelSchedule):
        times = [parse_clock(p[0]) for p in schedule.points]
        levels = [float(p[1]) for p in schedule.points]
        t, v = [], []
        for i, (ti, li) in enumerate(zip(times, levels, strict=True)):
            t_next = times[i + 1] if i + 1 < len(times) else times[0] + DAY_S
            l_next = levels[i + 1] if i + 1 < len(times) else levels[0]
            t += [ti, t_next]
            v += [li, li if schedule.between == "hold" else l_next]
        return np.array(t), np.array(v)
    if isinstance(schedule, NaturalDaySchedule):
        return _natural_knots(schedule, date)
    raise InputError(f"unknown schedule type {type(schedule).__name__}", field="schedule")


def _natural_knots(schedule: NaturalDaySchedule, date):

    if date is None:
        raise InputError(
            "a natural-day schedule needs a date", field="date", hint="pass date=datetime.date(...)"
        )
    length_s = sunlight.day_length_h(schedule.latitude_deg, date) * 3600.0
    mid = parse_clock(schedule.midday)
    if length_s <= 0:
        return np.array([0.0, 0.0]), np.array([0.0, 0.0])
    if schedule.shape == "flat":
        length_s = min(length_s, DAY_S)
        ramps_s = (schedule.ramp_up_min + schedule.ramp_down_min) * 60.0
        if ramps_s > length_s:
            raise InputError("the ramps are longer than the natural day", field="ramp_up_min")
        up = _ramp_knots(
            mid - length_s / 2,
            schedule.ramp_up_min * 60.0,
            schedule.level,
            schedule.ramp,
            int(schedule.ramp_steps),
            True,
        )
        down = _ramp_knots(
            mid + length_s / 2 - schedule.ramp_down_min * 60.0,
            schedule.ramp_down_min * 60.0,
            schedule.level,
            schedule.ramp,
            int(schedule.ramp_steps),
            False,
        )
        t, v = zip(*(up + down), strict=True)
        return np.array(t), np.array(v)
    # sun shape: cos(zenith)^2.42 with the declination of the day, hour angle from ``midday``
    decl, _ = sunlight.solar_declination_eot(date, 12.0)
    lat = np.radians(schedule.latitude_deg)
    half = min(length_s, DAY_S) / 2
    t = mid + np.linspace(-half, half, 721)
    ha = np.radians((t - mid) / 240.0)
    cosz = np.sin(lat) * np.sin(decl) + np.cos(lat) * np.cos(decl) * np.cos(ha)
    cos_noon = np.sin(lat) * np.sin(decl) + np.cos(lat) * np.cos(decl)
    v = schedule.level * (np.clip(cosz, 0, None) / cos_noon) ** 2.42 if cos_noon > 0 else 0 * t
    return t, np.asarray(v, dtype=float)


def _cumulative(t, v, x):
    """Integral of the piecewise-linear knots from -inf to x (zero outside the knots)."""
    seg = np.diff(t)
    area = np.concatenate([[0.0], np.cumsum(0.5 * (v[:-1] + v[1:]) * seg)])
    x = np.asarray(x, dtype=float)
    i = np.searchsorted(t, x, side="right") - 1
    inside = (i >= 0) & (i < len(t) - 1)
    ic = np.clip(i, 0, len(t) - 2)
    dt_ = np.where(seg[ic] > 0, seg[ic], 1.0)
    slope = np.where(seg[ic] > 0, (v[ic + 1] - v[ic]) / dt_, 0.0)
    d = x - t[ic]
    inner = area[ic] + v[ic] * d + 0.5 * slope * d * d
    return np.where(inside, inner, np.where(i < 0, 0.0, area[-1]))


def schedule_for_date(schedule, date):
    """The day schedule that applies on ``date`` (resolves :class:`SeasonalSchedule`)."""
    if isinstance(schedule, SeasonalSchedule):
        if date is None:
            raise InputError(
                "a seasonal schedule needs a date",
                field="date",
                hint="pass date=datetime.date(...)",
            )
        return schedule.by_month[date.month]
    return schedule


def daily_profile(schedule, date: dt.date | None = None, step_s: float = 60.0) -> DailyProfile:
    """Mean output fraction over each time step of one local day.

    Parameters
    ----------
    schedule : OnOffSchedule, LevelSchedule, NaturalDaySchedule or SeasonalSchedule
        The lamp's schedule.
    date : datetime.date, optional
        The day (needed by natural-day and seasonal schedules).
    step_s : float
        Time step; must divide the day into whole steps [s].

    Returns
    -------
    DailyProfile

    Notes
    -----
    Each value is the exact mean of the piecewise-linear schedule over its step (the
    integral of a linear or stepped ramp is its analytic area at any step size; common
    practice in numerical integration). Output past midnight wraps to the start of the day.
    """
    n = DAY_S / float(step_s)
    if step_s <= 0 or abs(n - round(n)) > 1e-9:
        raise InputError(
            f"step {step_s:g} s does not divide the day into whole steps",
            field="step_s",
            hint="use 60, 30, 10 or 1",
        )
    t, v = _knots(schedule, date)
    edges = np.linspace(0.0, DAY_S, int(round(n)) + 1)
    total = np.zeros(len(edges))
    for k in (-1, 0, 1, 2):
        total += _cumulative(t, v, edges + k * DAY_S)
    fraction = np.clip(np.diff(total) / step_s, 0.0, 1.0)
    name = getattr(schedule, "name", "")
    return DailyProfile(
        time_s=0.5 * (edges[:-1] + edges[1:]), fraction=fraction, step_s=float(step_s), name=name
    )


def daily_profiles(schedules, date: dt.date | None = None, step_s: float = 60.0):
    """Profiles of several lamps or circuits as one table.

    Parameters
    ----------
    schedules : dict of str to schedule
        Lamp or circuit id to its schedule.
    date : datetime.date, optional
        The day.
    step_s : float
        Time step [s].

    Returns
    -------
    pandas.DataFrame
        Index ``time_h`` (middle of each step, local clock hours), one column per id with the
        output fraction [-].
    """
    import pandas as pd

    cols = {key: daily_profile(s, date, step_s).fraction for key, s in schedules.items()}
    time_h = (np.arange(int(round(DAY_S / step_s))) + 0.5) * step_s / 3600.0
    return pd.DataFrame(cols, index=pd.Index(time_h, name="time_h"))


def lit_hours(profile: DailyProfile) -> float:
    """Hours of the day with any output (fraction above zero) [h]."""
    return float(np.count_nonzero(profile.fraction > 0) * profile.step_s / 3600.0)


def lit_hours_of_table(profiles) -> float:
    """Hours of the day with any lamp of a :func:`daily_profiles` table on [h].

    Counted in whole steps (steps lit × 24 h / steps per day), so a 14 h day is 14.0 exactly.
    """
    table = (profiles.to_numpy(dtype=float) if hasattr(profiles, "to_numpy")  # DataFrame:
             else np.asarray(profiles, dtype=float))  # far quicker than numpy's conversion
    return float(np.count_nonzero((table > 0).any(axis=1)) * 24.0 / table.shape[0])


def full_output_hours(profile: DailyProfile) -> float:
    """Integral of the output fraction over the day, in hours at full output [h]."""
    return float(np.sum(profile.fraction) * profile.step_s / 3600.0)
