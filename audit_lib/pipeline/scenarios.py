"""What-if plans and saved scenarios: one enclosure's lamp, screen, schedule and species changed.

A :class:`PlanConfig` records what a keeper tries in the what-if panel. :func:`apply_plan`
writes it onto a copy of a loaded site's records, so the planned enclosure is built by the
same code as an audited one (:mod:`audit_lib.pipeline.assemble`); the site on disk is never changed.

A plan saved as a scenario is one TOML file, ``SITE/scenarios/<name>.toml`` (a separate file:
``site.toml`` and the readings are not touched)::

    format_version = 1
    enclosure = "rh-01"          # or a [blank] table for a planned, empty enclosure
    note = "lamp 10 cm lower"
    [plan]
    lamp = "uvb-bar"
    lamp_model = "led-bar-12x305"
    x_m = 0.6
    y_m = 0.3
    z_m = 0.78
    ...

:func:`write_scenario_site` turns a scenario into a site folder of its own (that enclosure
only, no readings: the plan is modelled at the lamp output share it states, not calibrated to
readings of the lamp it replaces), which the batch command renders as a report.
"""

from __future__ import annotations

import datetime as dt
import re
from dataclasses import asdict, dataclass, fields, replace
from pathlib import Path

try:  # Python >= 3.11
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

from audit_lib.day.photoperiod import parse_clock
from audit_lib.errors import InputError
from audit_lib.judge.targets import species_targets
from audit_lib.site.folder import Site, load_site, save_site
from audit_lib.site.schema import Enclosure, LampPlace, Schedule, Screen, Surface

SCENARIO_DIR = "scenarios"
SCENARIO_FORMAT_VERSION = 1
BLANK_ENCLOSURE_ID = "planned-enclosure"
NO_SCREEN = "none"
#: Emitter types with a peak below this count as UV emitters [nm].
UV_PEAK_LIMIT_NM = 400.0
_NAME = re.compile(r"^[a-z0-9][a-z0-9_-]{0,63}$")


def builtin_screens():
    """Example meshes offered besides the site's own screens (open-area transmission).

    Returns
    -------
    dict of str to audit_lib.site.schema.Screen
        ``"mesh-fine"`` (0.4 mm wire, 1.6 mm pitch) and ``"mesh-coarse"`` (1 mm wire,
        6 mm pitch): invented examples, not measured products.
    """
    return {
        "mesh-fine": Screen(id="mesh-fine", kind="mesh", wire_diameter_m=0.0004, pitch_m=0.0016,
                            note="example mesh, 0.4 mm wire on a 1.6 mm pitch"),
        "mesh-coarse": Screen(id="mesh-coarse", kind="mesh", wire_diameter_m=0.001,
                              pitch_m=0.006, note="example mesh, 1 mm wire on a 6 mm pitch"),
    }


@dataclass(frozen=True)
class BlankEnclosure:
    """An empty enclosure to plan from scratch: a box, one basking platform, one lamp.

    Parameters
    ----------
    width_m, depth_m, height_m : float
        Inside dimensions [m].
    basking_width_m, basking_depth_m, basking_z_m : float
        Basking platform in the middle of the left half, its top at ``basking_z_m`` [m].
    """

    width_m: float = 1.2
    depth_m: float = 0.6
    height_m: float = 0.6
    basking_width_m: float = 0.3
    basking_depth_m: float = 0.3
    basking_z_m: float = 0.15


