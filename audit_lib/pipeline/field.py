"""The audit day in the field: where to measure, what the model expects there, and when to worry.

:func:`expected_readings` gives, per enclosure of a site and for one day, the positions a
keeper measures (named positions, each surface at its brightest spot, and a check straight
below each lamp) with the UV Index the model expects there and the band outside which a
reading points to a lamp problem. It adds no physics of its own:

* The model and its calibration are the last audit's:
  :func:`audit_lib.pipeline.audit.audit_enclosure` on the latest audit day on or before
  the day asked for (its ``points`` table and ``calibration`` factor); surfaces are
  measured at their brightest cell as the audit does
  (:func:`audit_lib.pipeline.steps.measuring_positions`).
* Lamp ageing since that audit is the one forecast's decay fit
  (:func:`audit_lib.pipeline.forecast.lamp_forecasts`): each lamp's share of a position's
  value (:func:`audit_lib.pipeline.steps.per_lamp_values`) is scaled by the fitted output at
  the day's lamp hours over the output at the audit day's lamp hours. A lamp without a fit
  keeps its audit-day output; a lamp installed after the audit is modelled at its rated
  output (calibration factor 1 for its share), since the audit's factor measured the old lamp.
  On the audit day itself the expected value *is* the audit's ``modelled_uvi``.
* The band is ``expected ± max(k·u·expected, one display step)`` with
  ``u = sqrt(u_meter² + u_model²)``: :data:`METER_UNCERTAINTY` (project default) and the
  model's spread at the last audit (root of the sum of ln(measured / modelled) squared over
  n − 1, the calibration having used one degree of freedom, over at least
  :data:`MIN_SPREAD_POSITIONS` positions reading at least
  :data:`audit_lib.pipeline.steps.CALIBRATION_MIN_UVI`; else :data:`DEFAULT_MODEL_SPREAD`,
  a project default). The band does not widen with the decay forecast's own uncertainty.
"""

from __future__ import annotations

import datetime as dt
import math
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from audit_lib.history.store import find_install, lamp_hours
from audit_lib.pipeline import steps
from audit_lib.pipeline.assemble import failed_labels
from audit_lib.pipeline.audit import DEFAULT_SPACING_M, audit_enclosure
from audit_lib.pipeline.findings import collect_notes
from audit_lib.pipeline.forecast import lamp_forecasts, site_lamp_installs
from audit_lib.site.dates import parse_date
from audit_lib.site.readings import COLUMNS as READINGS_COLUMNS
from audit_lib.site.template import placeholder_notes

#: Relative standard uncertainty of a handheld broadband UV Index meter reading a lamp
#: [-]. Project default (from memory: such meters are sold as about ±10 %), not a
#: published figure for any one meter; a spectral mismatch adds to it for narrow-band lamps.
METER_UNCERTAINTY = 0.10
#: Relative spread of the model at measured positions when the last audit gives too few
#: positions to measure it [-]. Project default.
DEFAULT_MODEL_SPREAD = 0.15
#: Positions needed to measure the model's spread (one is matched by the calibration) [-].
MIN_SPREAD_POSITIONS = 2
#: Coverage factor of the band: ±2 standard uncertainties, about 95 % for a normal
#: distribution (JCGM 100:2008, the GUM, 6.2) [-].
COVERAGE_FACTOR = 2.0
#: Narrowest half-width of the band: one display step of a handheld UV Index meter
#: (0.1; common practice) [-].
DISPLAY_STEP_UVI = 0.1
#: Distance straight below each lamp's centre for its lamp check, other lamps off [m].
#: Project default (the demo site's practice).
LAMP_CHECK_DISTANCE_M = 0.3

#: How a lamp's output on the day is found (``output_basis`` of the lamps table).
OUTPUT_BASES = ("decay fit", "no decay fit", "installed after the last audit")


