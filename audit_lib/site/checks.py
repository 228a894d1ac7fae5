"""Checks of a site folder beyond the schema: cross-references, files, dates, readings.

Locating problems in ``site.toml`` and wording schema errors is :mod:`audit_lib.site.messages`.
"""

from __future__ import annotations

import datetime as dt
import difflib
from pathlib import Path

import pandas as pd

from audit_lib.errors import InputError
from audit_lib.site import schema as s
from audit_lib.site.messages import line_of
from audit_lib.site.readings import QUANTITIES
from audit_lib.site.schema import SiteFile

#: Above these a reading is not physically plausible for any lamp or the sun [SI].
PLAUSIBLE_MAX = {
    "uvi": 25.0,
    "uvb_w_m2": 30.0,
    "uva_w_m2": 300.0,
    "vitamin_d_w_m2": 10.0,
    "illuminance_lux": 200_000.0,
}
#: What each kind of meter measures (a spectroradiometer gives every quantity).
METER_QUANTITIES = {
    "uv_index_meter": ("uvi",),
    "uvb_meter": ("uvb_w_m2",),
    "uva_meter": ("uva_w_m2",),
    "lux_meter": ("illuminance_lux",),
}
#: How far above the enclosure's top a lamp may hang: a fitting resting on a mesh lid or
#: hung just above it [m] (project default).
LAMP_ABOVE_TOP_MAX_M = 0.3


def _duplicates(items, prefix: str, path: Path, lines: dict, what: str) -> list[InputError]:
    seen, problems = {}, []
    for i, item in enumerate(items):
        if item is None:
            continue
        if item.id in seen:
            field = f"{prefix}[{i}].id"
            problems.append(InputError(
                f"duplicate {what} id {item.id!r}", path=path, line=line_of(field, lines),
                field=field, hint=f"already used by {prefix}[{seen[item.id]}]; ids must be unique"))
        seen.setdefault(item.id, i)
    return problems


def _live(items) -> list:
    """The valid items of a list from :func:`partial_site` (without the None gaps)."""
    return [item for item in items if item is not None]


def _missing_ref(value, known, field, what, path, lines, line=None) -> InputError:
    close = difflib.get_close_matches(value, list(known), n=1)
    hint = (f"did you mean {close[0]!r}? " if close else "") + (
        "known ids: " + ", ".join(sorted(known)) if known else "none are defined")
    line = line if line is not None else line_of(field, lines)
    return InputError(f"no {what} with id {value!r}", path=path, line=line, field=field,
                      hint=hint)


def partial_site(data) -> tuple[SiteFile, dict[str, set[str]]]:
    """Validate ``site.toml`` data item by item; keep the valid items.

    Used when the whole file does not validate, so that references, dates and readings can
    still be checked (all problems at once). Returns the valid items (None in place of an
    invalid one) and, per list, the ids of the items dropped as invalid (references to those
    are not reported again).
    """
    from pydantic import TypeAdapter, ValidationError


    data = data if isinstance(data, dict) else {}
    types = {"meters": s.Meter, "lamp_models": s.LampModel, "enclosures": s.Enclosure,
             "schedules": s.Schedule, "species": s.Species}
    kept: dict[str, list] = {}
    dropped: dict[str, set[str]] = {}
    for key, item_type in types.items():
        items = data.get(key, [])
        adapter = TypeAdapter(item_type)
        kept[key], dropped[key] = [], set()
        for item in items if isinstance(items, list) else []:
            try:
                kept[key].append(adapter.validate_python(item))
            except ValidationError:
                kept[key].append(None)  # keeps the indices of the key paths
                if isinstance(item, dict) and isinstance(item.get("id"), str):
                    dropped[key].add(item["id"])
    try:
        info = s.SiteInfo.model_validate(data.get("site", {}))
    except ValidationError:
        info = None
    return SiteFile.model_construct(format_version=1, site=info, **kept), dropped