@dataclass(frozen=True)
class PlanConfig:
    """Everything the what-if panel changes in one enclosure.

    Parameters
    ----------
    lamp : str
        Id of the placed lamp being planned (the other lamps stay as they are).
    lamp_model : str
        Lamp model id from the site's lamp models.
    x_m, y_m, z_m : float
        Lamp centre in the enclosure frame; ``z_m`` is the mount height above the floor [m].
    tilt_deg, rotation_deg : float
        Tilt about the lamp's long axis and rotation about the vertical [deg].
    uv_per_row : int or None
        UV emitters in each row of the model's UV emitter grids (LED arrays); None keeps
        the model's own [-].
    uv_beam_angle_deg : float or None
        Full angle at half intensity of the UV emitters (LED arrays); None keeps it [deg].
    failed_emitters : tuple of int
        Emitter numbers that are out (1, 2, ... in the model's layout order) [-].
    screen : str
        ``"none"``, a screen id of the site, or a key of :func:`builtin_screens`.
    species : str
        Species id (site or library table).
    on, off : str or None
        Own light times ``"HH:MM"``; None keeps the lamp's schedule from the site.
    ramp_minutes : float
        Dawn and dusk ramp with own light times [min].
    output_share : float
        Lamp output as a share of new (e.g. 0.7 for an aged lamp) [-].
    """

    lamp: str
    lamp_model: str
    x_m: float
    y_m: float
    z_m: float
    tilt_deg: float = 0.0
    rotation_deg: float = 0.0
    uv_per_row: int | None = None
    uv_beam_angle_deg: float | None = None
    failed_emitters: tuple = ()
    screen: str = NO_SCREEN
    species: str = ""
    on: str | None = None
    off: str | None = None
    ramp_minutes: float = 0.0
    output_share: float = 1.0

    def __post_init__(self) -> None:
        object.__setattr__(self, "failed_emitters",
                           tuple(sorted({int(n) for n in self.failed_emitters})))
        if (self.on is None) != (self.off is None):
            raise InputError("give both own light times (on and off) or neither", field="on")
        if self.on is not None:

            for key in ("on", "off"):
                value = getattr(self, key)
                if not re.match(r"^([01]\d|2[0-3]):[0-5]\d$", str(value)):
                    raise InputError(f"light time {value!r} is not a clock time", field=key,
                                     hint="write it as HH:MM, e.g. 07:30")
                parse_clock(value, field_name=key)
        if not 0.0 <= float(self.output_share) <= 2.0:
            raise InputError(f"output share {self.output_share!r} is outside 0-2",
                             field="output_share", hint="1 is a new lamp at rated output")
        if self.uv_per_row is not None and int(self.uv_per_row) < 1:
            raise InputError("UV emitters per row must be at least 1", field="uv_per_row")
        if self.uv_beam_angle_deg is not None and not 0 < self.uv_beam_angle_deg <= 180:
            raise InputError("UV beam angle must lie in (0, 180] degrees",
                             field="uv_beam_angle_deg")
        if self.ramp_minutes < 0:
            raise InputError("ramp minutes must not be negative", field="ramp_minutes")


def change_plan(config: PlanConfig, **changes) -> PlanConfig:
    """Return ``config`` with some fields changed; an unknown field is an error."""
    known = {f.name for f in fields(PlanConfig)}
    unknown = sorted(set(changes) - known)
    if unknown:
        raise InputError("unknown plan setting(s): " + ", ".join(unknown), field="changes",
                         hint="settings: " + ", ".join(sorted(known)))
    return replace(config, **changes)


# --- site records with a plan applied -----------------------------------------------------


def blank_enclosure_record(site, blank: BlankEnclosure, lamp_model: str = "",
                           species: str = "", installed: dt.date | None = None):
    """Site record of a blank enclosure: one basking platform, one lamp above it.

    The lamp hangs 5 cm below the top, over the platform, on for 12 h around noon. The
    time budget (0.3 basking, 0.7 floor) is this planner's assumption; set your own in the
    site file for a real enclosure.
    """
    models = [m.id for m in site.records.lamp_models]
    if not models:
        raise InputError("the site has no lamp models to plan with", field="lamp_models")
    b = blank
    x0 = max(0.0, b.width_m / 4 - b.basking_width_m / 2)
    y0 = max(0.0, b.depth_m / 2 - b.basking_depth_m / 2)
    bask = Surface(id="basking", kind="basking", x_m=x0, y_m=y0, width_m=b.basking_width_m,
                   depth_m=b.basking_depth_m, z_m=b.basking_z_m)
    lamp = LampPlace(id="planned-lamp", model=lamp_model or models[0],
                     x_m=x0 + b.basking_width_m / 2, y_m=b.depth_m / 2,
                     z_m=b.height_m - 0.05, installed=installed or dt.date.today(),
                     daily_hours=12.0)
    return Enclosure(id=BLANK_ENCLOSURE_ID, name="Planned enclosure", width_m=b.width_m,
                     depth_m=b.depth_m, height_m=b.height_m,
                     species=[species] if species else [], surfaces=[bask], lamps=[lamp],
                     time_budget={"basking": 0.3, "floor": 0.7})


def with_blank(site, blank: BlankEnclosure, **kwargs):
    """A copy of ``site`` with a blank enclosure added (see :func:`blank_enclosure_record`)."""
    record = blank_enclosure_record(site, blank, **kwargs)
    others = [e for e in site.records.enclosures if e.id != BLANK_ENCLOSURE_ID]
    records = site.records.model_copy(update={"enclosures": [*others, record]})
    return Site(root=site.root, records=records, readings=site.readings)