@dataclass
class EnclosureField:
    """One enclosure's part of the field sheet (see :func:`expected_readings`).

    Attributes
    ----------
    enclosure_id, enclosure_name : str
        What is measured.
    species : list of str
        Species ids kept in the enclosure.
    audit_date : datetime.date
        The last audit on or before the day: its readings calibrate the model.
    calibration : float
        The audit's model scale factor [-] (1 when it had no readings).
    model_spread : float
        Relative spread of the model at the last audit [-].
    model_spread_basis : str
        ``"last audit"`` (measured) or ``"project default"``.
    tolerance : float
        Relative half-width of the band, ``k·sqrt(u_meter² + u_model²)`` [-].
    positions : pandas.DataFrame
        One row per position: ``position`` (empty for a lamp check), ``kind`` (``named
        position``, ``surface``, ``lamp check``), ``lamp`` (the lamp of a lamp check, or the
        one lamp of the enclosure; empty when several lamps are on), ``x_m``, ``y_m``,
        ``z_m`` [m], ``distance_m`` [m] (lamp checks), ``expected_uvi``, ``low_uvi``,
        ``high_uvi`` [-], ``last_uvi`` (the last audit's reading there, NaN if none) [-].
    lamps : pandas.DataFrame
        One row per lamp: ``lamp``, ``model``, ``installed_on``, ``age_days``,
        ``lamp_hours`` [h] on the day, ``output_ratio`` (output on the day over output on
        the audit day) [-], ``output_basis`` (one of :data:`OUTPUT_BASES`).
    notes : list of str
        Warnings raised while working out the sheet (e.g. a lamp model extrapolated).
    """

    enclosure_id: str
    enclosure_name: str
    species: list
    audit_date: dt.date
    calibration: float
    model_spread: float
    model_spread_basis: str
    tolerance: float
    positions: pd.DataFrame
    lamps: pd.DataFrame
    notes: list = field(default_factory=list)


@dataclass
class FieldSheet:
    """A site's field sheet for one day: :func:`expected_readings`.

    Attributes
    ----------
    site_name : str
        The site.
    date : datetime.date
        The day the readings will be taken.
    meter : str
        Id of the site's UV Index meter (empty if it names none).
    enclosures : list of EnclosureField
        In site order.
    notes : list of str
        What the keeper should know first (the site's unedited placeholders).
    """

    site_name: str
    date: dt.date
    meter: str
    enclosures: list = field(default_factory=list)
    notes: list = field(default_factory=list)


def last_audit_day(site, date: dt.date) -> dt.date:
    """The latest audit day on or before ``date`` (the site's audit dates and UV readings).

    ``date`` itself when there is none: the audit then finds no readings and models the
    lamps at their rated output.
    """
    days = {pd.Timestamp(d).date() for d in site.records.site.audit_dates}
    uvi = site.readings[site.readings["quantity"] == "uvi"]
    days |= {pd.Timestamp(d).date() for d in uvi["date"]}
    earlier = [d for d in days if d <= date]
    return max(earlier) if earlier else date


def _model_spread(points: pd.DataFrame) -> tuple[float, str]:
    if points is None or not len(points) or "measured_uvi" not in points:
        return DEFAULT_MODEL_SPREAD, "project default"
    ok = points.dropna(subset=["measured_uvi"])
    ok = ok[(ok["modelled_uvi"] > 0) & (ok["measured_uvi"] >= steps.CALIBRATION_MIN_UVI)]
    if len(ok) < MIN_SPREAD_POSITIONS:
        return DEFAULT_MODEL_SPREAD, "project default"
    residuals = np.log(ok["measured_uvi"].to_numpy(float) / ok["modelled_uvi"].to_numpy(float))
    return float(np.sqrt(np.sum(residuals ** 2) / (len(residuals) - 1))), "last audit"


