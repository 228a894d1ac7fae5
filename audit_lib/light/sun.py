"""The sun as a reference: sun position, sunrise, sunset, day length, clear-sky UV Index.

Plain functions, no site knowledge. The sun's position follows the NOAA Global Monitoring
Laboratory solar calculator equations, which are those of Meeus (1998), *Astronomical
Algorithms*, 2nd ed., ch. 25 ("solar coordinates, low accuracy": geometric mean longitude,
mean anomaly, equation of the centre, apparent longitude with the nutation and aberration
term, mean and corrected obliquity) and ch. 28 (equation of time, Smart's series). Their
declination is good to about 0.01 deg over 1900-2100. Sunrise and sunset are when the
centre of the sun is at a zenith angle of 90.833 deg (0.833 deg for atmospheric refraction
and the solar radius, as NOAA and NREL SPA use); each event is found by fixed-point
iteration with the declination and equation of time at the event itself (not at noon),
which keeps sunrise, sunset and day length within a few seconds of NREL SPA (Reda &
Andreas 2004) for |latitude| <= 65 deg on every day of the year (tests/test_sunlight.py
checks it against pvlib's SPA over a whole year at nine latitudes). The clear-sky UV Index
uses the analytic approximation of Madronich (2007), Photochemistry and Photobiology
83:1537-1538.

Times of day are local clock times in minutes after midnight of the local calendar day;
``utc_offset_h`` converts from UTC (the equations work in UTC and longitude east positive).
Universal time is used for terrestrial time (the ~70 s difference moves the sun by less
than 0.001 deg).
"""

from __future__ import annotations

import datetime as dt
import functools
import math
from dataclasses import dataclass

import numpy as np

from audit_lib.errors import InputError
from audit_lib.light.metrics import SED_J_M2, erythemal_from_uv_index

#: Zenith angle of the sun's centre at sunrise and sunset [deg] (NOAA GML; NREL SPA).
SUNRISE_ZENITH_DEG = 90.833
#: Reference total ozone column of the Madronich (2007) approximation [DU].
REFERENCE_OZONE_DU = 300.0
#: Julian day of 2000-01-01 12:00 (epoch J2000.0) [d] (Meeus 1998, ch. 7).
_J2000 = 2451545.0
#: Fixed-point iterations for sunrise, sunset and solar noon (3 converge to < 0.1 s).
_ITERATIONS = 3


@dataclass(frozen=True)
class SunTimes:
    """Sunrise, solar noon and sunset of one day at one place.

    Attributes
    ----------
    date : datetime.date
        The local calendar day.
    sunrise_min, solar_noon_min, sunset_min : float
        Local clock time in minutes after midnight; NaN for sunrise and sunset during
        polar day or night [min].
    day_length_h : float
        Hours with the sun's centre above the 90.833 deg zenith angle (0 or 24 at the
        poles' night and day) [h].
    utc_offset_h : float
        Local time minus UTC used for the clock times [h].
    """

    date: dt.date
    sunrise_min: float
    solar_noon_min: float
    sunset_min: float
    day_length_h: float
    utc_offset_h: float = 0.0


def _check_latitude(latitude_deg) -> np.ndarray:
    lat = np.asarray(latitude_deg, dtype=float)
    if np.any(~np.isfinite(lat)) or np.any(np.abs(lat) > 90):
        raise InputError(
            f"latitude {latitude_deg!r} is outside -90..90 degrees",
            field="latitude_deg",
            hint="north is positive, south negative",
        )
    return lat


def _as_date(date) -> dt.date:
    if isinstance(date, dt.datetime):
        return date.date()
    if not isinstance(date, dt.date):
        raise InputError(
            f"expected a date, got {date!r}", field="date", hint="use datetime.date(2026, 6, 21)"
        )
    return date


def julian_day(date, hour_utc=0.0):
    """Julian day of a calendar day and hour (proleptic Gregorian calendar).

    Parameters
    ----------
    date : datetime.date
        The day.
    hour_utc : float or array_like
        Hours after 00:00 UTC of that day; may be negative or beyond 24 [h].

    Returns
    -------
    float or numpy.ndarray
        Julian day [d] (Meeus 1998, ch. 7: JD 2451544.5 is 2000-01-01 00:00 UT).
    """
    return _as_date(date).toordinal() + 1721424.5 + np.asarray(hour_utc, dtype=float) / 24.0


