"""The commented starting folder that ``light-audit new-site DIR`` writes, and its placeholders.

A new folder is valid, so that ``check`` and ``run`` work at once, but it is an example:
:func:`placeholder_problems` names what is still the starter's (site name, auditor, the
example meter, lamp model, species and enclosure while unchanged, the example readings
file) so that ``check`` warns until each is edited.
"""

from __future__ import annotations

from functools import lru_cache
from pathlib import Path

from audit_lib.errors import InputError
from audit_lib.site.messages import line_of
from audit_lib.site.schema import SiteFile

#: ``[site]`` values of the starter that stand for "not filled in yet".
PLACEHOLDERS = {"name": "My collection", "auditor": "Your name"}
#: The starter's example readings file (in ``readings/``).
EXAMPLE_READINGS = "first-audit.csv"
#: Record lists whose items are examples as long as they equal the starter's.
EXAMPLE_LISTS = {"meters": "meter", "lamp_models": "lamp model", "species": "species",
                 "enclosures": "enclosure"}

STARTER_SITE_TOML = """\
# Site file for an enclosure lighting audit. Format described in docs/site-format.md.
# Lengths and irradiances state their unit: either in the key's name (height_m = 0.45)
# or as a quoted quantity with a unit (height = "45 cm"). Ids: lower-case letters,
# digits, '-' and '_' (they become file names). Dates: YYYY-MM-DD, unquoted.
# The values below are an example to replace with your own.
format_version = 1

[site]
name = "My collection"
auditor = "Your name"             # shown on every report
organisation = ""                 # optional
client = ""                       # optional: for a consultant's client
# logo = "logo.png"               # optional, relative to this folder
latitude_deg = 51.5
longitude_deg = -0.1
time_zone = "Europe/London"       # IANA name
audit_dates = [2026-01-15]

[[meters]]
id = "uvi-meter"
name = "Handheld UV Index meter"
# type: uv_index_meter, uvb_meter, uva_meter, lux_meter or spectroradiometer
type = "uv_index_meter"
calibration_date = 2025-06-01
# spectral_response = "spectra/uvi-meter-response.csv"   # optional, for meter correction

[[schedules]]
id = "day-12h"
kind = "fixed"                    # fixed or natural
on = "08:00"
off = "20:00"
ramp_minutes = 30                 # dawn and dusk ramps

# A lamp model describes a product once; enclosures place copies of it.
[[lamp_models]]
id = "uvb-tube-60cm"
kind = "tube"                     # led_array, tube, point or from_readings
name = "UVB fluorescent tube 60 cm"
length = "60 cm"                  # same as length_m = 0.6
reference = { distance = "30 cm", uvi = 2.0 }   # below the middle, in its fitting, when new
# general_lighting = true         # only for general lighting lamps: risk group at 500 lx
# spectrum = "spectra/uvb-tube-60cm.csv"        # a measured spectrum, if you have one

[[lamp_models.bands]]             # modelled spectrum: phosphor emission bands
peak_nm = 313
fwhm_nm = 22
asymmetry = 0.5                   # short-side / long-side half width: little below 290 nm
share = 0.3

[[lamp_models.bands]]
peak_nm = 350
fwhm_nm = 40
asymmetry = 0.6
share = 0.7

[[species]]                       # your own assignment; check with your own sources
id = "example-lizard"
scientific_name = "Example species"
common_name = "Example lizard"
zone = 3                          # Ferguson zone 1-4
uv_provision = "gradient"         # gradient or basking_patch

[[enclosures]]
id = "viv-1"
name = "Vivarium 1"
width_m = 1.2                     # x, along the front
depth_m = 0.6                     # y, front to back
height_m = 0.6                    # z, up from the floor
species = ["example-lizard"]
keeper_working_distance = "40 cm"
time_budget = { basking = 0.3, floor = 0.5, hide = 0.2 }   # shares of the day

[[enclosures.surfaces]]
id = "basking"
kind = "basking"                  # basking, platform or hide
x_m = 0.1
y_m = 0.15
width_m = 0.3
depth_m = 0.3
z_m = 0.25                        # height of the surface above the floor

[[enclosures.surfaces]]
id = "hide"
kind = "hide"
x_m = 0.9
y_m = 0.2
width_m = 0.25
depth_m = 0.25
z_m = 0.12

[[enclosures.screens]]
id = "mesh-top"
kind = "mesh"
wire_diameter = "0.8 mm"
pitch = "4 mm"

[[enclosures.lamps]]
id = "tube-1"
model = "uvb-tube-60cm"
x_m = 0.4                         # lamp centre, enclosure frame
y_m = 0.3
z_m = 0.6                         # height above the floor
tilt_deg = 0
installed = 2025-09-01
schedule = "day-12h"              # or daily_hours = 12
screens = ["mesh-top"]
"""

