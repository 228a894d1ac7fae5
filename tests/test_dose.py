import datetime as dt

import numpy as np
import pytest

from audit_lib.day.dose import (
    TimeBudget,
    integrate_daily_dose,
    integrate_time_budget,
    monthly_table,
)
from audit_lib.day.photoperiod import NaturalDaySchedule, OnOffSchedule, daily_profile
from audit_lib.errors import InputError
from audit_lib.light.sun import clear_sky_daily_dose_sed, day_length_h


def test_one_hour_at_uvi_1_is_0_9_sed():
    """CIE S 007/E-1998 (1 SED = 100 J m-2) and WHO 2002 (UVI 1 = 25 mW m-2 erythemal):
    one hour at UVI 1 gives 90 J m-2 = 0.9 SED."""
    d = integrate_daily_dose(1.0, daily_profile(OnOffSchedule(on="10:00", off="11:00")))
    assert d.erythemal_j_m2 == pytest.approx(90.0, abs=1e-9)
    assert d.sed == pytest.approx(0.9, abs=1e-12)
    assert d.peak_uvi == pytest.approx(1.0) and d.mean_uvi_exposed == pytest.approx(1.0)


def test_constant_schedule_dose_is_output_times_hours():
    """Constant output: dose = UVI/40 x level x seconds (WHO 2002 scale; exact integral of a
    constant); vitamin-D dose likewise from its irradiance."""
    p = daily_profile(OnOffSchedule(on="08:00", off="20:00", level=0.5))
    d = integrate_daily_dose(4.0, p, vitamin_d_w_m2_full=0.2)
    assert d.erythemal_j_m2 == pytest.approx(4.0 / 40 * 0.5 * 12 * 3600, rel=1e-12)
    assert d.vitamin_d_j_m2 == pytest.approx(0.2 * 0.5 * 12 * 3600, rel=1e-12)
    assert d.exposed_hours == pytest.approx(12.0)


def test_ramps_dose_matches_trapezoid():
    """Linear ramps: area level (T - (r_up + r_down)/2) (elementary geometry) times UVI/40."""
    p = daily_profile(OnOffSchedule(on="08:00", off="18:00", ramp_up_min=60, ramp_down_min=120))
    d = integrate_daily_dose(2.0, p)
    assert d.erythemal_j_m2 == pytest.approx(2.0 / 40 * (10 - 1.5) * 3600, rel=1e-12)


def test_two_lamps_superpose():
    """Weighted irradiances are linear in lamp output (superposition): two lamps' doses add."""
    a = daily_profile(OnOffSchedule(on="08:00", off="20:00"))
    b = daily_profile(OnOffSchedule(on="11:00", off="15:00"))
    both = integrate_daily_dose({"a": 1.0, "b": 3.0}, {"a": a, "b": b})
    assert both.erythemal_j_m2 == pytest.approx((1.0 * 12 + 3.0 * 4) * 3600 / 40)
    assert both.peak_uvi == pytest.approx(4.0)


def test_hours_in_range_counts_only_exposed_time():
    """Ramp 0->2 UVI over 60 min, then 2 UVI: UVI is within 1..3 for the last 30 min of the
    ramp plus the plateau (linear interpolation; boundaries inclusive)."""
    p = daily_profile(OnOffSchedule(on="08:00", off="12:00", ramp_up_min=60), step_s=1.0)
    d = integrate_daily_dose(2.0, p, uvi_range=(1.0, 3.0))
    assert d.hours_in_range == pytest.approx(3.5, abs=2 / 3600)
    dark = integrate_daily_dose(0.0, p, uvi_range=(0.0, 0.7))
    assert dark.hours_in_range == 0.0


def test_surface_maps_give_maps():
    """A map of UVI at full output gives a dose map cell by cell (linearity: same as a point
    at each cell, WHO 2002 scale)."""
    grid = np.linspace(0, 5, 12).reshape(3, 4)
    p = daily_profile(OnOffSchedule(on="09:00", off="17:00", ramp_up_min=30, ramp_down_min=30))
    d = integrate_daily_dose(grid, p, uvi_range=(1, 3))
    assert d.sed.shape == (3, 4)
    for value, sed in zip(grid.ravel(), d.sed.ravel(), strict=True):
        assert sed == pytest.approx(integrate_daily_dose(float(value), p).sed)


def test_time_budget_weights_positions():
    """Share-weighted dose (time at each place evenly spread over the active day, common
    practice first estimate): 0.25 at UVI 4 and 0.75 at UVI 0 for 10 h gives
    0.25 x 4 x 10 h x 0.9 SED/h = 9 SED (CIE S 007 / WHO 2002); mean UVI 1.0."""
    p = daily_profile(OnOffSchedule(on="08:00", off="18:00"))
    budget = TimeBudget(shares={"basking": 0.25, "hide": 0.75})
    animal, table = integrate_time_budget(budget, {"basking": 4.0, "hide": 0.0}, p,
                                          uvi_range=(0.7, 1.0))
    assert animal.sed == pytest.approx(9.0)
    assert animal.mean_uvi_exposed == pytest.approx(1.0)
    assert animal.peak_uvi == pytest.approx(4.0)
    assert animal.exposed_hours == pytest.approx(10.0)
    assert list(table.index) == ["basking", "hide"]