def plan_from_site(site, enclosure_id: str, lamp: str = "", day: dt.date | None = None):
    """The plan that reproduces an enclosure as the site file describes it.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_id : str
        Enclosure id.
    lamp : str
        Placed lamp to plan; default the enclosure's first lamp.
    day : datetime.date, optional
        Day whose light times are shown for a seasonal schedule.

    Returns
    -------
    PlanConfig
    """
    record = site.enclosure(enclosure_id)
    if not record.lamps:
        raise InputError(f"enclosure {enclosure_id!r} has no lamp to plan with",
                         field=f"enclosures.{enclosure_id}.lamps",
                         hint="add a lamp to the site file, or plan a blank enclosure")
    place = _place(record, lamp or record.lamps[0].id)
    screens = [s for s in record.screens if s.id in place.screens]
    return PlanConfig(
        lamp=place.id, lamp_model=place.model, x_m=place.x_m, y_m=place.y_m, z_m=place.z_m,
        tilt_deg=place.tilt_deg, rotation_deg=place.rotation_deg,
        failed_emitters=tuple(place.failed_emitters),
        screen=screens[0].id if screens else NO_SCREEN,
        species=record.species[0] if record.species else "")


def _place(record, lamp_id: str):
    for p in record.lamps:
        if p.id == lamp_id:
            return p
    raise InputError(f"no lamp {lamp_id!r} in enclosure {record.id!r}", field="lamp",
                     hint="lamps: " + ", ".join(p.id for p in record.lamps))


def screen_records(site) -> dict:
    """Every screen the planner offers: the site's own (by id) and the built-in examples."""
    out = {}
    for e in site.records.enclosures:
        for s in e.screens:
            out.setdefault(s.id, s)
    for key, s in builtin_screens().items():
        out.setdefault(key, s)
    return out


def _scaled_reference(ref, share):
    if ref is None:
        return None
    update = {k: getattr(ref, k) * share for k in ("uvi", "uvb_w_m2", "irradiance_w_m2",
                                                   "illuminance_lux")
              if getattr(ref, k) is not None}
    return ref.model_copy(update=update)


def planned_model(site, config: PlanConfig, *, scale_output: bool = False):
    """The lamp model record with the plan's emitter count, beam angle and output share.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    config : PlanConfig
        The plan.
    scale_output : bool
        Scale the model's rated output by ``config.output_share`` (for a saved scenario;
        the planner scales its maps instead, which is the same for linear quantities).
    """
    model = site.lamp_model(config.lamp_model)
    share = float(config.output_share)
    if model.kind != "led_array":
        if config.uv_per_row is not None or config.uv_beam_angle_deg is not None:
            raise InputError(f"lamp model {model.id!r} is not an LED array: its emitter count "
                             "and beam angle cannot be changed", field="uv_per_row")
        if not scale_output or share == 1.0:
            return model
        if model.kind == "from_readings":
            rows = [r.model_copy(update={k: getattr(r, k) * share for k in
                                         ("uvi", "uvb_w_m2", "illuminance_lux")
                                         if getattr(r, k) is not None})
                    for r in model.distance_readings]
            return model.model_copy(update={"distance_readings": rows})
        return model.model_copy(update={"reference": _scaled_reference(model.reference, share)})
    uv = {e.id for e in model.emitters if e.peak_nm < UV_PEAK_LIMIT_NM}
    emitters = []
    for e in model.emitters:
        update = {}
        if e.id in uv and config.uv_beam_angle_deg is not None:
            update["beam_angle_deg"] = float(config.uv_beam_angle_deg)
        if scale_output and share != 1.0:
            if e.flux_w is not None:
                update["flux_w"] = e.flux_w * share
            else:
                update["reference"] = _scaled_reference(e.reference, share)
        emitters.append(e.model_copy(update=update) if update else e)
    grids = list(model.grids)
    if config.uv_per_row is not None:
        if any(p.emitter in uv for p in model.layout) or not any(g.emitter in uv for g in grids):
            raise InputError(f"the UV emitters of {model.id!r} are placed one by one, not in "
                             "grids: change their number in the site file",
                             field="uv_per_row")
        grids = [g.model_copy(update={"columns": int(config.uv_per_row)})
                 if g.emitter in uv else g for g in grids]
    return model.model_copy(update={"emitters": emitters, "grids": grids})


