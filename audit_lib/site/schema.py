"""The site file schema: records that mirror ``site.toml``, with their validation.

Every record rejects unknown keys, checks types and ranges, and converts quantities given
as unit strings (``height = "45 cm"``) into the SI key (``height_m = 0.45``) with
:func:`audit_lib.light.units.to_si`. Cross-references between records (lamp model ids, schedule
ids, screen ids...) are checked in :mod:`audit_lib.site.checks`. The format is documented
in ``docs/site-format.md``.
"""

from __future__ import annotations

import datetime as dt
import re
import warnings
from typing import Annotated, Literal

from pydantic import (
    BaseModel,
    ConfigDict,
    Field,
    StringConstraints,
    field_validator,
    model_validator,
)

from audit_lib.errors import AuditWarning, InputError
from audit_lib.judge import defaults as d
from audit_lib.light.units import to_si

FORMAT_VERSION = 1
ID_PATTERN = r"^[a-z0-9][a-z0-9_-]*$"
#: Names the batch run gives its own pages and files; an enclosure id (which becomes a
#: report's file name and a key in results.json) may not take one of them.
RESERVED_IDS = ("site-overview", "index", "results", "reports", "scenario-sites")

Id = Annotated[str, StringConstraints(pattern=ID_PATTERN, max_length=64)]
Clock = Annotated[str, StringConstraints(pattern=r"^([01]\d|2[0-3]):[0-5]\d$")]
Positive = Annotated[float, Field(gt=0)]
NonNegative = Annotated[float, Field(ge=0)]
Fraction = Annotated[float, Field(ge=0, le=1)]

#: SI key suffix -> quantity kind understood by :func:`audit_lib.light.units.to_si`.
UNIT_SUFFIXES = {
    "_w_m2": "irradiance",
    "_lux": "illuminance",
    "_m": "length",
    "_s": "time",
}

class IgnoredKeyWarning(AuditWarning):
    """A site file gives a key that is accepted for older files but no longer used."""


_QUANTITY = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(.+?)\s*$")


def parse_quantity(text: str, kind: str) -> float:
    """Convert a quantity written as ``"<number> <unit>"`` to SI.

    Parameters
    ----------
    text : str
        For example ``"45 cm"`` or ``"120 uW/cm^2"``. [-]
    kind : str
        Quantity kind for :func:`audit_lib.light.units.to_si` (``"length"``, ...). [-]

    Returns
    -------
    float
        The value in SI units (m, W m-2, lx, s). [SI]
    """
    match = _QUANTITY.match(text)
    if match is None:
        raise InputError(f"cannot read {text!r} as '<number> <unit>'",
                         hint="write a number and a unit, e.g. \"45 cm\"")
    return float(to_si(float(match.group(1)), match.group(2), kind))


class Record(BaseModel):
    """Base of every site record: unknown keys are errors; unit strings become SI keys."""

    model_config = ConfigDict(extra="forbid", validate_assignment=True)

    @model_validator(mode="before")
    @classmethod
    def _convert_unit_strings(cls, data):
        if not isinstance(data, dict):
            return data
        data = dict(data)
        for name in cls.model_fields:
            for suffix, kind in UNIT_SUFFIXES.items():
                if not name.endswith(suffix):
                    continue
                stem = name[: -len(suffix)]
                if stem not in data or stem in cls.model_fields:
                    break
                value = data.pop(stem)
                if name in data:
                    raise ValueError(f"[{stem}] give either '{stem}' or '{name}', not both")
                if not isinstance(value, str):
                    raise ValueError(
                        f"[{stem}] a number without a unit || write {stem} = "
                        f"\"{value} <unit>\" or {name} = {value} in SI"
                    )
                try:
                    data[name] = parse_quantity(value, kind)
                except InputError as exc:
                    raise ValueError(f"[{stem}] {exc.message} || {exc.hint or ''}") from None
                break
        return data


# --- site, meters -------------------------------------------------------------------------


class SiteInfo(Record):
    """Who, where and when: the ``[site]`` table."""

    name: str = Field(min_length=1)
    auditor: str = ""
    organisation: str = ""
    client: str = ""
    logo: str | None = None
    latitude_deg: float = Field(ge=-90, le=90)
    longitude_deg: float = Field(ge=-180, le=180)
    time_zone: str
    audit_dates: list[dt.date] = []
    note: str = ""

    @field_validator("time_zone")
    @classmethod
    def _check_zone(cls, value: str) -> str:
        from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

        try:
            ZoneInfo(value)
        except (ZoneInfoNotFoundError, ValueError):
            raise ValueError(
                f"unknown time zone {value!r} || use an IANA name such as "
                "'Europe/London' or 'UTC'"
            ) from None
        return value


