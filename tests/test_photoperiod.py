import datetime as dt

import numpy as np
import pytest

from audit_lib.day.photoperiod import (
    LevelSchedule,
    NaturalDaySchedule,
    OnOffSchedule,
    SeasonalSchedule,
    daily_profile,
    daily_profiles,
    full_output_hours,
    lit_hours,
    parse_clock,
)
from audit_lib.errors import InputError
from audit_lib.light.sun import day_length_h


@pytest.mark.parametrize("step_s", [60.0, 30.0, 10.0])
def test_constant_schedule_integrates_exactly(step_s):
    """Rectangle of height `level` and width off-on has area level x hours exactly
    (elementary geometry; the schedule is piecewise constant)."""
    p = daily_profile(OnOffSchedule(on="07:30", off="19:15", level=0.6), step_s=step_s)
    assert full_output_hours(p) == pytest.approx(0.6 * 11.75, abs=1e-12)
    assert lit_hours(p) == pytest.approx(11.75, abs=1e-12)


@pytest.mark.parametrize("step_s", [60.0, 7.5 * 60 / 4, 600.0])
def test_linear_ramps_integrate_to_trapezoid_area(step_s):
    """A day with linear ramps is a trapezoid: area = level (T - (r_up + r_down) / 2)
    (elementary geometry), at any step size, also when ramps end between steps."""
    s = OnOffSchedule(on="08:00", off="20:00", level=0.8, ramp_up_min=37, ramp_down_min=53)
    p = daily_profile(s, step_s=step_s)
    assert full_output_hours(p) == pytest.approx(0.8 * (12 - (37 + 53) / 60 / 2), abs=1e-12)


@pytest.mark.parametrize("steps", [1, 3, 4, 10])
def test_stepped_ramps_integrate_to_staircase_area(steps):
    """A staircase of n equal steps of height L/n over a ramp of length r has area
    L r (n + 1) / (2 n) (arithmetic series); two ramps, one each end."""
    s = OnOffSchedule(on="06:00", off="18:00", level=1.0, ramp_up_min=45, ramp_down_min=45,
                      ramp="steps", ramp_steps=steps)
    p = daily_profile(s, step_s=30.0)
    ramp_h = 0.75
    expected = (12 - 2 * ramp_h) + 2 * ramp_h * (steps + 1) / (2 * steps)
    assert full_output_hours(p) == pytest.approx(expected, abs=1e-12)


def test_schedule_past_midnight_wraps():
    """A daily cycle is periodic (common practice for timers): on 22:00, off 06:00 gives
    8 hours, lit at 23:00 and 01:00, dark at 12:00."""
    p = daily_profile(OnOffSchedule(on="22:00", off="06:00"))
    assert full_output_hours(p) == pytest.approx(8.0, abs=1e-12)
    assert p.fraction[23 * 60] == 1.0 and p.fraction[60] == 1.0 and p.fraction[12 * 60] == 0.0


def test_level_points_linear_and_hold():
    """Piecewise-linear triangle 06:00-12:00-18:00 peaking at 1 has area 6 h (half base x
    height); 'hold' gives 0.5 x 6 h + 1 x 6 h = 9 h (elementary geometry)."""
    pts = (("06:00", 0.0), ("12:00", 1.0), ("18:00", 0.0))
    assert full_output_hours(daily_profile(LevelSchedule(points=pts))) == pytest.approx(6.0)
    hold = LevelSchedule(points=(("06:00", 0.5), ("12:00", 1.0), ("18:00", 0.0)), between="hold")
    assert full_output_hours(daily_profile(hold)) == pytest.approx(9.0)


def test_natural_day_follows_noaa_day_length():
    """NOAA GML day length at 51.5 N (16 h 38 min in June, 7 h 50 min in December, reference
    README): a flat natural-day schedule is on for exactly that long, centred on midday."""
    s = NaturalDaySchedule(latitude_deg=51.5, midday="13:00")
    for date in (dt.date(2026, 6, 21), dt.date(2026, 12, 21)):
        p = daily_profile(s, date, step_s=1.0)
        assert full_output_hours(p) == pytest.approx(day_length_h(51.5, date), abs=1e-9)
        lit = p.time_s[p.fraction > 0]
        assert 0.5 * (lit[0] + lit[-1]) == pytest.approx(13 * 3600, abs=1.0)
    june = full_output_hours(daily_profile(s, dt.date(2026, 6, 21)))
    assert june * 60 == pytest.approx(16 * 60 + 38, abs=1.5)


def test_natural_day_sun_shape_peaks_at_level():
    """Madronich 2007 shape cos(zenith)^2.42 scaled to `level` at solar noon: the peak equals
    the level and the area is below a flat day of the same length."""
    date = dt.date(2026, 3, 20)
    p = daily_profile(NaturalDaySchedule(latitude_deg=0.0, level=0.7, shape="sun"), date)
    assert p.fraction.max() == pytest.approx(0.7, rel=1e-3)
    assert 0 < full_output_hours(p) < 0.7 * day_length_h(0.0, date)


