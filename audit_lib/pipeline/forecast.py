"""A site's history and replacement forecast: the glue between site folders and the store.

:func:`import_site_readings` copies a validated site's lamp installs and readings into its
history database (``SITE/history.sqlite`` by default); :func:`site_replacement_schedule`
fits every lamp's decay from that history and forecasts when its basking-area UV Index
falls below the lower end of the enclosure's zone range. The physics lives in
:mod:`audit_lib.history.decay`, the storage in :mod:`audit_lib.history.store`.
"""

from __future__ import annotations

import datetime as dt
import math
from os import PathLike
from pathlib import Path

import pandas as pd

from audit_lib.errors import InputErrors
from audit_lib.history import decay
from audit_lib.history import store as history
from audit_lib.history.sync import site_history_path, sync_site_history
from audit_lib.judge.targets import read_zone_table, species_targets
from audit_lib.light.meters import correct_readings
from audit_lib.pipeline.meter_corrections import site_meter_corrections
from audit_lib.site.checks import readings_problems
from audit_lib.site.folder import Site, load_site
from audit_lib.site.readings import read_readings, readings_files

#: Annual mean lamp hours per day assumed for a schedule that follows natural day length [h].
#: Averaged over a year, day length is close to 12 h at any latitude (common practice).
NATURAL_DAY_HOURS = 12.0


def _clock_h(text: str) -> float:
    hours, minutes = text.split(":")
    return int(hours) + int(minutes) / 60.0


def schedule_daily_hours(schedule) -> float:
    """Mean hours per day a site schedule keeps a lamp on [h].

    Fixed on/off times: the on-off span (past midnight if off < on); monthly periods: the
    spans averaged over the months they cover (other months at the base times, if any);
    natural day length: :data:`NATURAL_DAY_HOURS`. Dimming does not count: a dimmed lamp
    still ages (common practice for lamp-hour bookkeeping).

    Parameters
    ----------
    schedule : audit_lib.site.schema.Schedule
        The schedule record from ``site.toml``.

    Returns
    -------
    float
        Hours on per day [h].
    """
    if schedule.kind == "natural":
        return NATURAL_DAY_HOURS

    def span(on: str, off: str) -> float:
        return (_clock_h(off) - _clock_h(on)) % 24.0

    by_month: dict[int, float] = {}
    for period in schedule.periods:
        for month in period.months:
            by_month[month] = span(period.on, period.off)
    if schedule.on is not None and schedule.off is not None:
        base = span(schedule.on, schedule.off)
        return sum(by_month.get(m, base) for m in range(1, 13)) / 12.0
    return sum(by_month.values()) / len(by_month)


def _install_rows(site, enclosure_id: str | None = None) -> list[dict]:
    """Every install of every lamp of a site (replacements included), in site order."""
    rows = []
    for enclosure in site.records.enclosures:
        if enclosure_id is not None and enclosure.id != enclosure_id:
            continue
        for lamp in enclosure.lamps:
            hours = lamp.daily_hours
            if hours is None:
                hours = schedule_daily_hours(site.schedule(lamp.schedule))
            for installed_on in (*lamp.earlier_installs, lamp.installed):  # replacements
                rows.append(dict(enclosure=enclosure.id, lamp=lamp.id, installed_on=installed_on,
                                 daily_hours=hours, lamp_model=lamp.model))
    return rows


def site_lamp_installs(site, enclosure_id: str | None = None) -> pd.DataFrame:
    """The lamp installs of a site's records, as the history store gives them.

    Same columns as :func:`audit_lib.history.store.read_lamp_installs` (``removed_on`` is the
    next install of the same lamp, NaT while in place), so a forecast from the site folder
    and one from the history database see the same installs.
    """
    rows = _install_rows(site, enclosure_id)
    table = pd.DataFrame(rows, columns=["enclosure", "lamp", "installed_on", "daily_hours",
                                        "lamp_model"])
    table["installed_on"] = pd.to_datetime(table["installed_on"])
    table = table.sort_values(["enclosure", "lamp", "installed_on"], kind="stable")
    table["removed_on"] = table.groupby(["enclosure", "lamp"])["installed_on"].shift(-1)
    table["note"] = ""
    return table[["enclosure", "lamp", "installed_on", "removed_on", "daily_hours",
                  "lamp_model", "note"]].reset_index(drop=True)


def sync_lamp_installs(site, db_path: str | PathLike) -> int:
    """Record every lamp of a site (install day, daily hours, model) in its history.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    db_path : str or PathLike
        The history database.

    Returns
    -------
    int
        Installs newly recorded [-].
    """
    return history.record_lamp_installs(db_path, _install_rows(site))


