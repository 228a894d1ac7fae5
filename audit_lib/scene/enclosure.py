"""Enclosure records: box, surfaces, screens and placed lamps.

Coordinates: origin at a floor corner, x along the width, y along the depth, z up [m].
A lamp's own frame (see :mod:`audit_lib.sources.lamps`) is rotated by ``tilt_deg`` about its
long (x) axis, positive tilting the beam towards +y, then by ``azimuth_deg`` about the
vertical, then moved to (``x_m``, ``y_m``, ``z_m``).

Maps over these records are computed by :mod:`audit_lib.scene.maps`.
"""

from __future__ import annotations

from dataclasses import dataclass, replace
from functools import cached_property

import numpy as np

from audit_lib.errors import InputError
from audit_lib.sources.lamps import LedArray, SourceGroup, lamp_sources

#: Surface kinds.
SURFACE_KINDS = ("floor", "basking", "other")


@dataclass(frozen=True)
class Surface:
    """A horizontal patch that receives light (floor, platform, branch top, rock).

    Parameters
    ----------
    name : str
        Surface id.
    z_m : float
        Height above the floor [m].
    x_min_m, x_max_m, y_min_m, y_max_m : float
        Extent in the enclosure frame [m].
    kind : str, optional
        ``"floor"``, ``"basking"`` or ``"other"``.
    """

    name: str
    z_m: float
    x_min_m: float
    x_max_m: float
    y_min_m: float
    y_max_m: float
    kind: str = "basking"

    def __post_init__(self) -> None:
        if self.kind not in SURFACE_KINDS:
            raise InputError(
                f"unknown surface kind {self.kind!r}",
                field=f"{self.name}.kind",
                hint="use one of " + ", ".join(SURFACE_KINDS),
            )
        if not (self.x_max_m > self.x_min_m and self.y_max_m > self.y_min_m):
            raise InputError(
                "surface extent is empty: need x_max_m > x_min_m and y_max_m > y_min_m",
                field=self.name,
            )

    @property
    def area_m2(self) -> float:
        """Area of the patch [m2]."""
        return (self.x_max_m - self.x_min_m) * (self.y_max_m - self.y_min_m)


def mesh_transmission(wire_diameter_m: float, pitch_m: float) -> float:
    """Open-area transmission of a square wire mesh at normal incidence, (1 - d/p)^2.

    Geometry only (Burger, Gehrmann & Ferguson 2007, Zoo Biology 26:417, discuss
    how much UV mesh removes; the formula is the open-area fraction).

    Parameters
    ----------
    wire_diameter_m : float
        Wire diameter d [m].
    pitch_m : float
        Centre-to-centre wire spacing p [m].

    Returns
    -------
    float
        Transmission [-].
    """
    if not 0 <= wire_diameter_m < pitch_m:
        raise InputError(
            "mesh wire diameter must be at least 0 and smaller than the pitch",
            field="wire_diameter_m",
            hint="pitch_m is the centre-to-centre spacing of the wires",
        )
    return (1.0 - wire_diameter_m / pitch_m) ** 2


@dataclass(frozen=True)
class Screen:
    """A horizontal screen between lamp and animal (mesh, glass, acrylic).

    Give ``transmission`` (one number) or ``wavelength_nm`` + ``transmittance``
    (spectral; every quantity is then weighed through it).

    Parameters
    ----------
    name : str
        Screen id.
    z_m : float
        Height of the screen [m].
    transmission : float, optional
        Scalar transmission [-], e.g. from :func:`mesh_transmission`.
    wavelength_nm, transmittance : tuple of float, optional
        Spectral transmittance [-] at wavelengths [nm]; linear interpolation,
        0 outside.
    bounds_m : tuple of float, optional
        (x_min, x_max, y_min, y_max) [m]; default the whole enclosure.
    kind : str, optional
        Free label: ``"mesh"``, ``"glass"``, ``"acrylic"``...
    """

    name: str
    z_m: float
    transmission: float | None = None
    wavelength_nm: tuple[float, ...] | None = None
    transmittance: tuple[float, ...] | None = None
    bounds_m: tuple[float, float, float, float] | None = None
    kind: str = "mesh"

    def __post_init__(self) -> None:
        spectral = self.wavelength_nm is not None or self.transmittance is not None
        if (self.transmission is None) == (not spectral) or (
            spectral and (self.wavelength_nm is None or self.transmittance is None)
        ):
            raise InputError(
                "give either transmission or both wavelength_nm and transmittance",
                field=f"{self.name}",
            )
        values = [self.transmission] if self.transmission is not None else self.transmittance
        if any(not 0 <= float(v) <= 1 for v in values):
            raise InputError("transmission must lie between 0 and 1", field=f"{self.name}")