def cross_problems(site: SiteFile, path: Path, lines: dict[str, int],
                   known_species: set[str], today: dt.date,
                   dropped: dict[str, set[str]] | None = None) -> list[InputError]:
    """Check references between records, geometry and dates; return every problem.

    The files the site names are checked by :func:`audit_lib.site.files.file_problems`.

    ``dropped`` holds ids of items that failed the schema (see :func:`partial_site`):
    references to them are not reported a second time.
    """
    dropped = dropped or {}
    p: list[InputError] = []
    p += _duplicates(site.meters, "meters", path, lines, "meter")
    p += _duplicates(site.lamp_models, "lamp_models", path, lines, "lamp model")
    p += _duplicates(site.enclosures, "enclosures", path, lines, "enclosure")
    p += _duplicates(site.schedules, "schedules", path, lines, "schedule")
    p += _duplicates(site.species, "species", path, lines, "species")
    models = {m.id for m in _live(site.lamp_models)} | dropped.get("lamp_models", set())
    schedules = {s.id for s in _live(site.schedules)} | dropped.get("schedules", set())
    species = known_species | {s.id for s in _live(site.species)} | dropped.get("species", set())

    def future(value, field, what):
        if value is not None and value > today:
            p.append(InputError(f"{what} {value} is in the future", path=path,
                                line=line_of(field, lines), field=field,
                                hint=f"today is {today}; check the year"))

    for i, meter in enumerate(site.meters):
        if meter is None:
            continue
        future(meter.calibration_date, f"meters[{i}].calibration_date", "calibration date")
    for i, model in enumerate(site.lamp_models):
        if model is None:
            continue
        if model.kind == "led_array":
            p += _duplicates(model.emitters, f"lamp_models[{i}].emitters", path, lines, "emitter")
            types = {e.id for e in model.emitters}
            for key, places in (("layout", model.layout), ("grids", model.grids)):
                for j, place in enumerate(places):
                    if place.emitter not in types:
                        p.append(_missing_ref(place.emitter, types,
                                              f"lamp_models[{i}].{key}[{j}].emitter",
                                              "emitter", path, lines))
        elif not model.bands and not model.spectrum and model.kind != "from_readings":
            p.append(InputError("the lamp needs bands or a spectrum file", path=path,
                                line=line_of(f"lamp_models[{i}]", lines),
                                field=f"lamp_models[{i}]", hint="add [[lamp_models.bands]]"))
    for i, enc in enumerate(site.enclosures):
        if enc is None:
            continue
        e = f"enclosures[{i}]"
        if enc.id in s.RESERVED_IDS:
            p.append(InputError(f"enclosure id {enc.id!r} is reserved for the batch run's own "
                                "pages", path=path, line=line_of(f"{e}.id", lines),
                                field=f"{e}.id", hint="choose another id; reserved: "
                                + ", ".join(s.RESERVED_IDS)))
        for j, sp in enumerate(enc.species):
            if sp not in species:
                p.append(_missing_ref(sp, species, f"{e}.species[{j}]", "species", path, lines))
        for key in ("surfaces", "lamps", "screens", "positions"):
            p += _duplicates(getattr(enc, key), f"{e}.{key}", path, lines, key.rstrip("s"))
        screens = {s.id for s in enc.screens}
        for j, lamp in enumerate(enc.lamps):
            lf = f"{e}.lamps[{j}]"
            if lamp.model not in models:
                p.append(_missing_ref(lamp.model, models, f"{lf}.model", "lamp model", path,
                                      lines))
            model = next((m for m in _live(site.lamp_models) if m.id == lamp.model), None)
            count = 0
            if model is not None and model.kind == "led_array":
                count = len(model.layout) + sum(g.rows * g.columns for g in model.grids)
            bad = [n for n in lamp.failed_emitters if not 1 <= n <= count]
            if model is not None and bad:
                p.append(InputError(
                    f"no emitter number {bad[0]} in lamp model {model.id!r}", path=path,
                    line=line_of(f"{lf}.failed_emitters", lines), field=f"{lf}.failed_emitters",
                    hint=(f"emitters are numbered 1..{count} in layout order, then grid by grid"
                          if count else "only LED arrays have numbered emitters")))
            if lamp.schedule is not None and lamp.schedule not in schedules:
                p.append(_missing_ref(lamp.schedule, schedules, f"{lf}.schedule", "schedule",
                                      path, lines))
            for k, sid in enumerate(lamp.screens):
                if sid not in screens:
                    p.append(_missing_ref(sid, screens, f"{lf}.screens[{k}]", "screen", path,
                                          lines))
            future(lamp.installed, f"{lf}.installed", "install date")
        p += _geometry_problems(enc, e, path, lines)
        places = {"floor"} | {s.id for s in enc.surfaces} | {q.id for q in enc.positions}
        for name in enc.time_budget:
            if name not in places:
                p.append(_missing_ref(name, places, f"{e}.time_budget.{name}",
                                      "surface or position", path, lines))
        if sum(enc.time_budget.values()) > 1 + 1e-6:
            p.append(InputError("time budget shares add up to more than 1", path=path,
                                line=line_of(f"{e}.time_budget", lines),
                                field=f"{e}.time_budget",
                                hint="shares are fractions of the active day"))
    return p