def apply_plan(site, enclosure_id: str, config: PlanConfig, *, scale_output: bool = False,
               known_species=None):
    """A copy of ``site`` whose enclosure carries the plan (the site itself is unchanged).

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_id : str
        Enclosure id.
    config : PlanConfig
        The plan.
    scale_output : bool
        See :func:`planned_model`.
    known_species : collection of str, optional
        Species ids to accept (default: the site's and the library's tables, read now).

    Returns
    -------
    audit_lib.site.folder.Site
        Same root and readings; records with the changed enclosure, lamp model and (with own
        light times) a schedule ``"<lamp>-planned"``.
    """
    records = site.records
    record = site.enclosure(enclosure_id)
    place = _place(record, config.lamp)
    model = planned_model(site, config, scale_output=scale_output)
    known_species = _species_ids(site) if known_species is None else known_species
    if config.species and config.species not in known_species:
        raise InputError(f"unknown species {config.species!r}", field="species",
                         hint="species: " + ", ".join(sorted(known_species)))
    screens = [s for s in record.screens if s.id not in place.screens]
    lamp_screens = []
    if config.screen != NO_SCREEN:
        offered = screen_records(site)
        if config.screen not in offered:
            raise InputError(f"unknown screen {config.screen!r}", field="screen",
                             hint="screens: " + ", ".join([NO_SCREEN, *offered]))
        screens = [s for s in screens if s.id != config.screen] + [offered[config.screen]]
        lamp_screens = [config.screen]
    schedules = list(records.schedules)
    timing = {}
    if config.on is not None:
        sid = f"{place.id}-planned"
        schedules = [s for s in schedules if s.id != sid]
        schedules.append(Schedule(id=sid, name="What-if light times", on=config.on,
                                  off=config.off, ramp_minutes=config.ramp_minutes))
        timing = {"schedule": sid, "daily_hours": None}
    new_place = place.model_copy(update={
        "model": model.id, "x_m": float(config.x_m), "y_m": float(config.y_m),
        "z_m": float(config.z_m), "tilt_deg": float(config.tilt_deg),
        "rotation_deg": float(config.rotation_deg),
        "failed_emitters": list(config.failed_emitters), "screens": lamp_screens, **timing})
    lamps = [new_place if p.id == place.id else p for p in record.lamps]
    new_record = record.model_copy(update={
        "lamps": lamps, "screens": screens,
        "species": [config.species] if config.species else list(record.species)})
    enclosures = [new_record if e.id == enclosure_id else e for e in records.enclosures]
    models = [model if m.id == model.id else m for m in records.lamp_models]
    new = records.model_copy(update={"enclosures": enclosures, "lamp_models": models,
                                     "schedules": schedules})
    return Site(root=site.root, records=new, readings=site.readings)


def _species_ids(site) -> set[str]:

    return set(species_targets(site.records.species))


# --- scenario files -----------------------------------------------------------------------


@dataclass(frozen=True)
class Scenario:
    """A saved plan (see the module docstring for the file).

    Parameters
    ----------
    name : str
        Scenario name (the file stem).
    enclosure : str
        Enclosure id, or :data:`BLANK_ENCLOSURE_ID` with ``blank`` set.
    plan : PlanConfig
        The plan.
    blank : BlankEnclosure or None
        The planned enclosure's box when it is not one of the site's.
    note : str
        Free text.
    saved_on : datetime.date or None
        Day it was saved.
    """

    name: str
    enclosure: str
    plan: PlanConfig
    blank: BlankEnclosure | None = None
    note: str = ""
    saved_on: dt.date | None = None


def scenario_path(site_root, name: str) -> Path:
    """``SITE/scenarios/<name>.toml``; the name must be a plain id."""
    if not _NAME.match(str(name)):
        raise InputError(f"scenario name {name!r} is not a plain id", field="scenario",
                         hint="lower-case letters, digits, '-' and '_', e.g. 'lamp-lower-10cm'")
    return Path(site_root) / SCENARIO_DIR / f"{name}.toml"


def save_scenario(site, scenario: Scenario, *, overwrite: bool = True) -> Path:
    """Write a scenario file into the site folder (``site.toml`` and readings untouched).

    Returns
    -------
    pathlib.Path
        The written file.
    """
    import tomli_w

    path = scenario_path(site.root, scenario.name)
    if path.exists() and not overwrite:
        raise InputError(f"scenario {scenario.name!r} exists", path=path,
                         hint="choose another name")
    plan = {k: (list(v) if isinstance(v, tuple) else v)
            for k, v in asdict(scenario.plan).items() if v is not None}
    data = {"format_version": SCENARIO_FORMAT_VERSION, "enclosure": scenario.enclosure,
            "note": scenario.note,
            "saved_on": scenario.saved_on or dt.date.today(), "plan": plan}
    if scenario.blank is not None:
        data["blank"] = asdict(scenario.blank)
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_suffix(".toml.tmp")
    tmp.write_text("# What-if scenario written by the what-if panel "
                   "(audit_lib.pipeline.scenarios).\n"
                   + tomli_w.dumps(data), encoding="utf-8")
    tmp.replace(path)
    return path