def test_seasonal_schedule_picks_the_month():
    """Schedules by month (common practice: shorter winter photoperiod)."""
    summer = OnOffSchedule(on="07:00", off="21:00")
    winter = OnOffSchedule(on="09:00", off="17:00")
    s = SeasonalSchedule(by_month={m: winter if m in (11, 12, 1, 2) else summer
                                   for m in range(1, 13)})
    assert full_output_hours(daily_profile(s, dt.date(2026, 1, 15))) == pytest.approx(8.0)
    assert full_output_hours(daily_profile(s, dt.date(2026, 7, 15))) == pytest.approx(14.0)
    with pytest.raises(InputError, match="seasons: no schedule for month"):
        SeasonalSchedule(by_month={1: winter})


def test_profiles_table_has_one_column_per_lamp():
    """Two lamps at 1-minute steps: 1440 rows, fractions in 0..1 (1-minute resolution is the
    issue's requirement)."""
    t = daily_profiles({"uv": OnOffSchedule(on="10:00", off="14:00"), "heat": OnOffSchedule()})
    assert t.shape == (1440, 2) and t.index.name == "time_h"
    assert t["uv"].sum() / 60 == pytest.approx(4.0)
    assert np.all((t.to_numpy() >= 0) & (t.to_numpy() <= 1))


def test_bad_inputs_name_the_field():
    """Project convention: InputError names the field and gives a hint."""
    with pytest.raises(InputError, match=r"on: '7h30' is not a clock time \(hint"):
        OnOffSchedule(on="7h30")
    with pytest.raises(InputError, match="level: level 1.5 is outside 0..1"):
        OnOffSchedule(level=1.5)
    with pytest.raises(InputError, match="ramp_up_min: ramps of 400 \\+ 400 min do not fit"):
        OnOffSchedule(ramp_up_min=400, ramp_down_min=400)
    with pytest.raises(InputError, match="ramp: 'smooth' is not one of linear, steps"):
        OnOffSchedule(ramp="smooth")
    with pytest.raises(InputError, match="date: a natural-day schedule needs a date"):
        daily_profile(NaturalDaySchedule(latitude_deg=10))
    with pytest.raises(InputError, match="step_s: step 7 s does not divide the day"):
        daily_profile(OnOffSchedule(), step_s=7.0)
    assert parse_clock("24:00") == 86400.0


def test_whole_day_and_zero_length():
    """00:00 to 24:00 is the whole day (24 h); on == off gives no light (a timer that never
    switches, common practice reading of such settings)."""
    assert full_output_hours(daily_profile(OnOffSchedule(on="00:00", off="24:00"))) == 24.0
    assert full_output_hours(daily_profile(OnOffSchedule(on="09:00", off="09:00"))) == 0.0


def test_schedule_by_season_hemispheres():
    """Meteorological seasons (WMO convention: winter = Dec-Feb in the north); the southern
    hemisphere's winter is June-August."""
    from audit_lib.day.photoperiod import schedule_by_season

    short = OnOffSchedule(on="09:00", off="17:00")
    long_ = OnOffSchedule(on="07:00", off="21:00")
    north = schedule_by_season({"winter": short}, default=long_)
    south = schedule_by_season({"winter": short}, default=long_, hemisphere="south")
    jan, jul = dt.date(2026, 1, 15), dt.date(2026, 7, 15)
    assert full_output_hours(daily_profile(north, jan)) == pytest.approx(8.0)
    assert full_output_hours(daily_profile(north, jul)) == pytest.approx(14.0)
    assert full_output_hours(daily_profile(south, jul)) == pytest.approx(8.0)
    by_months = schedule_by_season({(11, 12, 1, 2): short}, default=long_)
    assert full_output_hours(daily_profile(by_months, dt.date(2026, 11, 15))) == 8.0
    with pytest.raises(InputError, match="seasons: 'monsoon' is not a season"):
        schedule_by_season({"monsoon": short}, default=long_)


def test_lit_hours_of_table_counts_whole_steps():
    """A 06:00-20:00 schedule lights 14 h exactly (elementary arithmetic: whole one-minute
    steps, no floating-point drift that would put 14 h 'above' a 14 h limit)."""
    import datetime as dt

    from audit_lib.day.photoperiod import OnOffSchedule, daily_profiles, lit_hours_of_table

    profiles = daily_profiles({"a": OnOffSchedule(on="06:00", off="20:00"),
                               "b": OnOffSchedule(on="07:00", off="19:00")},
                              dt.date(2026, 6, 1))
    assert lit_hours_of_table(profiles) == 14.0