def _declination_eot(jd, xp=np):
    """Declination [rad] and equation of time [min] at Julian day(s) ``jd`` (Meeus 1998).

    ``xp`` is :mod:`numpy` for arrays or :mod:`math` for one instant (sunrise iterations run
    some twenty times faster on plain floats); the formula is written once for both.
    """
    asin = np.arcsin if xp is np else math.asin
    rad = math.pi / 180.0
    t = (jd - _J2000) / 36525.0  # Julian centuries since J2000.0
    mean_long = ((280.46646 + t * (36000.76983 + t * 0.0003032)) % 360.0) * rad
    anomaly = (357.52911 + t * (35999.05029 - 0.0001537 * t)) * rad
    ecc = 0.016708634 - t * (0.000042037 + 0.0000001267 * t)
    centre = (xp.sin(anomaly) * (1.914602 - t * (0.004817 + 0.000014 * t))
              + xp.sin(2 * anomaly) * (0.019993 - 0.000101 * t)
              + xp.sin(3 * anomaly) * 0.000289)  # fmt: skip
    omega = (125.04 - 1934.136 * t) * rad
    apparent_long = mean_long + (centre - 0.00569 - 0.00478 * xp.sin(omega)) * rad
    mean_obliquity = 23.0 + (26.0 + (21.448 - t * (46.815 + t * (0.00059 - t * 0.001813)))
                             / 60.0) / 60.0  # fmt: skip
    obliquity = (mean_obliquity + 0.00256 * xp.cos(omega)) * rad
    declination = asin(xp.sin(obliquity) * xp.sin(apparent_long))
    y = xp.tan(obliquity / 2.0) ** 2
    eot_rad = (y * xp.sin(2 * mean_long) - 2 * ecc * xp.sin(anomaly)
               + 4 * ecc * y * xp.sin(anomaly) * xp.cos(2 * mean_long)
               - 0.5 * y * y * xp.sin(4 * mean_long) - 1.25 * ecc * ecc * xp.sin(2 * anomaly))
    return declination, 4.0 * eot_rad / rad


def solar_declination_eot(date, hour_utc=12.0) -> tuple[np.ndarray, np.ndarray]:
    """Solar declination and equation of time at an instant.

    Parameters
    ----------
    date : datetime.date
        The day (Gregorian calendar).
    hour_utc : float or array_like
        Hour of the day in UTC; may be negative or beyond 24 [h].

    Returns
    -------
    declination_rad : numpy.ndarray
        Apparent solar declination [rad].
    eot_min : numpy.ndarray
        Equation of time, apparent minus mean solar time [min].

    Notes
    -----
    Meeus (1998), Astronomical Algorithms, ch. 25 (low-accuracy solar coordinates, apparent
    longitude and corrected obliquity) and ch. 28 (equation of time), as in the NOAA GML
    solar calculator; declination good to about 0.01 deg.
    """
    return _declination_eot(julian_day(date, hour_utc))


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
    numpy.ndarray
        Zenith angle of the sun's centre [deg].

    Notes
    -----
    Declination and equation of time at each instant (Meeus 1998, see
    :func:`solar_declination_eot`); NOAA GML: true solar time
    tst = t + eqtime + 4 lon - 60 tz, hour angle ha = tst / 4 - 180,
    cos(zenith) = sin(lat) sin(decl) + cos(lat) cos(decl) cos(ha).
    """
    lat = np.radians(_check_latitude(latitude_deg))
    t = np.asarray(local_min, dtype=float)
    decl, eot = solar_declination_eot(date, t / 60.0 - utc_offset_h)
    tst = t + eot + 4.0 * float(longitude_deg) - 60.0 * utc_offset_h
    ha = np.radians(tst / 4.0 - 180.0)
    cosz = np.sin(lat) * np.sin(decl) + np.cos(lat) * np.cos(decl) * np.cos(ha)
    return np.degrees(np.arccos(np.clip(cosz, -1.0, 1.0)))


def _cos_hour_angle(lat_rad: float, decl_rad: float) -> float:
    """Cosine of the hour angle at which the sun's centre reaches :data:`SUNRISE_ZENITH_DEG`."""
    return (math.cos(math.radians(SUNRISE_ZENITH_DEG)) - math.sin(lat_rad) * math.sin(decl_rad)) \
        / (math.cos(lat_rad) * math.cos(decl_rad))