def _geometry_problems(enc, e: str, path: Path, lines: dict) -> list[InputError]:
    """Lamps, surfaces and positions inside the enclosure; lamps above the basking surfaces.

    A lamp hangs inside the box or on its top (up to :data:`LAMP_ABOVE_TOP_MAX_M` above
    ``height_m``). Every lamp must hang higher than every basking surface of its enclosure:
    a source at or below a horizontal surface's plane cannot light its top (the incidence
    cosine is zero or negative), so the audit would silently report UVI 0 there.
    """
    p = []
    box = (f"box is {enc.width_m:g} x {enc.depth_m:g} x {enc.height_m:g} m "
           "(width x depth x height)")
    for j, lamp in enumerate(enc.lamps):
        lf = f"{e}.lamps[{j}]"

        def problem(message, key, hint, lf=lf):
            p.append(InputError(message, path=path, line=line_of(f"{lf}.{key}", lines),
                                field=f"{lf}.{key}", hint=hint))

        if not (0 <= lamp.x_m <= enc.width_m and 0 <= lamp.y_m <= enc.depth_m):
            problem(f"lamp {lamp.id!r} lies outside the enclosure's floor plan", "x_m",
                    f"x_m in 0..{enc.width_m:g}, y_m in 0..{enc.depth_m:g}")
        if lamp.z_m <= 0:
            problem(f"lamp {lamp.id!r} is mounted at {lamp.z_m:g} m, at or below the floor",
                    "z_m", "z_m is the lamp's height above the enclosure floor")
        elif lamp.z_m > enc.height_m + LAMP_ABOVE_TOP_MAX_M:
            problem(f"lamp {lamp.id!r} is mounted at {lamp.z_m:g} m, more than "
                    f"{LAMP_ABOVE_TOP_MAX_M:g} m above the enclosure's top",
                    "z_m", f"{box}; for an open-top enclosure give height_m up to the lamps")
        for surface in enc.surfaces:
            if surface.kind == "basking" and 0 < lamp.z_m <= surface.z_m:
                problem(f"lamp {lamp.id!r} at {lamp.z_m:g} m is not above basking surface "
                        f"{surface.id!r} at {surface.z_m:g} m: it cannot light its top", "z_m",
                        "z_m is the height above the floor, not the distance to the surface")
    for key in ("surfaces", "positions"):
        for k, item in enumerate(getattr(enc, key)):
            far_x = item.x_m + getattr(item, "width_m", 0.0)
            far_y = item.y_m + getattr(item, "depth_m", 0.0)
            if far_x > enc.width_m + 1e-9 or far_y > enc.depth_m + 1e-9 or item.z_m > enc.height_m:
                p.append(InputError(f"{key.rstrip('s')} {item.id!r} lies outside the enclosure",
                                    path=path, line=line_of(f"{e}.{key}[{k}]", lines),
                                    field=f"{e}.{key}[{k}]", hint=box))
    return p


