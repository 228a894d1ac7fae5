"""Unit strings at the input boundary, converted to the library's SI units.

This is the only module that converts units (design.md). Unit strings come from file
headers, site files and the command line, in the forms instruments and people write:
``uW/cm^2/nm``, ``µW/cm²/nm``, ``W m-2 nm-1``, ``mW/m2``, ``klx``. Parsing uses pint
(a well-kept unit library) after a small normalisation of exponents and the micro sign.

Every value must come with its unit: there is no default, so a reading in µW/cm² can never
be taken silently for W/m² (a factor of 100).
"""

from __future__ import annotations

import functools
import re

import numpy as np

from audit_lib.errors import InputError

#: The SI unit each kind of quantity is converted to, and examples of accepted units.
SI_UNITS: dict[str, tuple[str, tuple[str, ...]]] = {
    "spectral_irradiance": (
        "W/m^2/nm",
        ("W/m^2/nm", "mW/m^2/nm", "uW/cm^2/nm", "µW/cm²/nm", "mW/cm^2/nm", "W/m^2/um"),
    ),
    "irradiance": ("W/m^2", ("W/m^2", "mW/m^2", "uW/cm^2", "µW/cm²", "mW/cm^2")),
    "length": ("m", ("m", "cm", "mm", "in", "ft")),
    "illuminance": ("lx", ("lx", "klx", "fc")),
    "time": ("s", ("s", "min", "h", "d")),
}

_SUPERSCRIPT_DIGITS = str.maketrans("⁻⁰¹²³⁴⁵⁶⁷⁸⁹", "-0123456789")
_SUPERSCRIPT_RUN = re.compile("[⁻⁰¹²³⁴⁵⁶⁷⁸⁹]+")


@functools.lru_cache(maxsize=1)
def _registry():
    import pint

    ureg = pint.UnitRegistry()
    ureg.define("footcandle = lumen / foot ** 2 = fc")
    return ureg


def normalise_unit(unit: str) -> str:
    """Rewrite a unit string into a form pint parses.

    Handles the micro sign (``µ``, ``μ`` → ``u``), superscripts (``cm²`` → ``cm^2``),
    bare exponents (``m2``, ``m-2`` → ``m^2``, ``m^-2``) and spaces between factors.

    Parameters
    ----------
    unit : str
        Unit as written, e.g. ``"µW cm-2 nm-1"``.

    Returns
    -------
    str
        The normalised string, e.g. ``"uW*cm^-2*nm^-1"``.
    """
    text = unit.strip().replace("µ", "u").replace("μ", "u").replace("·", "*").replace("−", "-")
    text = _SUPERSCRIPT_RUN.sub(lambda m: "^" + m.group(0).translate(_SUPERSCRIPT_DIGITS), text)
    text = text.replace("**", "^")
    text = re.sub(r"\^\s*\(\s*(-?\d+)\s*\)", r"^\1", text)
    text = re.sub(r"\^\s*(-?\d+)", r"^\1", text)
    # bare exponent after a letter: m2, m-2, nm-1
    text = re.sub(r"(?<=[A-Za-z])(-?\d+)\b", r"^\1", text)
    text = re.sub(r"\s*/\s*", "/", text)
    text = re.sub(r"\s*\*\s*", "*", text)
    text = re.sub(r"\s+", "*", text)
    return text


@functools.lru_cache(maxsize=256)
def si_factor(unit: str, kind: str) -> float:
    """Return the factor that converts a value in ``unit`` to the SI unit of ``kind``.

    Parameters
    ----------
    unit : str
        Unit as written in the input, e.g. ``"uW/cm^2/nm"``.
    kind : str
        One of the keys of :data:`SI_UNITS`.

    Returns
    -------
    float
        Multiply a value in ``unit`` by this to get it in the SI unit [-].

    Raises
    ------
    InputError
        If the kind is unknown, the unit cannot be parsed, or it is not a unit of that kind.
    """
    if kind not in SI_UNITS:
        raise InputError(
            f"unknown kind of quantity {kind!r}", hint=f"use one of {', '.join(SI_UNITS)}"
        )
    target, examples = SI_UNITS[kind]
    hint = f"write the unit of this {kind.replace('_', ' ')} as one of: {', '.join(examples)}"
    if not isinstance(unit, str) or not unit.strip():
        raise InputError(f"no unit given for a {kind.replace('_', ' ')} value", hint=hint)
    import pint

    ureg = _registry()
    try:
        quantity = ureg.Quantity(1.0, normalise_unit(unit))
        factor = float(quantity.to(target).magnitude)
    except (pint.errors.PintError, AttributeError, TypeError, ValueError, AssertionError) as exc:
        if isinstance(exc, pint.errors.DimensionalityError):
            raise InputError(
                f"unit {unit!r} is not a unit of {kind.replace('_', ' ')}", hint=hint
            ) from None
        raise InputError(f"unit {unit!r} is not recognised", hint=hint) from None
    return factor


def to_si(value, unit: str, kind: str):
    """Convert a value (scalar or array) from ``unit`` to the library's SI unit of ``kind``.

    Parameters
    ----------
    value : float or array_like
        Value(s) in ``unit``.
    unit : str
        Unit as written, e.g. ``"µW/cm²"``.
    kind : str
        ``"spectral_irradiance"`` (→ W m-2 nm-1), ``"irradiance"`` (→ W m-2),
        ``"length"`` (→ m), ``"illuminance"`` (→ lx) or ``"time"`` (→ s).

    Returns
    -------
    float or numpy.ndarray
        The value in SI units.

    Examples
    --------
    >>> to_si(1.0, "uW/cm^2", "irradiance")
    0.01
    """
    factor = si_factor(unit, kind)
    if np.ndim(value) == 0:
        return float(value) * factor
    return np.asarray(value, dtype=float) * factor