def sun_times(latitude_deg, longitude_deg, date, utc_offset_h=0.0) -> SunTimes:
    """Sunrise, solar noon, sunset and day length of one local day.

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
    NOAA GML solar calculator: solar noon = 720 - 4 lon - eqtime [min UTC]; sunrise and
    sunset hour angle ha = arccos(cos(90.833) / (cos(lat) cos(decl)) - tan(lat) tan(decl)),
    sunrise = noon - 4 ha, sunset = noon + 4 ha. Each event is iterated
    (:data:`_ITERATIONS` times) with the declination and equation of time of the
    estimated event time (Meeus 1998, see :func:`solar_declination_eot`), so the
    declination's change through the day near the equinoxes (up to 0.4 deg per day) is
    accounted for. Polar day or night is decided with the declination at solar noon.
    """
    lat = math.radians(float(_check_latitude(latitude_deg)))
    lon, offset = float(longitude_deg), float(utc_offset_h)
    day = _as_date(date)
    jd0 = float(julian_day(day, -offset))  # local midnight as a Julian day

    def state(local_min):
        return _declination_eot(jd0 + local_min / 1440.0, math)

    noon = 720.0 - 4.0 * lon + 60.0 * offset
    for _ in range(_ITERATIONS):
        decl, eot = state(noon)
        noon = 720.0 - 4.0 * lon - eot + 60.0 * offset
    cos_ha = _cos_hour_angle(lat, state(noon)[0])
    if cos_ha >= 1.0:  # polar night
        return SunTimes(day, math.nan, noon, math.nan, 0.0, offset)
    if cos_ha <= -1.0:  # polar day
        return SunTimes(day, math.nan, noon, math.nan, 24.0, offset)
    events = []
    for sign in (-1.0, 1.0):
        t = noon + sign * 4.0 * math.degrees(math.acos(cos_ha))
        for _ in range(_ITERATIONS):
            decl, eot = state(t)
            ha = math.degrees(math.acos(min(1.0, max(-1.0, _cos_hour_angle(lat, decl)))))
            t = 720.0 - 4.0 * lon - eot + 60.0 * offset + sign * 4.0 * ha
        events.append(t)
    sunrise, sunset = events
    return SunTimes(day, sunrise, noon, sunset, (sunset - sunrise) / 60.0, offset)


def day_length_h(latitude_deg, date, longitude_deg=0.0) -> float:
    """Hours from sunrise to sunset (zenith 90.833 deg) at a latitude on a day.

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    date : datetime.date
        The day, local solar day at ``longitude_deg``.
    longitude_deg : float, optional
        Longitude, east positive [deg]; the default 0 gives the day of UTC. Elsewhere the
        length differs by at most half its change from one day to the next.

    Returns
    -------
    float
        Day length [h]; 0 in polar night, 24 in polar day.

    Notes
    -----
    See :func:`sun_times` (NOAA GML solar calculator, Meeus 1998 solar coordinates).
    """
    return sun_times(latitude_deg, longitude_deg, date, longitude_deg / 15.0).day_length_h


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

    time_h, sza, uvi = _uvi_day_arrays(float(latitude_deg), float(longitude_deg), date,
                                       float(ozone_du), float(utc_offset_h), float(step_s))
    return pd.DataFrame({"time_h": time_h, "solar_zenith_deg": sza, "uvi": uvi}, copy=True)


@functools.lru_cache(maxsize=4096)
def _uvi_day_arrays(latitude_deg, longitude_deg, date, ozone_du, utc_offset_h, step_s):
    """``(time_h, solar_zenith_deg, uvi)`` of :func:`clear_sky_uvi_day`, read-only.

    Remembered per process: the sun's reference days depend only on the place and the date,
    so every enclosure of a site (and every month of its year table) asks for the same few.
    """
    t_s = (np.arange(int(round(86400 / step_s))) + 0.5) * step_s
    sza = solar_zenith_deg(latitude_deg, longitude_deg, date, t_s / 60.0, utc_offset_h)
    out = (t_s / 3600.0, sza, clear_sky_uvi(sza, ozone_du))
    for a in out:
        a.flags.writeable = False
    return out


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
    _, _, uvi = _uvi_day_arrays(float(latitude_deg), 0.0, date, float(ozone_du), 0.0, 60.0)
    return float(np.sum(erythemal_from_uv_index(uvi)) * 60.0 / SED_J_M2)