class Meter(Record):
    """A measuring instrument: ``[[meters]]``."""

    id: Id
    name: str = ""
    type: Literal["uv_index_meter", "uvb_meter", "uva_meter", "lux_meter", "spectroradiometer"]
    calibration_date: dt.date | None = None
    spectral_response: str | None = None
    #: "± %" of a reading (its calibration certificate); None: the project default of the
    #: meter type (audit_lib.judge.uncertainty.METER_UNCERTAINTY_PCT) [%].
    uncertainty_pct: float | None = Field(default=None, gt=0, le=100)
    note: str = ""


# --- lamp models --------------------------------------------------------------------------


class Band(Record):
    """One emission band of a modelled spectrum (an LED line or a phosphor band)."""

    peak_nm: float = Field(ge=200, le=1100)
    fwhm_nm: Positive
    asymmetry: Positive = 1.0
    shape: Literal["lorentzian", "gaussian"] = "gaussian"
    share: Fraction = 1.0


class Reference(Record):
    """Output at a reference distance on the lamp's axis; exactly one quantity."""

    distance_m: Positive
    uvi: NonNegative | None = None
    uvb_w_m2: NonNegative | None = None
    irradiance_w_m2: NonNegative | None = None
    illuminance_lux: NonNegative | None = None

    @model_validator(mode="after")
    def _one_quantity(self):
        given = [k for k in ("uvi", "uvb_w_m2", "irradiance_w_m2", "illuminance_lux")
                 if getattr(self, k) is not None]
        if len(given) != 1:
            raise ValueError(
                "give exactly one of uvi, uvb_w_m2, irradiance_w_m2, illuminance_lux "
                f"(got {', '.join(given) or 'none'})"
            )
        return self


class EmitterType(Record):
    """One kind of LED emitter in an array: its line, phosphor bands, beam and output.

    ``reference`` here is a reading of ONE emitter on its own axis; a reading of the whole
    fitting goes in the lamp model's ``reference`` (see :class:`LedArrayModel`).
    """

    id: Id
    name: str = ""
    peak_nm: float = Field(ge=200, le=1100)
    fwhm_nm: Positive
    asymmetry: Positive = 1.0
    shape: Literal["lorentzian", "gaussian"] = "gaussian"
    phosphors: list[Band] = []
    beam_angle_deg: float = Field(default=120.0, gt=0, le=180)
    flux_w: Positive | None = None
    reference: Reference | None = None

    @model_validator(mode="after")
    def _at_most_one_output(self):
        if self.flux_w is not None and self.reference is not None:
            raise ValueError(f"emitter {self.id!r}: give its output as flux_w or as a "
                             "reference table, not both")
        return self


class EmitterPlace(Record):
    """An emitter's place in the fitting (fitting frame: centre, x along its length)."""

    emitter: Id
    x_m: float
    y_m: float = 0.0


class EmitterGrid(Record):
    """A regular grid of one emitter type, centred on (x_m, y_m) of the fitting."""

    emitter: Id
    rows: int = Field(ge=1)
    columns: int = Field(ge=1)
    pitch_x_m: Positive
    pitch_y_m: Positive = 0.01
    x_m: float = 0.0
    y_m: float = 0.0


class LedArrayModel(Record):
    """An LED array: emitter types and their layout (explicit places or a grid).

    Output: either each emitter type gives its own (``flux_w``, or ``reference`` = one
    emitter on its own axis), or the model gives ``reference`` = the whole fitting, every
    emitter lit, on the fitting's axis. With a whole-fitting reference and several emitter
    types, the types' own outputs still set their ratio; a single type needs none.
    """

    kind: Literal["led_array"]
    id: Id
    name: str = Field(min_length=1)
    emitters: list[EmitterType] = Field(min_length=1)
    layout: list[EmitterPlace] = []
    grids: list[EmitterGrid] = []
    spectrum: str | None = None
    reference: Reference | None = None
    general_lighting: bool = False
    note: str = ""

    @model_validator(mode="after")
    def _has_layout(self):
        if not self.layout and not self.grids:
            raise ValueError("an LED array needs a layout (emitter places) or grids")
        return self

    @model_validator(mode="after")
    def _outputs(self):
        missing = [e.id for e in self.emitters if e.flux_w is None and e.reference is None]
        if self.reference is None and missing:
            raise ValueError(
                f"emitter(s) {', '.join(missing)} give no output || give each emitter type "
                "flux_w or a reference (one emitter), or give the lamp model a reference "
                "(the whole fitting)")
        if self.reference is not None and missing and len(self.emitters) > 1:
            raise ValueError(
                f"emitter(s) {', '.join(missing)} give no output || with several emitter "
                "types the whole-fitting reference needs each type's flux_w or reference "
                "for their ratio")
        return self


