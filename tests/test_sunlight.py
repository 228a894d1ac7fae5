import datetime as dt

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.light.sun import (
    clear_sky_daily_dose_sed,
    clear_sky_uvi,
    clear_sky_uvi_day,
    day_length_h,
    solar_declination_eot,
    solar_zenith_deg,
    sun_times,
)

JUNE = dt.date(2026, 6, 21)
DECEMBER = dt.date(2026, 12, 21)


def _minutes(hours):
    return hours * 60.0


@pytest.mark.parametrize(
    ("latitude", "date", "expected_min"),
    [
        (0.0, dt.date(2026, 3, 20), 12 * 60 + 7),
        (51.5, JUNE, 16 * 60 + 38),
        (51.5, DECEMBER, 7 * 60 + 50),
    ],
)
def test_day_length_matches_noaa_check_values(latitude, date, expected_min):
    """NOAA GML "General Solar Position Calculations" with sunrise at zenith 90.833 deg:
    equator about 12 h 07 min; 51.5 N 16 h 38 min in June and 7 h 50 min in December
    (check values of the project's reference notes, computed and compared with pvlib SPA)."""
    assert _minutes(day_length_h(latitude, date)) == pytest.approx(expected_min, abs=1.5)


YEAR_LATITUDES = (-65.0, -50.0, -30.0, 0.0, 20.0, 40.0, 50.0, 60.0, 65.0)


@pytest.mark.parametrize("latitude", YEAR_LATITUDES)
def test_every_day_of_a_year_within_a_minute_of_nrel_spa(latitude):
    """NREL SPA (Reda & Andreas 2004, Solar Energy 76:577) as implemented in pvlib,
    :func:`pvlib.solarposition.sun_rise_set_transit_spa` (its own interpolation of three
    days of positions, sun's centre at -0.8333 deg altitude): sunrise, sunset, solar noon and
    day length on every day of 2026 within 1 minute, at longitude 0 so that every event falls
    on the UTC day SPA computes."""
    import pandas as pd
    import pvlib

    days = pd.date_range("2026-01-01", "2026-12-31", freq="D", tz="UTC")
    spa = pvlib.solarposition.sun_rise_set_transit_spa(days, latitude, 0.0)
    errors = []
    for stamp, row in spa.iterrows():
        ours = sun_times(latitude, 0.0, stamp.date(), utc_offset_h=0.0)

        def minutes(column, stamp=stamp, row=row):
            return (row[column] - stamp).total_seconds() / 60.0

        rise, noon, sets = minutes("sunrise"), minutes("transit"), minutes("sunset")
        errors.append((ours.sunrise_min - rise, ours.sunset_min - sets,
                       ours.solar_noon_min - noon, ours.day_length_h * 60 - (sets - rise)))
    worst = np.abs(np.array(errors)).max(axis=0)
    assert worst.max() < 1.0, f"sunrise, sunset, noon, length off by up to {worst} min"
    assert len(errors) == 365


@pytest.mark.parametrize(("latitude", "longitude", "offset"),
                         [(51.5, -0.1, 1.0), (-33.9, 151.2, 10.0), (60.0, 25.0, 3.0)])
@pytest.mark.parametrize("date", [dt.date(2026, 3, 20), JUNE, dt.date(2026, 9, 23), DECEMBER])
def test_solar_zenith_agrees_with_pvlib_spa_through_a_day(latitude, longitude, offset, date):
    """pvlib.solarposition.get_solarposition (NREL SPA, Reda & Andreas 2004), its 'zenith'
    column (no refraction): within 0.02 deg every 10 minutes of the day at the equinoxes and
    solstices (Meeus's low-accuracy solar coordinates are good to about 0.01 deg)."""
    import pandas as pd
    import pvlib

    minutes = np.arange(0, 1440, 10.0)
    times = pd.Timestamp(date, tz="UTC") + pd.to_timedelta(minutes - 60 * offset, unit="min")
    ref = pvlib.solarposition.get_solarposition(times, latitude, longitude, method="nrel_numpy")
    ours = solar_zenith_deg(latitude, longitude, date, minutes, offset)
    np.testing.assert_allclose(ours, ref["zenith"].to_numpy(), atol=0.02)


