"""Site folders: load, validate, save and start one.

A site folder holds ``site.toml`` (site, meters, lamp models, enclosures, schedules,
species), ``readings/*.csv`` or ``*.xlsx`` (long format, see :mod:`audit_lib.site.readings`) and
``spectra/*.csv``. The format is described in ``docs/site-format.md``. Validation reports
every problem at once, each with file, line or key path, and a hint; nothing is computed
from an invalid site.
"""

from __future__ import annotations

import datetime as dt
import re
import shutil
import warnings
from dataclasses import dataclass, field
from os import PathLike
from pathlib import Path

import pandas as pd

try:  # Python >= 3.11
    import tomllib
except ModuleNotFoundError:  # pragma: no cover - Python 3.10
    import tomli as tomllib

from audit_lib.errors import AuditWarning, InputError, InputErrors
from audit_lib.judge.targets import read_species_table
from audit_lib.site.checks import (
    calibration_warnings,
    cross_problems,
    partial_site,
    readings_problems,
)
from audit_lib.site.files import file_problems, named_files
from audit_lib.site.messages import locate_keys, schema_problems
from audit_lib.site.readings import (
    _as_frame,
    read_readings,
    read_readings_with_problems,
    readings_files,
)
from audit_lib.site.schema import (
    Enclosure,
    LedArrayModel,
    MeasuredLampModel,
    Meter,
    PointLampModel,
    Schedule,
    SiteFile,
    Species,
    TubeModel,
)
from audit_lib.site.template import (
    EXAMPLE_READINGS,
    STARTER_READINGS_CSV,
    STARTER_SITE_TOML,
    placeholder_problems,
)

SITE_FILE = "site.toml"


class SiteWarning(AuditWarning):
    """A valid site with something to attend to (e.g. a meter overdue for calibration)."""
LampModelRecord = LedArrayModel | TubeModel | PointLampModel | MeasuredLampModel


@dataclass
class Site:
    """A loaded, validated site folder.

    Attributes
    ----------
    root : pathlib.Path
        The site folder; file names in the records are relative to it.
    records : SiteFile
        Everything in ``site.toml`` (see :mod:`audit_lib.site.schema`), SI keys.
    readings : pandas.DataFrame
        Every reading of every file in ``readings/`` (:data:`audit_lib.site.readings.COLUMNS`).
    """

    root: Path
    records: SiteFile
    readings: pd.DataFrame = field(default_factory=lambda: read_readings_empty())
    _by_enclosure: tuple | None = field(default=None, init=False, repr=False, compare=False)

    @property
    def name(self) -> str:
        """The site's name."""
        return self.records.site.name

    def enclosure(self, enclosure_id: str) -> Enclosure:
        """Return the enclosure with this id."""
        return _by_id(self.records.enclosures, enclosure_id, "enclosure")

    def lamp_model(self, model_id: str) -> LampModelRecord:
        """Return the lamp model with this id."""
        return _by_id(self.records.lamp_models, model_id, "lamp model")

    def meter(self, meter_id: str) -> Meter:
        """Return the meter with this id."""
        return _by_id(self.records.meters, meter_id, "meter")

    def schedule(self, schedule_id: str) -> Schedule:
        """Return the schedule with this id."""
        return _by_id(self.records.schedules, schedule_id, "schedule")

    def species(self, species_id: str) -> Species:
        """Return a species assignment defined in this site's file."""
        return _by_id(self.records.species, species_id, "species")

    def path_of(self, name: str) -> Path:
        """Return the absolute path of a file named in the site file."""
        return self.root / name

    def readings_of(self, enclosure_id: str) -> pd.DataFrame:
        """Return the readings of one enclosure (a copy, in file order).

        The table is split by enclosure once per site object: an audit asks for its
        enclosure's readings several times, and a large site's table is long.
        """
        if self._by_enclosure is None or self._by_enclosure[0] is not self.readings:
            groups = dict(iter(self.readings.groupby("enclosure", sort=False)))
            self._by_enclosure = (self.readings, groups)
        found = self._by_enclosure[1].get(enclosure_id)
        return found.copy() if found is not None else self.readings.iloc[0:0].copy()