def _zone(time_zone, utc_offset_h):
    """(tzinfo, label) for a time zone name or a fixed offset from UTC."""
    if time_zone is not None:
        from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

        try:
            return ZoneInfo(time_zone), time_zone
        except (ZoneInfoNotFoundError, ValueError):
            raise InputError(
                f"unknown time zone {time_zone!r}", field="time_zone",
                hint="use an IANA name such as 'Europe/London', 'America/Denver' or 'UTC'",
            ) from None
    offset = dt.timedelta(hours=float(utc_offset_h or 0.0))
    zone = dt.timezone(offset)
    return zone, "UTC" if not offset else _offset_label(offset)


def _offset_label(offset: dt.timedelta) -> str:
    minutes = int(round(offset.total_seconds() / 60.0))
    sign = "+" if minutes >= 0 else "-"
    return f"UTC{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def sun_summary(latitude_deg, longitude_deg, date, *, utc_offset_h=None, time_zone=None,
                ozone_du=REFERENCE_OZONE_DU) -> dict:
    """Sunrise, solar noon, sunset, day length and clear-sky UV figures of one day.

    Parameters
    ----------
    latitude_deg : float
        Latitude, north positive [deg].
    longitude_deg : float
        Longitude, east positive [deg].
    date : datetime.date
        Local calendar day.
    utc_offset_h : float, optional
        Local time minus UTC [h]; default 0 (UTC). Not together with ``time_zone``.
    time_zone : str, optional
        IANA time zone name (``"Europe/London"``); each time gets the zone's offset at
        that instant (summer time included), read with :mod:`zoneinfo`.
    ozone_du : float
        Total ozone column [DU].

    Returns
    -------
    dict
        ``date``, ``latitude_deg``, ``longitude_deg``, ``time_zone`` (the IANA name, ``"UTC"``
        or ``"UTC+01:00"``), ``sunrise``, ``solar_noon``, ``sunset`` (local ``"HH:MM"``, ``""``
        in polar day or night), the same as ISO 8601 times with their UTC offset
        (``sunrise_iso`` ...), ``day_length_h`` [h], ``ozone_du`` [DU], ``peak_uvi`` [-]
        and ``daily_sed`` [SED] (Meeus/NOAA solar position; Madronich 2007 clear-sky UV
        Index).
    """
    if time_zone is not None and utc_offset_h is not None:
        raise InputError("give a time zone or a UTC offset, not both", field="time_zone",
                         hint="a time zone name already knows its offset and summer time")
    day = _as_date(date)
    zone, label = _zone(time_zone, utc_offset_h)
    offset_h = dt.datetime.combine(day, dt.time(12), tzinfo=zone).utcoffset().total_seconds() \
        / 3600.0
    times = sun_times(latitude_deg, longitude_deg, day, offset_h)
    curve = clear_sky_uvi_day(latitude_deg, longitude_deg, day, ozone_du=ozone_du,
                              utc_offset_h=offset_h)
    midnight_utc = dt.datetime.combine(day, dt.time(0), tzinfo=dt.timezone.utc)
    summary = {"date": day.isoformat(), "latitude_deg": float(latitude_deg),
               "longitude_deg": float(longitude_deg), "time_zone": label}
    for key, minutes in (("sunrise", times.sunrise_min), ("solar_noon", times.solar_noon_min),
                         ("sunset", times.sunset_min)):
        if not math.isfinite(minutes):
            summary[key], summary[f"{key}_iso"] = "", ""
            continue
        utc_min = round(minutes - 60.0 * offset_h)
        local = (midnight_utc + dt.timedelta(minutes=utc_min)).astimezone(zone)
        summary[key] = local.strftime("%H:%M")
        summary[f"{key}_iso"] = local.isoformat(timespec="minutes")
    summary.update(
        day_length_h=round(times.day_length_h, 4),
        ozone_du=float(ozone_du),
        peak_uvi=round(float(curve["uvi"].max()), 3),
        daily_sed=round(clear_sky_daily_dose_sed(latitude_deg, day, ozone_du=ozone_du), 2),
    )
    return summary
