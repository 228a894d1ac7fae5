import datetime as dt

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.light.sun import (
    clear_sky_daily_dose_sed,
    clear_sky_uvi,
    clear_sky_uvi_day,
    day_length_h,
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
    (check values in the shared reference-data README, computed and compared with pvlib SPA)."""
    assert _minutes(day_length_h(latitude, date)) == pytest.approx(expected_min, abs=1.5)


@pytest.mark.parametrize(("latitude", "date"), [(0.0, JUNE), (51.5, JUNE), (51.5, DECEMBER),
                                                (-33.9, DECEMBER), (35.0, dt.date(2026, 9, 1))])
def test_sunrise_sunset_agree_with_pvlib_spa(latitude, date):
    """pvlib.solarposition.sun_rise_set_transit_spa (NREL SPA, Reda & Andreas 2004) as the
    reference library: sunrise, solar noon and sunset within 2 minutes of the NOAA series."""
    import pandas as pd
    import pvlib

    longitude = -0.1
    times = pd.DatetimeIndex([pd.Timestamp(date, tz="UTC")])
    spa = pvlib.solarposition.sun_rise_set_transit_spa(times, latitude, longitude)
    ours = sun_times(latitude, longitude, date, utc_offset_h=0.0)
    midnight = pd.Timestamp(date, tz="UTC")

    def minutes(column):
        return (spa[column].iloc[0] - midnight).total_seconds() / 60.0

    assert ours.sunrise_min == pytest.approx(minutes("sunrise"), abs=2.0)
    assert ours.sunset_min == pytest.approx(minutes("sunset"), abs=2.0)
    assert ours.solar_noon_min == pytest.approx(minutes("transit"), abs=1.0)


def test_solar_zenith_agrees_with_pvlib_through_a_day():
    """pvlib.solarposition.get_solarposition (NREL SPA, Reda & Andreas 2004), its 'zenith'
    column (no refraction) as reference; the NOAA series is good to about 0.1-0.2 deg."""
    import pandas as pd
    import pvlib

    minutes = np.arange(0, 1440, 30.0)
    times = pd.Timestamp("2026-06-21", tz="UTC") + pd.to_timedelta(minutes, unit="min")
    ref = pvlib.solarposition.get_solarposition(times, 51.5, -0.1, method="nrel_numpy")
    ours = solar_zenith_deg(51.5, -0.1, JUNE, minutes)
    np.testing.assert_allclose(ours, ref["zenith"].to_numpy(), atol=0.2)


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