def read_readings_empty() -> pd.DataFrame:
    """Return an empty readings table with the contract's columns."""
    return _as_frame([])


def _by_id(items, item_id: str, what: str):
    for item in items:
        if item.id == item_id:
            return item
    known = ", ".join(item.id for item in items) or "none"
    raise InputError(f"no {what} with id {item_id!r}", hint=f"known: {known}")


def _library_species() -> set[str]:
    """Species ids of the library's own table (:func:`read_species_table`)."""
    return set(read_species_table()["id"].astype(str))


def _load(path: str | PathLike, today: dt.date | None) -> tuple[Site | None, list[InputError]]:
    from pydantic import ValidationError

    root = Path(path)
    if root.name == SITE_FILE and root.is_file():  # the file itself was given
        root = root.parent
    toml_path = root / SITE_FILE
    today = today or dt.datetime.now(dt.timezone.utc).date()
    if not toml_path.is_file():
        return None, [InputError(f"no {SITE_FILE} in this folder", path=root,
                                 hint="create one with 'light-audit new-site DIR'")]
    try:
        text = toml_path.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        return None, [InputError(f"not UTF-8 text ({exc.reason} at byte {exc.start})",
                                 path=toml_path, hint="save the file as UTF-8")]
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        match = re.search(r"at line (\d+)", str(exc))
        line = getattr(exc, "lineno", None) or (int(match.group(1)) if match else None)
        return None, [InputError(f"not valid TOML: {exc}", path=toml_path, line=line,
                                 hint="check quotes, brackets and '=' on that line")]
    lines = locate_keys(text)
    try:
        records = SiteFile.model_validate(data)
        checked, dropped = records, {}
        problems = []
    except ValidationError as exc:
        problems = schema_problems(exc, toml_path, lines)
        records = None
        checked, dropped = partial_site(data)
    problems += cross_problems(checked, toml_path, lines, _library_species(), today, dropped)
    problems += file_problems(checked, root, toml_path, lines)
    frames = []
    for file in readings_files(root / "readings"):
        frame, found = read_readings_with_problems(file)
        problems += found
        frames.append(frame)
    readings = pd.concat(frames, ignore_index=True) if frames else read_readings_empty()
    problems += readings_problems(readings, checked, root, today, dropped)
    if problems or records is None:
        return None, problems
    notes = calibration_warnings(readings, records)
    notes += [str(p) for p in placeholder_problems(records, root, toml_path, lines)]
    for text in notes:
        warnings.warn(text, SiteWarning, stacklevel=3)
    return Site(root=root, records=records, readings=readings), []


def load_site(path: str | PathLike, *, today: dt.date | None = None,
              reuse: bool = False) -> Site:
    """Load and validate a site folder.

    Parameters
    ----------
    path : str or PathLike
        The site folder (holding ``site.toml``).
    today : datetime.date, optional
        The date after which dates count as "in the future" (default: today, UTC).
    reuse : bool
        Return the site this process loaded last from the same folder when none of the
        files it read has changed since (:func:`site_fingerprint`), repeating the warnings
        that load gave. A batch kernel audits one enclosure after another of one site:
        loading and validating a 300-enclosure site costs most of a second, the same for
        every enclosure. The site is shared, so it must be treated as read-only (the
        library only ever derives new records from it).

    Returns
    -------
    Site

    Raises
    ------
    InputErrors
        Every problem found, each with file, line or key path, and hint.
    """
    if reuse:
        return _reused(path, today)
    site, problems = _load(path, today)
    if problems:
        raise InputErrors(problems)
    return site


def site_fingerprint(root: Path, records: SiteFile | None = None) -> tuple:
    """Name, size and modification time of every file a load of ``root`` reads [-, B, ns].

    ``site.toml``, every readings file and, given the records loaded from that
    ``site.toml``, every file it names (spectra, meter responses, screens, logo).
    """
    def stamp(path: Path):
        try:
            st = path.stat()
        except OSError:
            return (str(path), None, None)
        return (str(path), st.st_size, st.st_mtime_ns)

    paths = [root / SITE_FILE, *readings_files(root / "readings")]
    if records is not None:
        paths += [root / name for _, name, _ in named_files(records)]
    return tuple(stamp(p) for p in paths)