def import_site_readings(site_path: str | PathLike, files=(), *, db_path=None, today=None,
                         replace: bool = False):
    """Import a site's lamp installs and readings into its history database.

    Parameters
    ----------
    site_path : str or PathLike
        The site folder; it is validated first and nothing is written if it is invalid.
    files : sequence of path, optional
        Readings files to import; by default every file in ``SITE/readings``. Every file
        is read and checked against the site (known enclosures, lamps, positions, meters;
        no future dates) before anything is imported; each file is then imported in its
        own transaction.
    db_path : str or PathLike, optional
        The database; default ``SITE/history.sqlite``.
    today : datetime.date, optional
        Day used for the "date in the future" check.
    replace : bool
        Each file replaces the readings of its earlier imports (same file name), see
        :func:`audit_lib.history.store.import_readings`.

    Returns
    -------
    list of audit_lib.history.store.ImportSummary
        One per file, in order.
    """
    site = load_site(site_path, today=today)
    db_path = site_history_path(site) if db_path is None else Path(db_path)
    files = [Path(f) for f in files] or readings_files(Path(site_path) / "readings")
    tables = [read_readings(file) for file in files]  # every file parsed before any import
    if files:
        day = today or dt.datetime.now(dt.timezone.utc).date()
        problems = [p for t in tables
                    for p in readings_problems(t, site.records, Path(site_path), day)]
        if problems:
            raise InputErrors(problems)
    sync_lamp_installs(site, db_path)
    return [history.import_readings(db_path, table, source_file=file.name, replace=replace)
            for file, table in zip(files, tables, strict=True)]


def zone_of_enclosure(site, enclosure, species=None) -> int | None:
    """Highest Ferguson zone among an enclosure's species (site table over library table).

    ``species`` is :func:`species_targets` of the site when the caller has it already.
    """
    species = species_targets(site.records.species) if species is None else species
    found = [species[s].zone for s in enclosure.species if s in species]
    return max(found) if found else None


def basking_uvi_targets(site, enclosure_ids=None) -> dict[str, float]:
    """Lowest acceptable basking UV Index per enclosure.

    That is the lower end of the zone's maximum-UVI range (Ferguson et al. 2010, Zoo
    Biology 29:317; :func:`audit_lib.judge.targets.read_zone_table`, see the status of its values
    there), for the highest zone among the enclosure's species.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_ids : iterable of str, optional
        Only these enclosures (all by default).

    Returns
    -------
    dict
        Enclosure id -> UV Index [-]; enclosures with no known species zone are left out.
    """
    zones = read_zone_table()
    species = species_targets(site.records.species)
    wanted = None if enclosure_ids is None else set(enclosure_ids)
    targets = {}
    for enclosure in site.records.enclosures:
        if wanted is not None and enclosure.id not in wanted:
            continue
        zone = zone_of_enclosure(site, enclosure, species)
        if zone is not None:
            targets[enclosure.id] = zones[zone].max_uvi_low
    return targets


def meter_corrected(site, readings: pd.DataFrame) -> tuple[pd.DataFrame, set]:
    """UV Index readings with ``value_si`` corrected for meter spectral mismatch where possible.

    Where the site gives a meter's spectral response and the lamp's spectrum is known
    (:func:`audit_lib.pipeline.meter_corrections.site_meter_corrections`), ``value_si`` is
    F* x raw; other readings are kept raw. Returns the readings and the set of
    ``(enclosure, lamp)`` whose readings were corrected.
    """
    if readings.empty:
        return readings, set()
    factors = {(r.meter, r.enclosure, r.lamp): r.correction_factor
               for r in site_meter_corrections(site, set(readings["enclosure"]))
               .itertuples(index=False)}
    if not factors:
        return readings, set()
    fixed = correct_readings(readings, factors)
    use = fixed["value_si_corrected"].notna()
    readings = readings.copy()
    readings.loc[use, "value_si"] = fixed.loc[use, "value_si_corrected"]
    return readings, set(zip(readings.loc[use, "enclosure"], readings.loc[use, "lamp"],
                             strict=True))