def list_scenarios(site_root) -> list[str]:
    """Names of the scenarios saved in a site folder."""
    folder = Path(site_root) / SCENARIO_DIR
    return sorted(p.stem for p in folder.glob("*.toml")) if folder.is_dir() else []


def read_scenario(site_root, name: str) -> Scenario:
    """Read ``SITE/scenarios/<name>.toml``; unknown or missing keys are errors."""
    path = scenario_path(site_root, name)
    if not path.is_file():
        raise InputError(f"no scenario {name!r}", path=path,
                         hint="saved: " + (", ".join(list_scenarios(site_root)) or "none"))
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"not valid TOML: {exc}", path=path) from None
    allowed = {"format_version", "enclosure", "note", "saved_on", "plan", "blank"}
    extra = sorted(set(data) - allowed)
    if extra:
        raise InputError("unknown key(s): " + ", ".join(extra), path=path, field=extra[0])
    if data.get("format_version") != SCENARIO_FORMAT_VERSION:
        raise InputError(f"format_version must be {SCENARIO_FORMAT_VERSION}", path=path,
                         field="format_version")
    for key in ("enclosure", "plan"):
        if key not in data:
            raise InputError(f"missing key {key!r}", path=path, field=key)
    plan = dict(data["plan"])
    unknown = sorted(set(plan) - {f.name for f in fields(PlanConfig)})
    if unknown:
        raise InputError("unknown plan setting(s): " + ", ".join(unknown), path=path,
                         field=f"plan.{unknown[0]}",
                         hint="settings: " + ", ".join(f.name for f in fields(PlanConfig)))
    try:
        config = change_plan(PlanConfig(lamp="", lamp_model="", x_m=0.0, y_m=0.0, z_m=0.0),
                             **plan)
        blank = BlankEnclosure(**data["blank"]) if "blank" in data else None
    except InputError as exc:
        raise InputError(exc.message, path=path, field=f"plan.{exc.field or ''}",
                         hint=exc.hint) from None
    except TypeError as exc:
        raise InputError(f"bad blank enclosure: {exc}", path=path, field="blank") from None
    for key in ("lamp", "lamp_model"):
        if not getattr(config, key):
            raise InputError(f"missing key {key!r}", path=path, field=f"plan.{key}")
    saved = data.get("saved_on")
    return Scenario(name=name, enclosure=str(data["enclosure"]), plan=config, blank=blank,
                    note=str(data.get("note", "")),
                    saved_on=saved if isinstance(saved, dt.date) else None)


def scenario_site(site, scenario: Scenario, *, scale_output: bool = True):
    """The site with the scenario applied (blank enclosure added first when it has one)."""
    if scenario.blank is not None:
        site = with_blank(site, scenario.blank, lamp_model=scenario.plan.lamp_model,
                          species=scenario.plan.species)
    return apply_plan(site, scenario.enclosure, scenario.plan, scale_output=scale_output)


def write_scenario_site(site_dir, name: str, dest) -> tuple[Path, str]:
    """Write a scenario as a site folder of its own, ready for the batch run.

    The copy holds only the scenario's enclosure and no readings (the plan is modelled at
    its stated output share, not calibrated to readings of the present lamps). The site's
    name gets ``" — scenario <name>"``.

    Parameters
    ----------
    site_dir : str or PathLike
        The site folder.
    name : str
        Scenario name.
    dest : str or PathLike
        New folder for the copy (created; an existing ``site.toml`` there is replaced).

    Returns
    -------
    (pathlib.Path, str)
        The copy's folder and the enclosure id to report.
    """
    import shutil


    site = load_site(site_dir)
    scenario = read_scenario(site.root, name)
    planned = scenario_site(site, scenario)
    record = planned.enclosure(scenario.enclosure)
    used_models = {p.model for p in record.lamps}
    used_schedules = {p.schedule for p in record.lamps if p.schedule}
    info = planned.records.site.model_copy(
        update={"name": f"{planned.records.site.name} — scenario {name}"})
    records = planned.records.model_copy(update={
        "site": info, "enclosures": [record],
        "lamp_models": [m for m in planned.records.lamp_models if m.id in used_models],
        "schedules": [s for s in planned.records.schedules if s.id in used_schedules]})
    dest = Path(dest)
    if (dest / "readings").is_dir():
        shutil.rmtree(dest / "readings")
    save_site(Site(root=site.root, records=records, readings=planned.readings.iloc[0:0]), dest)
    if (dest / "readings").is_dir():  # save_site copies every readings file; a plan has none
        shutil.rmtree(dest / "readings")
    load_site(dest)  # the copy must load like any site
    return dest, scenario.enclosure