def test_declination_and_equation_of_time_match_meeus_worked_example():
    """Meeus (1998), Astronomical Algorithms, example 25.a (1992 October 13, 0h TD): apparent
    declination -7.78507 deg; example 28.b (same day): equation of time +13m 42.6s. Read from
    the book (from memory of the worked example; the solar equations are also checked against
    pvlib SPA above)."""
    decl, eot = solar_declination_eot(dt.date(1992, 10, 13), 0.0)
    assert np.degrees(decl) == pytest.approx(-7.78507, abs=0.002)
    assert eot == pytest.approx(13 + 42.6 / 60, abs=0.05)


def test_local_day_and_offset_shift_clock_times_only():
    """A UTC offset relabels the clock (solar noon moves by exactly the offset) and leaves the
    day length alone to within the declination change of a few hours (NOAA GML convention)."""
    utc = sun_times(51.5, -0.1, JUNE, 0.0)
    bst = sun_times(51.5, -0.1, JUNE, 1.0)
    assert bst.solar_noon_min - utc.solar_noon_min == pytest.approx(60.0, abs=0.05)
    assert bst.day_length_h == pytest.approx(utc.day_length_h, abs=1 / 600)


def test_polar_day_and_night():
    """NOAA GML: no sunrise when |cos ha| > 1; 24 h north of the Arctic circle at the June
    solstice and 0 h in December (common practice knowledge of polar day/night)."""
    assert day_length_h(78.0, JUNE) == 24.0
    assert day_length_h(78.0, DECEMBER) == 0.0
    assert np.isnan(sun_times(78.0, 15.0, DECEMBER).sunrise_min)


@pytest.mark.parametrize(
    ("sza", "ozone"),
    [(0.0, 300.0), (30.0, 300.0), (45.0, 250.0), (60.0, 350.0), (75.0, 400.0)],
)
def test_madronich_formula_by_hand(sza, ozone):
    """Madronich 2007, Photochem. Photobiol. 83:1537: UVI = 12.5 mu0^2.42 (ozone/300)^-1.23,
    evaluated by hand with math.cos (30 deg, 300 DU -> 8.825 in the reference README)."""
    import math

    expected = 12.5 * math.cos(math.radians(sza)) ** 2.42 * (ozone / 300.0) ** -1.23
    assert float(clear_sky_uvi(sza, ozone)) == pytest.approx(expected, rel=1e-12)


def test_madronich_published_check_value():
    """Madronich 2007 formula at 30 deg and 300 DU gives 8.825 (reference-data README,
    computed from the formula); below the horizon the index is zero."""
    assert float(clear_sky_uvi(30.0, 300.0)) == pytest.approx(8.825, abs=5e-4)
    assert float(clear_sky_uvi(95.0)) == 0.0
    with pytest.raises(InputError, match="total ozone"):
        clear_sky_uvi(30.0, 0.0)


def test_clear_sky_day_peaks_near_solar_noon():
    """NOAA GML solar noon = 720 - 4 lon - eqtime; Madronich UVI is largest at the smallest
    zenith angle, so the day's curve peaks at solar noon (to the 1-minute step)."""
    day = clear_sky_uvi_day(51.5, -0.1, JUNE, step_s=60.0)
    noon = sun_times(51.5, -0.1, JUNE).solar_noon_min
    peak_min = day["time_h"].iloc[int(day["uvi"].argmax())] * 60
    assert peak_min == pytest.approx(noon, abs=1.5)
    assert len(day) == 1440


def test_clear_sky_daily_dose_is_the_integral_of_the_index():
    """WHO 2002 (1 UVI = 25 mW m-2) and CIE S 007 (1 SED = 100 J m-2): daily SED equals
    sum(UVI) x 60 s / 40 / 100 over the 1-minute curve."""
    day = clear_sky_uvi_day(20.0, 0.0, JUNE, step_s=60.0)
    expected = day["uvi"].sum() * 60.0 / 40.0 / 100.0
    assert clear_sky_daily_dose_sed(20.0, JUNE) == pytest.approx(expected, rel=1e-9)


def test_bad_latitude_is_named():
    """Input checking (project convention: errors name the field and a hint)."""
    with pytest.raises(InputError, match="latitude_deg: latitude 95"):
        day_length_h(95.0, JUNE)