STARTER_READINGS_CSV = """\
# Readings, one per line. quantity: uvi, uvb_w_m2, uva_w_m2, vitamin_d_w_m2, illuminance_lux
# unit: as the meter shows it (empty or UVI for uvi; e.g. uW/cm^2, W/m^2, lx)
date,enclosure,lamp,position,x_m,y_m,z_m,distance_m,quantity,value,unit,meter,note
2026-01-15,viv-1,tube-1,basking,,,,,uvi,2.1,UVI,uvi-meter,meter on the basking slate
2026-01-15,viv-1,tube-1,hide,,,,,uvi,0.3,UVI,uvi-meter,on the hide roof
"""


@lru_cache(maxsize=1)
def _starter() -> SiteFile:
    try:  # Python >= 3.11
        import tomllib
    except ModuleNotFoundError:  # pragma: no cover - Python 3.10
        import tomli as tomllib

    return SiteFile.model_validate(tomllib.loads(STARTER_SITE_TOML))


def placeholder_problems(site: SiteFile, root: Path, path: Path, lines: dict[str, int]
                         ) -> list[InputError]:
    """What in a site is still the starter's placeholder or example (warnings for ``check``).

    Parameters
    ----------
    site : SiteFile
        The validated records.
    root : Path
        The site folder.
    path : Path
        Its ``site.toml``.
    lines : dict
        Key path -> line (:func:`audit_lib.site.messages.locate_keys`).

    Returns
    -------
    list of InputError
        One per placeholder value, unchanged example record or example readings file.
    """
    found = []
    for key, value in PLACEHOLDERS.items():
        if getattr(site.site, key) == value:
            field = f"site.{key}"
            found.append(InputError(f"still the starter's placeholder {value!r}", path=path,
                                    line=line_of(field, lines), field=field,
                                    hint="write your own; it is shown on every report"))
    starter = _starter()
    for key, what in EXAMPLE_LISTS.items():
        examples = getattr(starter, key)
        for i, item in enumerate(getattr(site, key)):
            if item in examples:
                field = f"{key}[{i}]"
                found.append(InputError(
                    f"{what} {item.id!r} is the starter's example, unchanged", path=path,
                    line=line_of(field, lines), field=field,
                    hint=f"describe your own {what} here, or remove this one"))
    readings = root / "readings" / EXAMPLE_READINGS
    if readings.is_file() and \
            readings.read_text(encoding="utf-8").splitlines() == STARTER_READINGS_CSV.splitlines():
        found.append(InputError("the starter's example readings, unchanged", path=readings,
                                hint="replace them with your own readings, or delete the file"))
    return found


def placeholder_notes(site: SiteFile, root: Path) -> list[str]:
    """The placeholder warnings of :func:`placeholder_problems` as report notes.

    One sentence each, naming the key (or the file, relative to the site folder) without
    machine paths, so that a report made from an unedited starter says so.

    Parameters
    ----------
    site : SiteFile
        The validated records.
    root : Path
        The site folder.
    """
    notes = []
    for problem in placeholder_problems(site, root, root / "site.toml", {}):
        where = problem.field or Path(problem.path).relative_to(root).as_posix()
        notes.append(f"Site not finished, {where}: {problem.message} ({problem.hint}).")
    return notes