def _lamp_outputs(site, enclosure_id: str, audit_day: dt.date, day: dt.date) -> pd.DataFrame:
    """Each lamp's output on ``day`` relative to ``audit_day``, from the one forecast."""
    installs = site_lamp_installs(site, enclosure_id)
    _, decays = lamp_forecasts(site, site.readings_of(enclosure_id), installs, today=day)
    fits = {d.lamp: d for d in decays}
    rows = []
    for lamp in site.enclosure(enclosure_id).lamps:
        install = find_install(installs, enclosure_id, lamp.id, day)
        installed_on = pd.Timestamp(install["installed_on"]) if install is not None else pd.NaT
        daily = float(install["daily_hours"]) if install is not None else math.nan
        hours = lamp_hours(installed_on, daily, day) if install is not None else math.nan
        ratio, basis = 1.0, "no decay fit"
        fit = fits[lamp.id].fit.best_fit if lamp.id in fits else None
        if install is not None and installed_on.date() > audit_day:
            ratio, basis = math.nan, "installed after the last audit"
        elif fit is not None and fits[lamp.id].fit.state == "fitted":
            then = float(fit.predict(lamp_hours(installed_on, daily, audit_day)))
            if then > 0:
                ratio = max(float(fit.predict(hours)), 0.0) / then
                basis = "decay fit"
        rows.append({"lamp": lamp.id, "model": site.lamp_model(lamp.model).name,
                     "installed_on": installed_on,
                     "age_days": (pd.Timestamp(day) - installed_on).days
                     if install is not None else math.nan,
                     "lamp_hours": hours, "output_ratio": ratio, "output_basis": basis})
    return pd.DataFrame(rows, columns=["lamp", "model", "installed_on", "age_days",
                                       "lamp_hours", "output_ratio", "output_basis"])


def _sheet_positions(record, audit, lamps_on: str) -> pd.DataFrame:
    """Surfaces (brightest cell), named positions, then one check below each lamp."""
    names = [s.id for s in record.surfaces]
    places = steps.measuring_positions(record, audit.maps, names)
    kinds = {p.id: "named position" for p in record.positions}
    places["kind"] = [kinds.get(p, "surface") for p in places["position"]]
    places = places.sort_values("kind", key=lambda k: k != "surface", kind="stable")
    places["lamp"] = lamps_on
    places["distance_m"] = math.nan
    checks = [{"position": "", "x_m": p.x_m, "y_m": p.y_m, "z_m": p.z_m - LAMP_CHECK_DISTANCE_M,
               "kind": "lamp check", "lamp": p.id, "distance_m": LAMP_CHECK_DISTANCE_M}
              for p in audit.scene.lamps if p.z_m - LAMP_CHECK_DISTANCE_M >= 0.0]
    return pd.concat([places, pd.DataFrame(checks, columns=places.columns)],
                     ignore_index=True)


def _last_readings(site, enclosure_id: str, audit, places: pd.DataFrame) -> list:
    """The last audit's UV Index at each place.

    At positions, the audit's own (mismatch-corrected) means; for a lamp check, the mean of
    that lamp's readings of the day with no position.
    """
    last = {}
    if audit.points is not None and len(audit.points) and "measured_uvi" in audit.points:
        last = dict(zip(audit.points["position"], audit.points["measured_uvi"], strict=True))
    rows = site.readings_of(enclosure_id)
    rows = rows[(pd.to_datetime(rows["date"]).dt.date == audit.audit_date)
                & (rows["quantity"] == "uvi") & (rows["position"].fillna("") == "")]
    checks = rows.groupby("lamp")["value_si"].mean().to_dict() if len(rows) else {}
    return [checks.get(p.lamp, math.nan) if p.kind == "lamp check" else
            last.get(p.position, math.nan) for p in places.itertuples(index=False)]