def test_time_budget_remainder_is_out_of_the_uv():
    """Shares below 1 leave the rest of the active day without UV (our stated rule): 0.5 of
    10 h at UVI 2 gives 0.5 x 2 x 10 h x 0.9 SED/h = 9 SED (CIE S 007) and mean UVI 1."""
    p = daily_profile(OnOffSchedule(on="08:00", off="18:00"))
    animal, _ = integrate_time_budget(TimeBudget(shares={"a": 0.5}), {"a": 2.0}, p)
    assert animal.sed == pytest.approx(9.0)
    assert animal.mean_uvi_exposed == pytest.approx(1.0)


def test_time_budget_active_window():
    """An explicit active window 10:00-14:00 counts only those 4 h (schedule 08-18)."""
    p = daily_profile(OnOffSchedule(on="08:00", off="18:00"))
    budget = TimeBudget(shares={"a": 1.0}, active_from="10:00", active_to="14:00")
    animal, _ = integrate_time_budget(budget, {"a": 1.0}, p)
    assert animal.sed == pytest.approx(4 * 0.9)


def test_time_budget_errors():
    """Project convention: errors name the field and hint at the fix."""
    with pytest.raises(InputError, match="shares: the shares add up to 1.1, more than 1"):
        TimeBudget(shares={"a": 0.5, "b": 0.6})
    p = daily_profile(OnOffSchedule())
    with pytest.raises(InputError, match=r"no UV Index for position\(s\) \['b'\]"):
        integrate_time_budget(TimeBudget(shares={"a": 0.5, "b": 0.5}), {"a": 1.0}, p)
    with pytest.raises(InputError, match="one uvi_full value given for 2 lamps"):
        integrate_daily_dose(1.0, {"x": p, "y": p})


def test_monthly_table_follows_natural_day_and_sun():
    """Month table of a natural-day lamp at 40 N: lit hours equal the NOAA day length of each
    15th (within the 1-minute step) and the clear-sky column equals sunlight.clear_sky_daily_
    dose_sed (Madronich 2007) on the same day."""
    s = NaturalDaySchedule(latitude_deg=40.0, midday="12:00")
    t = monthly_table(2.0, s, 2026, uvi_range=(1.0, 3.0), reference_latitude_deg=40.0)
    assert list(t.index) == list(range(1, 13))
    for month in (1, 6, 12):
        day = dt.date(2026, month, 15)
        assert t.loc[month, "lit_hours"] == pytest.approx(day_length_h(40.0, day), abs=2 / 60)
        assert t.loc[month, "sed"] == pytest.approx(
            2.0 * 0.9 * day_length_h(40.0, day), rel=1e-9)
        assert t.loc[month, "sun_clear_sky_sed"] == pytest.approx(
            clear_sky_daily_dose_sed(40.0, day))
    assert t.loc[6, "sed"] > t.loc[12, "sed"]


def test_uvi_series_superposes_lamps():
    """Superposition of lamp contributions (weighted irradiance is linear in output): at
    12:00 both lamps are on, at 09:00 only the first."""
    from audit_lib.day.dose import uvi_series

    a = daily_profile(OnOffSchedule(on="08:00", off="20:00"))
    b = daily_profile(OnOffSchedule(on="11:00", off="15:00"))
    s = uvi_series({"a": 1.5, "b": 2.0}, {"a": a, "b": b})
    assert s.index.name == "time_h" and len(s) == 1440
    assert s.iloc[12 * 60] == pytest.approx(3.5) and s.iloc[9 * 60] == pytest.approx(1.5)
    with pytest.raises(InputError, match="uvi_series takes point values"):
        uvi_series(np.ones(3), a)


def test_map_statistics_match_a_plain_numpy_loop():
    """Reference: the plain time-by-time numpy evaluation of sum_l value_l x fraction_l(t)
    (rectangle rule over the 1-minute step means) gives the same dose, peak, exposed and
    in-range hours as the library's grouped evaluation."""
    from audit_lib.day.photoperiod import LevelSchedule

    rng = np.random.default_rng(3)
    maps = {"a": rng.random((6, 5)) * 3, "b": rng.random((6, 5)) * 2}
    profiles = {
        "a": daily_profile(OnOffSchedule(on="07:00", off="19:00", ramp_up_min=45,
                                         ramp_down_min=20, ramp="steps", ramp_steps=3)),
        "b": daily_profile(LevelSchedule(points=(("09:00", 0.0), ("13:00", 1.0),
                                                 ("17:00", 0.0)))),
    }
    d = integrate_daily_dose(maps, profiles, uvi_range=(1.0, 2.5))
    series = sum(profiles[k].fraction[:, None, None] * maps[k][None] for k in maps)
    assert np.allclose(d.erythemal_j_m2, series.sum(axis=0) * 60 / 40)
    assert np.allclose(d.peak_uvi, series.max(axis=0))
    assert np.allclose(d.exposed_hours, (series > 0).sum(axis=0) / 60)
    in_range = ((series > 0) & (series >= 1.0) & (series <= 2.5)).sum(axis=0) / 60
    assert np.allclose(d.hours_in_range, in_range)