def readings_problems(readings: pd.DataFrame, site: SiteFile, root: Path, today: dt.date,
                      dropped: dict[str, set[str]] | None = None) -> list[InputError]:
    """Check readings against the site: known ids, dates, plausible values."""
    dropped = dropped or {}
    enclosures: dict = {}
    for enc in _live(site.enclosures):
        enclosures.setdefault(enc.id, enc)  # the first of duplicates, as reported
    meters = {m.id for m in _live(site.meters)} | dropped.get("meters", set())
    meter_types = {m.id: m.type for m in _live(site.meters)}
    problems = []
    files: dict[str, Path] = {}
    for row in readings.itertuples(index=False):
        if row.source_file not in files:
            files[row.source_file] = root / "readings" / row.source_file
        where = {"path": files[row.source_file], "line": int(row.source_line)}
        enc = enclosures.get(row.enclosure)
        if row.enclosure in dropped.get("enclosures", set()):
            pass  # the enclosure itself is invalid; reported in site.toml
        elif enc is None:
            problems.append(_missing_ref(row.enclosure, enclosures, "enclosure", "enclosure",
                                         **_at(where)))
        else:
            problems += _place_problems(row, enc, where)
        if row.meter and row.meter not in meters:
            problems.append(_missing_ref(row.meter, meters, "meter", "meter", **_at(where)))
        elif row.meter in meter_types and row.quantity not in METER_QUANTITIES.get(
                meter_types[row.meter], QUANTITIES):
            problems.append(InputError(
                f"a {meter_types[row.meter]} does not measure {row.quantity}", field="meter",
                **where, hint="check the meter and quantity columns of this row"))
        if row.date.date() > today:
            problems.append(InputError(f"date {row.date.date()} is in the future", field="date",
                                       **where, hint=f"today is {today}; check the year"))
        limit = PLAUSIBLE_MAX[row.quantity]
        if row.value_si < 0:
            problems.append(InputError(f"negative reading {row.value}", field="value", **where,
                                       hint="meters read zero or more; check the sign"))
        elif row.value_si > limit:
            problems.append(InputError(
                f"{row.quantity} of {row.value_si:g} is above {limit:g}, more than any lamp "
                "or the sun gives", field="value", **where,
                hint="check the unit column (e.g. uW/cm^2 written as W/m^2 is 100x too high)"))
    return problems


def _place_problems(row, enc, where: dict) -> list[InputError]:
    """Lamp, position, coordinates and distance of one reading in its enclosure."""
    problems = []
    lamps = {lamp.id for lamp in enc.lamps}
    if row.lamp and row.lamp not in lamps:
        problems.append(_missing_ref(row.lamp, lamps, "lamp", f"lamp in enclosure {enc.id!r}",
                                     **_at(where)))
    spots = {"floor"} | {s.id for s in enc.surfaces} | {q.id for q in enc.positions}
    if row.position and row.position not in spots:
        problems.append(_missing_ref(row.position, spots, "position",
                                     f"position in enclosure {enc.id!r}", **_at(where)))
    xyz = [row.x_m, row.y_m, row.z_m]
    given = [v == v for v in xyz]  # not NaN
    if any(given) and not all(given):
        problems.append(InputError("give x_m, y_m and z_m together", field="x_m", **where,
                                   hint="or leave all three empty and name a position"))
    elif all(given):
        box = (enc.width_m, enc.depth_m, enc.height_m)
        if any(not -1e-9 <= v <= size + 1e-9 for v, size in zip(xyz, box, strict=True)):
            problems.append(InputError(
                f"point ({xyz[0]:g}, {xyz[1]:g}, {xyz[2]:g}) m lies outside the enclosure",
                field="x_m", **where, hint=f"box is {box[0]:g} x {box[1]:g} x {box[2]:g} m; "
                "origin at the front-left floor corner"))
    if row.distance_m == row.distance_m and row.distance_m <= 0:
        problems.append(InputError(f"distance {row.distance_m:g} m is not positive",
                                   field="distance_m", **where,
                                   hint="lamp-to-sensor distance in metres"))
    return problems


def _at(where: dict) -> dict:
    """Adapt a readings location to ``_missing_ref``'s (path, lines) arguments."""
    return {"path": where["path"], "lines": {}, "line": where["line"]}


#: A meter calibrated longer ago than this before a reading gets a warning [days]
#: (yearly calibration is common practice for handheld UV meters).
CALIBRATION_MAX_AGE_DAYS = 365


def calibration_warnings(readings: pd.DataFrame, site: SiteFile) -> list[str]:
    """Meters used more than a year after their calibration, or with no calibration date.

    Returns
    -------
    list of str
        One sentence per meter (the readings themselves are kept).
    """
    out = []
    for meter in _live(site.meters):
        used = readings.loc[readings["meter"] == meter.id, "date"]
        if used.empty:
            continue
        last = used.max().date()
        if meter.calibration_date is None:
            out.append(f"meter {meter.id!r} has no calibration date; readings up to {last} "
                       "rest on an unknown calibration")
        elif (last - meter.calibration_date).days > CALIBRATION_MAX_AGE_DAYS:
            out.append(f"meter {meter.id!r} was calibrated on {meter.calibration_date}, more "
                       f"than a year before its readings of {last}; have it recalibrated")
    return out