@dataclass(frozen=True)
class PlacedLamp:
    """A lamp model at a position in an enclosure.

    Parameters
    ----------
    lamp : LedArray, TubeLamp, PointLamp or MeasuredLamp
        The lamp model.
    x_m, y_m, z_m : float
        Position of the lamp centre (its emitting face) [m].
    azimuth_deg : float, optional
        Rotation of the lamp's long axis from +x about the vertical [deg].
    tilt_deg : float, optional
        Rotation about the lamp's long axis [deg]; positive turns the beam to +y.
    name : str, optional
        Id of this lamp in the enclosure; default the model name.
    """

    lamp: object
    x_m: float
    y_m: float
    z_m: float
    azimuth_deg: float = 0.0
    tilt_deg: float = 0.0
    name: str = ""

    @property
    def id(self) -> str:
        """The lamp's id in the enclosure."""
        return self.name or self.lamp.name

    @cached_property
    def source_groups(self) -> tuple[SourceGroup, ...]:
        """The lamp's source groups moved into the enclosure frame.

        Labels as in :func:`placed_groups`; built once (the records are frozen, so it
        cannot go stale).
        """
        rot = rotation_matrix(self.azimuth_deg, self.tilt_deg)
        origin = np.array([self.x_m, self.y_m, self.z_m], float)
        led = isinstance(self.lamp, LedArray)
        return tuple(replace(g, labels=tuple(f"{self.id}/{lab}" for lab in g.labels) if led
                             else (self.id,) * len(g.labels),
                             positions_m=g.positions_m @ rot.T + origin, axes=g.axes @ rot.T)
                     for g in lamp_sources(self.lamp))


@dataclass(frozen=True)
class Enclosure:
    """An enclosure box with its lamps, surfaces and screens.

    Parameters
    ----------
    name : str
        Enclosure id.
    width_m, depth_m, height_m : float
        Inside dimensions along x, y, z [m].
    lamps : tuple of PlacedLamp
        Lamps in place.
    surfaces : tuple of Surface, optional
        Basking and other surfaces; a floor is added unless one is given or
        ``include_floor`` is False.
    screens : tuple of Screen, optional
        Screens between lamps and animal.
    include_floor : bool, optional
        Add a full-size floor surface named ``"floor"``.
    """

    name: str
    width_m: float
    depth_m: float
    height_m: float
    lamps: tuple[PlacedLamp, ...] = ()
    surfaces: tuple[Surface, ...] = ()
    screens: tuple[Screen, ...] = ()
    include_floor: bool = True

    def __post_init__(self) -> None:
        for key in ("lamps", "surfaces", "screens"):
            object.__setattr__(self, key, tuple(getattr(self, key)))
        if min(self.width_m, self.depth_m, self.height_m) <= 0:
            raise InputError("enclosure dimensions must be positive", field=self.name)
        names = [s.name for s in self.all_surfaces]
        if len(set(names)) != len(names):
            raise InputError("surface names must be unique", field=f"{self.name}.surfaces")
        ids = [p.id for p in self.lamps]
        if len(set(ids)) != len(ids):
            raise InputError(
                "lamp ids must be unique within an enclosure",
                field=f"{self.name}.lamps",
                hint="give PlacedLamp(name=...) to tell two lamps of the same model apart",
            )

    @property
    def all_surfaces(self) -> tuple[Surface, ...]:
        """The surfaces including the automatic floor."""
        if self.include_floor and not any(s.kind == "floor" for s in self.surfaces):
            floor = Surface("floor", 0.0, 0.0, self.width_m, 0.0, self.depth_m, "floor")
            return (floor, *self.surfaces)
        return self.surfaces

    def surface(self, name: str) -> Surface:
        """The surface called ``name``."""
        for s in self.all_surfaces:
            if s.name == name:
                return s
        raise InputError(
            f"no surface {name!r} in enclosure {self.name!r}",
            field="surface",
            hint="surfaces: " + ", ".join(s.name for s in self.all_surfaces),
        )


#: Another name for :class:`Enclosure`.
Scene = Enclosure


def rotation_matrix(azimuth_deg: float, tilt_deg: float) -> np.ndarray:
    """Lamp frame -> enclosure frame: Rz(azimuth) @ Rx(tilt) [-]."""
    a, t = np.radians(azimuth_deg), np.radians(tilt_deg)
    rz = np.array([[np.cos(a), -np.sin(a), 0], [np.sin(a), np.cos(a), 0], [0, 0, 1]])
    rx = np.array([[1, 0, 0], [0, np.cos(t), -np.sin(t)], [0, np.sin(t), np.cos(t)]])
    return rz @ rx


def placed_groups(enclosure: Enclosure) -> list[tuple[PlacedLamp, SourceGroup]]:
    """Every lamp's source groups moved into the enclosure frame (built once per placed lamp).

    Labels become ``"<lamp id>/<emitter>"`` for LED arrays and ``"<lamp id>"`` otherwise.
    """
    return [(placed, g) for placed in enclosure.lamps for g in placed.source_groups]