class TubeModel(Record):
    """A linear fluorescent tube: a finite line source known from a reading below its middle.

    ``reflector_factor`` is no longer used: the reference reading, taken under the fitting,
    already holds the reflector's gain. The key is still accepted so that older site files
    load, with a note saying it is ignored.
    """

    kind: Literal["tube"]
    id: Id
    name: str = Field(min_length=1)
    length_m: Positive
    reflector_factor: Positive | None = None
    bands: list[Band] = []
    spectrum: str | None = None
    reference: Reference
    general_lighting: bool = False
    note: str = ""

    @model_validator(mode="after")
    def _reflector_is_in_the_reading(self):
        if self.reflector_factor is not None:
            warnings.warn(
                f"lamp model {self.id!r}: reflector_factor is ignored (no longer used): the "
                "reference reading under the fitting already includes the reflector; "
                "delete the key", IgnoredKeyWarning, stacklevel=2)
        return self


class PointLampModel(Record):
    """A compact lamp (mercury vapour, metal halide, compact fluorescent...)."""

    kind: Literal["point"]
    id: Id
    name: str = Field(min_length=1)
    beam_angle_deg: float = Field(default=120.0, gt=0, le=180)
    bands: list[Band] = []
    spectrum: str | None = None
    reference: Reference
    general_lighting: bool = False
    note: str = ""


class DistanceReading(Record):
    """One on-axis reading of a lamp known only from readings at several distances."""

    distance_m: Positive
    uvi: NonNegative | None = None
    uvb_w_m2: NonNegative | None = None
    illuminance_lux: NonNegative | None = None


class MeasuredLampModel(Record):
    """A lamp known from readings at several distances on its axis."""

    kind: Literal["from_readings"]
    id: Id
    name: str = Field(min_length=1)
    distance_readings: list[DistanceReading] = Field(min_length=2)
    bands: list[Band] = []
    spectrum: str | None = None
    general_lighting: bool = False
    note: str = ""


LampModel = Annotated[
    LedArrayModel | TubeModel | PointLampModel | MeasuredLampModel,
    Field(discriminator="kind"),
]
LAMP_KINDS = ("led_array", "tube", "point", "from_readings")


# --- enclosures ---------------------------------------------------------------------------


class Surface(Record):
    """A horizontal patch above the floor: basking platform, branch, rock or hide roof."""

    id: Id
    name: str = ""
    kind: Literal["basking", "platform", "hide"] = "basking"
    x_m: NonNegative
    y_m: NonNegative
    width_m: Positive
    depth_m: Positive
    z_m: NonNegative


class Screen(Record):
    """Something between lamp and animal: mesh, glass or acrylic."""

    id: Id
    kind: Literal["mesh", "glass", "acrylic", "other"]
    wire_diameter_m: Positive | None = None
    pitch_m: Positive | None = None
    transmission: Fraction | None = None
    transmission_spectrum: str | None = None
    note: str = ""

    @model_validator(mode="after")
    def _enough(self):
        if self.kind == "mesh" and self.transmission is None:
            if self.wire_diameter_m is None or self.pitch_m is None:
                raise ValueError("a mesh needs wire_diameter_m and pitch_m, or a transmission")
            if self.wire_diameter_m >= self.pitch_m:
                raise ValueError("mesh wire diameter must be smaller than the pitch")
        if self.kind != "mesh" and self.transmission is None and not self.transmission_spectrum:
            raise ValueError(f"a {self.kind} screen needs a transmission or transmission_spectrum")
        return self


class LampPlace(Record):
    """A lamp installed in an enclosure."""

    id: Id
    model: Id
    x_m: float
    y_m: float
    z_m: float
    tilt_deg: float = Field(default=0.0, ge=-90, le=90)
    rotation_deg: float = 0.0
    installed: dt.date
    earlier_installs: list[dt.date] = []
    daily_hours: float | None = Field(default=None, gt=0, le=24)
    schedule: Id | None = None
    screens: list[Id] = []
    failed_emitters: list[int] = []
    note: str = ""

    @model_validator(mode="after")
    def _timing(self):
        if (self.daily_hours is None) == (self.schedule is None):
            raise ValueError("give the lamp's daily_hours or a schedule id (one of them)")
        if any(d >= self.installed for d in self.earlier_installs):
            raise ValueError("earlier_installs must all be before installed")
        return self