def lamp_forecasts(site, readings: pd.DataFrame, installs: pd.DataFrame, *, today,
                   target_uvi: float | None = None, correct_meters: bool = True):
    """The one lamp forecast: decay fits and replacement dates of a site's lamps.

    Used by the enclosure report (readings from the site folder), the site overview (the
    reports' results) and ``light-audit forecast`` (readings from the history database):
    the same readings and installs give the same dates everywhere.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site (zones, meters and lamp spectra).
    readings : pandas.DataFrame
        Readings (contract columns), raw as taken.
    installs : pandas.DataFrame
        Lamp installs (:func:`site_lamp_installs` or the history store's).
    today : date-like
        Day of the forecast (the audit day in a report).
    target_uvi : float, optional
        One basking UV Index threshold for every lamp, instead of the zone ranges [-].
    correct_meters : bool
        Fit UV Index readings corrected for meter spectral mismatch (:func:`meter_corrected`).

    Returns
    -------
    (pandas.DataFrame, list of LampDecay)
        :func:`audit_lib.history.decay.schedule_table` columns plus ``age_days`` and
        ``meter_corrected``; the analyses of the lamps with readings.
    """
    enclosures = set(installs["enclosure"]) | set(readings["enclosure"])
    thresholds = basking_uvi_targets(site, enclosures) if target_uvi is None \
        else float(target_uvi)
    corrected_lamps: set = set()
    if correct_meters:
        readings, corrected_lamps = meter_corrected(site, readings)
    pairs = decay.lamp_decays(readings, installs, thresholds, today=today)
    table = decay.schedule_table(pairs)
    table.insert(4, "age_days", [(pd.Timestamp(today) - pd.Timestamp(t)).days
                                 for t in table["installed_on"]])
    table["meter_corrected"] = [(e, lp) in corrected_lamps
                                for e, lp in zip(table["enclosure"], table["lamp"], strict=True)]
    return table, [d for _, d in pairs if len(d.points)]


def site_replacement_schedule(site, *, db_path=None, today=None,
                              target_uvi: float | None = None,
                              correct_meters: bool = True) -> pd.DataFrame:
    """Replacement schedule of every lamp of a site, from its history database.

    The database is first brought up to date from the site's readings folder
    (:func:`audit_lib.history.sync.sync_site_history`, idempotent) and its lamp installs;
    its readings and installs then go through :func:`lamp_forecasts`, the forecast the
    enclosure reports use.

    Parameters
    ----------
    site : audit_lib.site.folder.Site or str or PathLike
        A loaded site (loaded once by the caller), or its folder (then loaded here).
    db_path : str or PathLike, optional
        The history database; default :func:`audit_lib.history.sync.site_history_path`.
    today : datetime.date, optional
        Day of the schedule (default: today).
    target_uvi : float, optional
        One basking UV Index threshold for every lamp, instead of the zone ranges [-].
    correct_meters : bool
        Fit UV Index readings corrected for meter spectral mismatch where the site gives
        the meter's response (:mod:`audit_lib.pipeline.meter_corrections`); raw readings otherwise.

    Returns
    -------
    pandas.DataFrame
        See :func:`lamp_forecasts`.
    """
    if not isinstance(site, Site):
        site = load_site(site, today=today)
    db_path = site_history_path(site) if db_path is None else Path(db_path)
    sync_site_history(site, db_path)  # readings folder -> database
    sync_lamp_installs(site, db_path)
    today = pd.Timestamp.today().normalize() if today is None else today
    table, _ = lamp_forecasts(site, history.read_all_readings(db_path),
                              history.read_lamp_installs(db_path), today=today,
                              target_uvi=target_uvi, correct_meters=correct_meters)
    return table


def format_schedule(table: pd.DataFrame) -> str:
    """Plain-text schedule for the terminal: one row per lamp."""
    if table.empty:
        return "no lamps in place"

    def date(value) -> str:
        return "-" if pd.isna(value) else pd.Timestamp(value).date().isoformat()

    def number(value, fmt) -> str:
        return "-" if value is None or (isinstance(value, float) and math.isnan(value)) \
            else format(value, fmt)

    rows = [("enclosure", "lamp", "model", "loss/1000 h", "last UVI", "target",
             "below target on", "68% band", "state")]
    for r in table.itertuples(index=False):
        band = "-" if pd.isna(r.replace_by_early) else \
            f"{date(r.replace_by_early)} .. {date(r.replace_by_late)}"
        rows.append((r.enclosure, r.lamp, r.model or "-", number(r.loss_per_1000h_pct, ".1f")
                     + ("%" if not pd.isna(r.loss_per_1000h_pct) else ""),
                     number(r.last_value, ".2f")
                     + ("*" if getattr(r, "meter_corrected", False) else ""),
                     number(r.target_min, ".1f"),
                     date(r.replace_by), band, r.state))
    widths = [max(len(str(row[i])) for row in rows) for i in range(len(rows[0]))]
    text = "\n".join("  ".join(str(c).ljust(w) for c, w in zip(row, widths, strict=True)).rstrip()
                     for row in rows)
    if "meter_corrected" in table.columns and table["meter_corrected"].any():
        text += "\n* corrected for the meter's spectral mismatch (see docs/history.md)"
    return text