#: The site last loaded with ``reuse=True``: key, fingerprint, site and its warnings.
_LAST: dict = {}


def _reused(path: str | PathLike, today: dt.date | None) -> Site:
    root = Path(path).resolve()
    if root.name == SITE_FILE and root.is_file():
        root = root.parent
    key = (root, today or dt.datetime.now(dt.timezone.utc).date())
    if _LAST.get("key") == key and _LAST["fingerprint"] == site_fingerprint(
            root, _LAST["site"].records):
        for text in _LAST["warnings"]:
            warnings.warn(text, SiteWarning, stacklevel=3)
        return _LAST["site"]
    _LAST.clear()
    before = site_fingerprint(root)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", SiteWarning)
        site, problems = _load(root, today)
    texts = [str(w.message) for w in caught if issubclass(w.category, SiteWarning)]
    for w in caught:
        warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    if problems:
        raise InputErrors(problems)
    if site_fingerprint(root) == before:  # not changed while it was being read
        _LAST.update(key=key, fingerprint=site_fingerprint(root, site.records), site=site,
                     warnings=texts)
    return site


def check_site(path: str | PathLike, *, today: dt.date | None = None) -> list[InputError]:
    """Return every problem in a site folder (an empty list when it is valid)."""
    return _load(path, today)[1]


def summarise_site(site: Site) -> str:
    """One line: what a valid site holds."""
    r = site.records
    lamps = sum(len(e.lamps) for e in r.enclosures)
    return (f"{site.name}: valid; {len(r.enclosures)} enclosures, {lamps} lamps, "
            f"{len(r.lamp_models)} lamp models, {len(site.readings)} readings")


def save_site(site: Site, path: str | PathLike) -> Path:
    """Write a site to a folder: ``site.toml`` plus copies of the files it names.

    The TOML is written with SI keys and without default values; comments are not kept.
    Readings are copied file by file from ``site.root/readings``.

    Parameters
    ----------
    site : Site
        The loaded site.
    path : str or PathLike
        The destination folder (created if needed).

    Returns
    -------
    pathlib.Path
        The written ``site.toml``.
    """
    import tomli_w

    dest = Path(path)
    dest.mkdir(parents=True, exist_ok=True)
    data = site.records.model_dump(mode="python", exclude_defaults=True, exclude_none=True)
    data["format_version"] = site.records.format_version
    for model in data.get("lamp_models", []):
        model["kind"] = next(m.kind for m in site.records.lamp_models if m.id == model["id"])
    names = [site.records.site.logo]
    names += [m.spectrum for m in site.records.lamp_models]
    names += [m.spectral_response for m in site.records.meters]
    names += [s.transmission_spectrum for e in site.records.enclosures for s in e.screens]
    names += [str(p.relative_to(site.root)) for p in readings_files(site.root / "readings")]
    for name in filter(None, names):
        target = dest / name
        if (site.root / name).resolve() != target.resolve():
            target.parent.mkdir(parents=True, exist_ok=True)
            shutil.copyfile(site.root / name, target)
    out = dest / SITE_FILE
    tmp = out.with_suffix(".toml.tmp")
    tmp.write_text(tomli_w.dumps(data), encoding="utf-8")
    tmp.replace(out)
    return out


def new_site(path: str | PathLike) -> Path:
    """Write a commented starting site folder; refuse to overwrite an existing site.

    Returns
    -------
    pathlib.Path
        The new folder's ``site.toml``.
    """
    root = Path(path)
    if (root / SITE_FILE).exists():
        raise InputError(f"{SITE_FILE} already exists here", path=root,
                         hint="choose an empty or new folder")
    (root / "readings").mkdir(parents=True, exist_ok=True)
    (root / "spectra").mkdir(exist_ok=True)
    (root / "readings" / EXAMPLE_READINGS).write_text(STARTER_READINGS_CSV, encoding="utf-8")
    (root / SITE_FILE).write_text(STARTER_SITE_TOML, encoding="utf-8")
    return root / SITE_FILE


__all__ = ["Site", "load_site", "check_site", "save_site", "new_site", "summarise_site",
           "read_readings"]