class Position(Record):
    """A named place where the keeper measures (enclosure frame, z up from the floor)."""

    id: Id
    x_m: NonNegative
    y_m: NonNegative
    z_m: NonNegative
    note: str = ""


class Enclosure(Record):
    """One enclosure: box geometry, surfaces, lamps, screens, species and time budget."""

    id: Id
    name: str = Field(min_length=1)
    width_m: Positive
    depth_m: Positive
    height_m: Positive
    species: list[Id] = []
    keeper_working_distance_m: Positive | None = None
    surfaces: list[Surface] = []
    lamps: list[LampPlace] = []
    screens: list[Screen] = []
    positions: list[Position] = []
    time_budget: dict[str, Fraction] = {}
    note: str = ""


# --- schedules, species, the whole file ---------------------------------------------------


class SchedulePeriod(Record):
    """Times that apply in some months."""

    months: list[Annotated[int, Field(ge=1, le=12)]] = Field(min_length=1)
    on: Clock
    off: Clock
    ramp_minutes: NonNegative = 0.0
    dimming: Fraction = 1.0


class Schedule(Record):
    """A lamp circuit's day: fixed times (optionally by month) or following natural day."""

    id: Id
    name: str = ""
    kind: Literal["fixed", "natural"] = "fixed"
    on: Clock | None = None
    off: Clock | None = None
    ramp_minutes: NonNegative = 0.0
    dimming: Fraction = 1.0
    periods: list[SchedulePeriod] = []
    latitude_deg: float | None = Field(default=None, ge=-90, le=90)
    note: str = ""

    @model_validator(mode="after")
    def _times(self):
        if self.kind == "fixed" and (self.on is None or self.off is None) and not self.periods:
            raise ValueError("a fixed schedule needs on and off times (or periods)")
        return self


class Species(Record):
    """A species assignment added to, or overriding, the library's species table."""

    id: Id
    scientific_name: str = Field(min_length=1)
    common_name: str = ""
    zone: int = Field(ge=1, le=4)
    uv_provision: Literal["gradient", "basking_patch"] = "gradient"
    basking_note: str = ""
    native_latitude_deg: float | None = Field(default=None, ge=-90, le=90)
    note: str = ""


class Targets(Record):
    """The site's own targets instead of the project defaults: the ``[targets]`` table.

    Each key left out keeps the project default (:mod:`audit_lib.judge.defaults`); a check on
    a value given here says so (basis "site setting"). ``keeper_time`` takes a unit
    (``"45 min"``), the others are plain numbers: UV Index, shares 0-1, hours.
    """

    refuge_uvi_max: float = Field(default=d.REFUGE_UVI_MAX, gt=0, le=3)
    refuge_min_share: Fraction = d.REFUGE_MIN_SHARE
    light_hours_min: float = Field(default=d.LIGHT_HOURS_RANGE[0], ge=0, le=24)
    light_hours_max: float = Field(default=d.LIGHT_HOURS_RANGE[1], ge=0, le=24)
    short_uvb_tolerance: Fraction = d.SHORT_UVB_TOLERANCE
    keeper_time_s: float = Field(default=d.KEEPER_TIME_S, gt=0, le=28800)  # up to 8 h

    @field_validator("refuge_min_share", "short_uvb_tolerance", mode="before")
    @classmethod
    def _share(cls, value):
        if isinstance(value, (int, float)) and not 0 <= value <= 1:
            raise ValueError(f"{value:g} is not a share from 0 to 1 || write 0.25 for 25 %")
        return value

    @model_validator(mode="after")
    def _hours_in_order(self):
        if self.light_hours_min > self.light_hours_max:
            raise ValueError(f"light_hours_min ({self.light_hours_min:g} h) is above "
                             f"light_hours_max ({self.light_hours_max:g} h) || give the "
                             "shorter day first")
        return self


class SiteFile(Record):
    """The whole ``site.toml``."""

    format_version: Literal[1]
    site: SiteInfo
    targets: Targets | None = None
    meters: list[Meter] = []
    lamp_models: list[LampModel] = []
    enclosures: list[Enclosure] = []
    schedules: list[Schedule] = []
    species: list[Species] = []
