"""The sun as a reference: sunrise, sunset, day length and the clear-sky UV Index.

Plain functions, no site knowledge. Solar position follows the NOAA Global Monitoring
Laboratory "General Solar Position Calculations" (fractional-year series for the equation of
time and the declination, accurate to about a minute for sunrise and sunset); sunrise and
sunset are when the centre of the sun is at a zenith angle of 90.833 deg (0.833 deg for
atmospheric refraction and the solar radius). The clear-sky UV Index uses the analytic
approximation of Madronich (2007), Photochemistry and Photobiology 83:1537-1538.

Times of day are local clock times in minutes after midnight; ``utc_offset_h`` converts from
UTC (the equations work in UTC and longitude east positive).
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np

from audit_lib.errors import InputError
from audit_lib.light.metrics import SED_J_M2, erythemal_from_uv_index

#: Zenith angle of the sun's centre at sunrise and sunset [deg] (NOAA GML).
SUNRISE_ZENITH_DEG = 90.833
#: Reference total ozone column of the Madronich (2007) approximation [DU].
REFERENCE_OZONE_DU = 300.0


@dataclass(frozen=True)
class SunTimes:
    """Sunrise, solar noon and sunset of one day at one place.

    Attributes
    ----------
    date : datetime.date
        The day.
    sunrise_min, solar_noon_min, sunset_min : float
        Local clock time in minutes after midnight; NaN for sunrise and sunset during
        polar day or night [min].
    day_length_h : float
        Hours with the sun's centre above the 90.833 deg zenith angle (0 or 24 at the
        poles' night and day) [h].
    """

    date: dt.date
    sunrise_min: float
    solar_noon_min: float
    sunset_min: float
    day_length_h: float


def _check_latitude(latitude_deg) -> np.ndarray:
    lat = np.asarray(latitude_deg, dtype=float)
    if np.any(~np.isfinite(lat)) or np.any(np.abs(lat) > 90):
        raise InputError(
            f"latitude {latitude_deg!r} is outside -90..90 degrees",
            field="latitude_deg",
            hint="north is positive, south negative",
        )
    return lat


def _day_of_year(date) -> tuple[int, int]:
    if isinstance(date, dt.datetime):
        date = date.date()
    if not isinstance(date, dt.date):
        raise InputError(
            f"expected a date, got {date!r}", field="date", hint="use datetime.date(2026, 6, 21)"
        )
    year_days = (
        366 if (date.year % 4 == 0 and (date.year % 100 != 0 or date.year % 400 == 0)) else 365
    )
    return date.timetuple().tm_yday, year_days


def solar_declination_eot(date, hour_utc=12.0) -> tuple[np.ndarray, np.ndarray]:
    """Solar declination and equation of time from the NOAA fractional-year series.

    Parameters
    ----------
    date : datetime.date
        The day (Gregorian calendar).
    hour_utc : float or array_like
        Hour of the day in UTC [h].

    Returns
    -------
    declination_rad : ndarray
        Solar declination [rad].
    eot_min : ndarray
        Equation of time, true minus mean solar time [min].

    Notes
    -----
    NOAA GML, "General Solar Position Calculations":
    gamma = 2 pi / N (doy - 1 + (hour - 12) / 24) with N = 365 or 366 days.
    """
    doy, year_days = _day_of_year(date)
    hour = np.asarray(hour_utc, dtype=float)
    g = 2 * np.pi / year_days * (doy - 1 + (hour - 12) / 24)
    eot = 229.18 * (
        0.000075
        + 0.001868 * np.cos(g)
        - 0.032077 * np.sin(g)
        - 0.014615 * np.cos(2 * g)
        - 0.040849 * np.sin(2 * g)
    )
    decl = (
        0.006918
        - 0.399912 * np.cos(g)
        + 0.070257 * np.sin(g)
        - 0.006758 * np.cos(2 * g)
        + 0.000907 * np.sin(2 * g)
        - 0.002697 * np.cos(3 * g)
        + 0.00148 * np.sin(3 * g)
    )
    return decl, eot


def solar_zenith_deg(latitude_deg, longitude_deg, date, local_min, utc_offset_h=0.0) -> np.ndarray:
    """Solar zenith angle through a day (no refraction).

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    longitude_deg : float
        Longitude, east positive [deg].
    date : datetime.date
        Local calendar day.
    local_min : array_like
        Local clock time in minutes after midnight [min].
    utc_offset_h : float
        Local time minus UTC [h].

    Returns
    -------
    ndarray
        Zenith angle of the sun's centre [deg].

    Notes
    -----
    NOAA GML, "General Solar Position Calculations": true solar time
    tst = t + eqtime + 4 lon - 60 tz, hour angle ha = tst / 4 - 180,
    cos(zenith) = sin(lat) sin(decl) + cos(lat) cos(decl) cos(ha).
    """
    lat = np.radians(_check_latitude(latitude_deg))
    t = np.asarray(local_min, dtype=float)
    hour_utc = (t / 60.0) - utc_offset_h
    decl, eot = solar_declination_eot(date, hour_utc)
    tst = t + eot + 4.0 * float(longitude_deg) - 60.0 * utc_offset_h
    ha = np.radians(tst / 4.0 - 180.0)
    cosz = np.sin(lat) * np.sin(decl) + np.cos(lat) * np.cos(decl) * np.cos(ha)
    return np.degrees(np.arccos(np.clip(cosz, -1.0, 1.0)))


def sun_times(latitude_deg, longitude_deg, date, utc_offset_h=0.0) -> SunTimes:
    """Sunrise, solar noon, sunset and day length of one day.

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    longitude_deg : float
        Longitude, east positive [deg].
    date : datetime.date
        Local calendar day.
    utc_offset_h : float
        Local time minus UTC [h].

    Returns
    -------
    SunTimes

    Notes
    -----
    NOAA GML, "General Solar Position Calculations": sunrise/sunset hour angle
    ha = arccos(cos(90.833) / (cos(lat) cos(decl)) - tan(lat) tan(decl)); sunrise
    = 720 - 4 (lon + ha) - eqtime [min UTC]; solar noon = 720 - 4 lon - eqtime. The
    declination and equation of time are evaluated at solar noon of the day.
    """
    lat = float(_check_latitude(latitude_deg))
    lon = float(longitude_deg)
    # evaluate the series at (approximate) solar noon in UTC
    noon_utc_h = 12.0 - lon / 15.0
    decl, eot = solar_declination_eot(date, noon_utc_h)
    decl, eot = float(decl), float(eot)
    noon_min = 720.0 - 4.0 * lon - eot + 60.0 * utc_offset_h
    latr = np.radians(lat)
    cos_ha = np.cos(np.radians(SUNRISE_ZENITH_DEG)) / (np.cos(latr) * np.cos(decl)) - np.tan(
        latr
    ) * np.tan(decl)
    if cos_ha >= 1.0:  # polar night
        return SunTimes(_as_date(date), np.nan, noon_min, np.nan, 0.0)
    if cos_ha <= -1.0:  # polar day
        return SunTimes(_as_date(date), np.nan, noon_min, np.nan, 24.0)
    ha_deg = float(np.degrees(np.arccos(cos_ha)))
    return SunTimes(
        _as_date(date),
        sunrise_min=noon_min - 4.0 * ha_deg,
        solar_noon_min=noon_min,
        sunset_min=noon_min + 4.0 * ha_deg,
        day_length_h=8.0 * ha_deg / 60.0,
    )


def _as_date(date) -> dt.date:
    return date.date() if isinstance(date, dt.datetime) else date


def day_length_h(latitude_deg, date) -> float:
    """Hours from sunrise to sunset (zenith 90.833 deg) at a latitude on a day.

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    date : datetime.date
        The day.

    Returns
    -------
    float
        Day length [h]; 0 in polar night, 24 in polar day.

    Notes
    -----
    NOAA GML "General Solar Position Calculations" (see :func:`sun_times`); the length does
    not depend on longitude beyond the small change of declination within a day.
    """
    return sun_times(latitude_deg, 0.0, date).day_length_h


def clear_sky_uvi(solar_zenith_deg, ozone_du=REFERENCE_OZONE_DU) -> np.ndarray:
    """Clear-sky UV Index from the solar zenith angle and the total ozone column.

    Parameters
    ----------
    solar_zenith_deg : array_like
        Solar zenith angle [deg]; the index is 0 at and beyond 90 deg.
    ozone_du : float or array_like
        Total ozone column [DU].

    Returns
    -------
    ndarray
        UV Index [-].

    Notes
    -----
    Madronich (2007), Photochemistry and Photobiology 83:1537, analytic approximation for
    clear skies at sea level with low aerosol:
    UVI = 12.5 mu0^2.42 (ozone / 300 DU)^-1.23, mu0 = cos(zenith). Surface albedo,
    altitude, aerosol and cloud are not included.
    """
    sza = np.asarray(solar_zenith_deg, dtype=float)
    ozone = np.asarray(ozone_du, dtype=float)
    if np.any(ozone <= 0):
        raise InputError(
            f"total ozone {ozone_du!r} DU must be positive",
            field="ozone_du",
            hint="typical values are 250-450 DU",
        )
    mu0 = np.clip(np.cos(np.radians(sza)), 0.0, None)
    return 12.5 * mu0**2.42 * (ozone / REFERENCE_OZONE_DU) ** -1.23


def clear_sky_uvi_day(
    latitude_deg,
    longitude_deg,
    date,
    *,
    ozone_du=REFERENCE_OZONE_DU,
    utc_offset_h=0.0,
    step_s=60.0,
):
    """Clear-sky UV Index through one local day.

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    longitude_deg : float
        Longitude, east positive [deg].
    date : datetime.date
        Local calendar day.
    ozone_du : float
        Total ozone column [DU].
    utc_offset_h : float
        Local time minus UTC [h].
    step_s : float
        Time step; samples sit at the middle of each step [s].

    Returns
    -------
    pandas.DataFrame
        Columns ``time_h`` (local clock hours), ``solar_zenith_deg`` and ``uvi``.

    Notes
    -----
    Solar position from NOAA GML; UV Index from Madronich (2007); see
    :func:`solar_zenith_deg` and :func:`clear_sky_uvi`.
    """
    import pandas as pd

    t_s = (np.arange(int(round(86400 / step_s))) + 0.5) * step_s
    sza = solar_zenith_deg(latitude_deg, longitude_deg, date, t_s / 60.0, utc_offset_h)
    return pd.DataFrame(
        {"time_h": t_s / 3600.0, "solar_zenith_deg": sza, "uvi": clear_sky_uvi(sza, ozone_du)}
    )


def clear_sky_daily_dose_sed(latitude_deg, date, *, ozone_du=REFERENCE_OZONE_DU) -> float:
    """Clear-sky erythemal daily dose from the Madronich UV Index.

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    date : datetime.date
        The day.
    ozone_du : float
        Total ozone column [DU].

    Returns
    -------
    float
        Daily erythemal dose [SED] (1 SED = 100 J m-2; UVI 1 = 0.025 W m-2 erythemal).

    Notes
    -----
    Integrates :func:`clear_sky_uvi_day` at 1-minute steps; WHO (2002) for the UV Index
    scale, CIE S 007/E-1998 for the SED.
    """
    day = clear_sky_uvi_day(latitude_deg, 0.0, date, ozone_du=ozone_du, step_s=60.0)
    return float(np.sum(erythemal_from_uv_index(day["uvi"].to_numpy())) * 60.0 / SED_J_M2)


def sun_summary(
    latitude_deg, longitude_deg, date, *, utc_offset_h=0.0, ozone_du=REFERENCE_OZONE_DU
) -> dict:
    """Sunrise, solar noon, sunset, day length and clear-sky UV figures of one day.

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    longitude_deg : float
        Longitude, east positive [deg].
    date : datetime.date
        Local calendar day.
    utc_offset_h : float
        Local time minus UTC [h].
    ozone_du : float
        Total ozone column [DU].

    Returns
    -------
    dict
        ``date``, ``sunrise``, ``solar_noon``, ``sunset`` (local ``"HH:MM"`` or ``""``),
        ``day_length_h`` [h], ``peak_uvi`` [-] and ``daily_sed`` [SED] (NOAA GML solar
        position; Madronich 2007 clear-sky UV Index).
    """
    times = sun_times(latitude_deg, longitude_deg, date, utc_offset_h)
    day = clear_sky_uvi_day(latitude_deg, longitude_deg, date, ozone_du=ozone_du,
                            utc_offset_h=utc_offset_h)  # fmt: skip

    def clock(minutes):
        if not np.isfinite(minutes):
            return ""
        m = int(round(minutes)) % 1440
        return f"{m // 60:02d}:{m % 60:02d}"

    return {
        "date": _as_date(date).isoformat(),
        "latitude_deg": float(latitude_deg),
        "longitude_deg": float(longitude_deg),
        "sunrise": clock(times.sunrise_min),
        "solar_noon": clock(times.solar_noon_min),
        "sunset": clock(times.sunset_min),
        "day_length_h": round(times.day_length_h, 4),
        "ozone_du": float(ozone_du),
        "peak_uvi": round(float(day["uvi"].max()), 3),
        "daily_sed": round(clear_sky_daily_dose_sed(latitude_deg, date, ozone_du=ozone_du), 2),
    }


def format_sun_summary(summary: dict) -> str:
    """Plain-text table of :func:`sun_summary` for the command line."""
    minutes = int(round(summary["day_length_h"] * 60))
    rows = [
        ("date", summary["date"]),
        ("place", f"{summary['latitude_deg']:g} deg N, {summary['longitude_deg']:g} deg E"),
        ("sunrise", summary["sunrise"] or "none (polar day or night)"),
        ("solar noon", summary["solar_noon"]),
        ("sunset", summary["sunset"] or "none (polar day or night)"),
        ("day length", f"{minutes // 60} h {minutes % 60:02d} min"),
        (
            "clear-sky UV Index at noon",
            f"{summary['peak_uvi']:.1f} (ozone {summary['ozone_du']:g} DU)",
        ),
        ("clear-sky daily dose", f"{summary['daily_sed']:.1f} SED"),
    ]
    width = max(len(k) for k, _ in rows)
    lines = [f"{k.ljust(width)}  {v}" for k, v in rows]
    lines.append(
        "Sources: NOAA GML solar position; Madronich 2007 clear-sky UV Index "
        "(no cloud, aerosol, altitude or snow)."
    )
    return "\n".join(lines)