def _enclosure_field(site, enclosure_id: str, day: dt.date, spacing_m: float
                     ) -> EnclosureField:
    record = site.enclosure(enclosure_id)
    audit_day = last_audit_day(site, day)
    audit = audit_enclosure(site, enclosure_id, audit_date=audit_day, spacing_m=spacing_m,
                            with_failures=False)
    lamps = _lamp_outputs(site, enclosure_id, audit_day, day)
    lamps_on = record.lamps[0].id if len(record.lamps) == 1 else ""
    places = _sheet_positions(record, audit, lamps_on)
    points = places[["x_m", "y_m", "z_m"]].to_numpy(float)
    per_lamp = steps.per_lamp_values(audit.scene, points, failed_labels(site, enclosure_id),
                                     quantities=("uvi",))["uvi"]
    expected = np.zeros(len(places))
    for row in lamps.itertuples(index=False):
        share = np.asarray(per_lamp[row.lamp], float)
        if row.output_basis == "installed after the last audit":
            scaled = share  # rated output: the audit's factor measured the lamp replaced
        else:
            scaled = share * audit.calibration * row.output_ratio
        alone = (places["kind"] == "lamp check").to_numpy() & (places["lamp"] != row.lamp
                                                               ).to_numpy()
        expected += np.where(alone, 0.0, scaled)  # a lamp check has the other lamps off
    spread, basis = _model_spread(audit.points)
    tolerance = COVERAGE_FACTOR * math.hypot(METER_UNCERTAINTY, spread)
    half = np.maximum(tolerance * expected, DISPLAY_STEP_UVI)
    places["expected_uvi"] = expected
    places["low_uvi"] = np.maximum(expected - half, 0.0)
    places["high_uvi"] = expected + half
    places["last_uvi"] = _last_readings(site, enclosure_id, audit, places)
    return EnclosureField(enclosure_id=enclosure_id, enclosure_name=record.name,
                          species=list(record.species), audit_date=audit_day,
                          calibration=audit.calibration, model_spread=spread,
                          model_spread_basis=basis, tolerance=tolerance,
                          positions=places.reset_index(drop=True), lamps=lamps)


def expected_readings(site, date=None, *, spacing_m: float | None = None) -> FieldSheet:
    """The field sheet of a site for one day: positions, expected UV Index and bands.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    date : str or datetime.date, optional
        The day the readings will be taken, ``YYYY-MM-DD`` (default: today, UTC).
    spacing_m : float, optional
        Map grid spacing of the audit [m] (default the audit's own); surfaces are measured
        at their brightest cell of that grid.

    Returns
    -------
    FieldSheet
        See the module's docstring for what each figure rests on.
    """
    day = parse_date(date, field="date") if date else dt.datetime.now(dt.timezone.utc).date()
    meter = next((m.id for m in site.records.meters if m.type == "uv_index_meter"), "")
    return FieldSheet(site_name=site.name, date=day, meter=meter,
                      enclosures=[collect_notes(_enclosure_field, site, e.id, day,
                                               spacing_m or DEFAULT_SPACING_M)
                                  for e in site.records.enclosures],
                      notes=placeholder_notes(site.records, site.root))


def readings_template(sheet: FieldSheet) -> pd.DataFrame:
    """The readings file to fill in: one UV Index row per enclosure and position.

    Columns are the readings folder's long format (:mod:`audit_lib.site.readings`) with
    ``value`` empty. Named positions and surfaces leave the coordinates empty (the site file
    holds them); lamp checks give the point and ``distance_m``. Once every ``value`` is
    filled (rows not measured deleted) the file goes into ``SITE/readings/``.
    """
    columns = [c for c in READINGS_COLUMNS if c not in ("value_si", "source_file",
                                                        "source_line")]
    rows = []
    for part in sheet.enclosures:
        for p in part.positions.itertuples(index=False):
            check = p.kind == "lamp check"
            rows.append({"date": sheet.date.isoformat(), "enclosure": part.enclosure_id,
                         "lamp": p.lamp, "position": p.position,
                         "x_m": round(p.x_m, 3) if check else None,
                         "y_m": round(p.y_m, 3) if check else None,
                         "z_m": round(p.z_m, 3) if check else None,
                         "distance_m": p.distance_m if check else None,
                         "quantity": "uvi", "value": None, "unit": "UVI", "meter": sheet.meter,
                         "note": "lamp check on the axis, other lamps off" if check else ""})
    return pd.DataFrame(rows, columns=columns)
