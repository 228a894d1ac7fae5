"""Target tables: the Ferguson zones by species group and the species assigned to them.

Target UV Index ranges come from the Ferguson zones (Ferguson et al. 2010, Zoo Biology
29:317-334), shipped in ``data/ferguson_zones.csv`` with a ``status`` column: the values there
are FROM MEMORY until checked against the paper, and every check built on them says so. A
species table (``data/species_demo.csv``, demo data to be checked) maps species to a zone and a
way of providing UV; sites add or override species. The checks against these targets are in
:mod:`audit_lib.judge.targets`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import dataclass
from pathlib import Path

from audit_lib.errors import InputError

DATA_DIR = Path(__file__).resolve().parents[1] / "data"
FERGUSON_SOURCE = "Ferguson et al. 2010, Zoo Biology 29:317-334"

UV_PROVISION_LABELS = {
    "gradient": "whole-enclosure gradient",
    "basking_patch": "basking patch, low UV elsewhere",
}


@dataclass(frozen=True)
class Zone:
    """One Ferguson zone: UV Index ranges of a species group.

    Attributes
    ----------
    zone : int
        Zone number 1-4.
    description : str
        Short words for the group (the project's own).
    mean_uvi_low, mean_uvi_high : float
        Range of the mean voluntary exposure [-].
    max_uvi_low, max_uvi_high : float
        Range of the maximum UV Index met [-].
    source, status : str
        Where the values come from and how far they are checked ("from memory", "read").
    """

    zone: int
    description: str
    mean_uvi_low: float
    mean_uvi_high: float
    max_uvi_low: float
    max_uvi_high: float
    source: str = FERGUSON_SOURCE
    status: str = "from memory"


@dataclass(frozen=True)
class SpeciesTarget:
    """A species assigned to a zone and a way of providing UV.

    Attributes
    ----------
    id : str
        Identifier used in site files.
    scientific_name, common_name : str
        Names.
    zone : int
        Ferguson zone 1-4.
    uv_provision : str
        ``"gradient"`` (whole-enclosure gradient) or ``"basking_patch"`` (basking patch, low UV
        elsewhere).
    basking_note : str
        Optional note, e.g. on basking temperature.
    status : str
        How far the assignment is checked (e.g. "demo data - check", "site").
    native_latitude_deg : float or None
        A latitude inside the wild range, for drawing the sun's day there [deg].
    """

    id: str
    scientific_name: str
    common_name: str = ""
    zone: int = 1
    uv_provision: str = "gradient"
    basking_note: str = ""
    status: str = "site"
    native_latitude_deg: float | None = None


#: Tables read in this process: path -> (size, mtime, table).
_TABLES: dict = {}


def _read_table(path: Path, options: dict):
    """A ``#``-commented CSV as a DataFrame, read once per process while the file is unchanged.

    Every enclosure of a batch judges against the same zone and species tables; a copy is
    returned, so a caller cannot change the next one's.
    """
    import pandas as pd

    st = path.stat()
    stamp = (st.st_size, st.st_mtime_ns)
    key = (str(path), repr(sorted(options.items())))
    if _TABLES.get(key, (None,))[0] != stamp:
        _TABLES[key] = (stamp, pd.read_csv(path, comment="#", **options))
    return _TABLES[key][1].copy()


def read_zone_table(path=None) -> dict[int, Zone]:
    """The Ferguson zone table.

    Parameters
    ----------
    path : str or Path, optional
        A CSV with the columns of ``data/ferguson_zones.csv`` (``#`` lines are comments);
        the shipped file by default.

    Returns
    -------
    dict of int to Zone
    """
    path = Path(path) if path is not None else DATA_DIR / "ferguson_zones.csv"
    table = _read_table(path, {})
    zones = {}
    for row in table.itertuples(index=False):
        zones[int(row.zone)] = Zone(
            zone=int(row.zone),
            description=str(row.description),
            mean_uvi_low=float(row.mean_uvi_low),
            mean_uvi_high=float(row.mean_uvi_high),
            max_uvi_low=float(row.max_uvi_low),
            max_uvi_high=float(row.max_uvi_high),
            status=str(row.status),
        )
    return zones


def read_species_table(path=None):
    """The species table as a DataFrame (columns as in ``data/species_demo.csv``).

    Parameters
    ----------
    path : str or Path, optional
        A CSV with columns ``id, scientific_name, common_name, zone, uv_provision,
        basking_note, status`` and optionally ``native_latitude_deg``; the shipped demo table
        (DEMO DATA, to be checked) by default.

    Returns
    -------
    pandas.DataFrame
    """
    path = Path(path) if path is not None else DATA_DIR / "species_demo.csv"
    table = _read_table(path, {"dtype": {"id": str}, "keep_default_na": False})
    bad = table[~table["uv_provision"].isin(list(UV_PROVISION_LABELS))]
    if len(bad):
        raise InputError(
            f"unknown uv_provision {bad['uv_provision'].iloc[0]!r}",
            path=path,
            field="uv_provision",
            hint=f"use one of {', '.join(UV_PROVISION_LABELS)}",
        )
    return table


def species_targets(site_species=(), path=None) -> dict[str, SpeciesTarget]:
    """The library's species table with a site's additions and overrides applied.

    Parameters
    ----------
    site_species : iterable of records or dicts
        Each with ``id``, ``scientific_name``, ``zone`` and optionally ``common_name``,
        ``uv_provision``, ``basking_note`` (e.g. the site file's ``[[species]]`` tables).
    path : str or Path, optional
        Species table to start from (see :func:`read_species_table`).

    Returns
    -------
    dict of str to SpeciesTarget
    """
    result = {}
    for row in read_species_table(path).itertuples(index=False):
        result[row.id] = SpeciesTarget(
            id=row.id,
            scientific_name=row.scientific_name,
            common_name=row.common_name,
            zone=int(row.zone),
            uv_provision=row.uv_provision,
            basking_note=row.basking_note,
            status=row.status,
            native_latitude_deg=_optional_float(getattr(row, "native_latitude_deg", None)),
        )
    for item in site_species:
        get = (
            item.get if isinstance(item, Mapping) else (lambda k, d=None, i=item: getattr(i, k, d))
        )
        zone = int(get("zone"))
        if zone not in (1, 2, 3, 4):
            raise InputError(f"zone {zone} is not 1-4", field=f"species.{get('id')}.zone")
        provision = get("uv_provision", "gradient") or "gradient"
        if provision not in UV_PROVISION_LABELS:
            raise InputError(
                f"unknown uv_provision {provision!r}",
                field=f"species.{get('id')}.uv_provision",
                hint=f"use one of {', '.join(UV_PROVISION_LABELS)}",
            )
        result[str(get("id"))] = SpeciesTarget(
            id=str(get("id")),
            scientific_name=str(get("scientific_name")),
            common_name=str(get("common_name", "") or ""),
            zone=zone,
            uv_provision=provision,
            basking_note=str(get("basking_note", "") or ""),
            status="site",
            native_latitude_deg=_optional_float(get("native_latitude_deg", None)),
        )
    return result


def _optional_float(value) -> float | None:
    if value is None or (isinstance(value, str) and not value.strip()):
        return None
    number = float(value)
    return None if math.isnan(number) else number
