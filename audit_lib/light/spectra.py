"""The spectrum record, reading instrument exports, and the one resampling policy.

A :class:`Spectrum` holds wavelengths [nm] and spectral irradiance [W m-2 nm-1].
:func:`read_spectrum` accepts what spectroradiometer exports look like: metadata lines
above the table, comma, semicolon, tab or space delimiters, decimal commas with
semicolons, and a unit in the header (``irradiance [uW/cm^2/nm]``) or a metadata line
(``Unit: uW/cm^2/nm``). Anything it cannot read safely is an :class:`InputError` naming
the file, line and field, with a hint.

Resampling policy (:func:`resample_spectrum`): linear interpolation; zero outside the
measured range. Weighting functions treat the range a spectrum does not cover as zero
and :mod:`audit_lib.light.metrics` warns how much of a weighting range is missing.
"""

from __future__ import annotations

import re
import warnings
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from audit_lib.errors import AuditWarning, InputError
from audit_lib.light.units import si_factor

#: Plausible wavelength range of a spectrum file [nm].
WAVELENGTH_LIMITS_NM = (100.0, 2600.0)
#: Spectral irradiance above this is impossible for a lamp or the sun at an enclosure
#: [W m-2 nm-1]; the sun peaks near 2 W m-2 nm-1 (ASTM G173). Common practice bound.
MAX_SPECTRAL_IRRADIANCE_W_M2_NM = 50.0
#: Negative values smaller in magnitude than this share of the peak are dark-subtraction
#: noise, clipped to zero with a warning; larger ones are an error [-]. Common practice.
NEGATIVE_NOISE_SHARE = 0.05


class SpectrumWarning(AuditWarning):
    """A spectrum was read but something about it deserves attention."""


@dataclass(frozen=True)
class Spectrum:
    """A spectral irradiance distribution.

    Parameters
    ----------
    wavelength_nm : numpy.ndarray
        Strictly increasing wavelengths [nm].
    irradiance_w_m2_nm : numpy.ndarray
        Spectral irradiance, same length [W m-2 nm-1].
    name : str
        Short label for tables and plots.
    source : str
        Where it came from (file path, model description).
    """

    wavelength_nm: np.ndarray
    irradiance_w_m2_nm: np.ndarray
    name: str = ""
    source: str = field(default="", compare=False)

    def __post_init__(self) -> None:
        wl = np.array(self.wavelength_nm, dtype=float)
        e = np.array(self.irradiance_w_m2_nm, dtype=float)
        if wl.ndim != 1 or e.shape != wl.shape or wl.size < 2:
            raise InputError(
                "wavelength and irradiance must be 1-D arrays of the same length (at least 2)",
                field=self.name or None,
            )
        if not np.all(np.diff(wl) > 0):
            raise InputError("wavelengths must be strictly increasing", field=self.name or None)
        wl.setflags(write=False)
        e.setflags(write=False)
        object.__setattr__(self, "wavelength_nm", wl)
        object.__setattr__(self, "irradiance_w_m2_nm", e)

    def scaled(self, factor: float, name: str | None = None) -> Spectrum:
        """Return this spectrum multiplied by ``factor`` [-]."""
        return Spectrum(
            self.wavelength_nm, self.irradiance_w_m2_nm * factor, name or self.name, self.source
        )


def resample_spectrum(spectrum: Spectrum, wavelength_nm) -> Spectrum:
    """Move a spectrum onto another wavelength grid (linear; zero outside its range).

    Parameters
    ----------
    spectrum : Spectrum
        The spectrum to resample.
    wavelength_nm : array_like
        Target wavelengths [nm], strictly increasing.

    Returns
    -------
    Spectrum
        Spectral irradiance on the new grid [W m-2 nm-1].
    """
    wl = np.asarray(wavelength_nm, dtype=float)
    e = np.interp(wl, spectrum.wavelength_nm, spectrum.irradiance_w_m2_nm, left=0.0, right=0.0)
    return Spectrum(wl, e, spectrum.name, spectrum.source)


# ---------------------------------------------------------------------------- reading
_UNIT_IN_HEADER = re.compile(r"[\[(]\s*([^\])]+?)\s*[\])]")
_UNIT_LINE = re.compile(r"^\W*units?\W*[:=,;\t]\s*(.+?)\s*$", re.IGNORECASE)
_DELIMITERS = (",", ";", "\t")


def _split(line: str, delimiter: str | None) -> list[str]:
    parts = line.split(delimiter) if delimiter else line.split()
    return [p.strip().strip('"').strip("'") for p in parts]


def _as_float(text: str, decimal_comma: bool) -> float | None:
    if decimal_comma:
        text = text.replace(",", ".")
    try:
        value = float(text)
    except ValueError:
        return None
    return value


def _sniff(lines: list[str]) -> tuple[str | None, bool, int]:
    """Find the delimiter, decimal comma and index of the first numeric row."""
    for index, line in enumerate(lines):
        stripped = line.strip()
        if not stripped or stripped.startswith("#"):
            continue
        for delimiter in (*_DELIMITERS, None):
            for decimal_comma in ((False, True) if delimiter != "," else (False,)):
                fields = _split(stripped, delimiter)
                if len(fields) >= 2:
                    values = [_as_float(f, decimal_comma) for f in fields[:2]]
                    if all(v is not None for v in values):
                        return delimiter, decimal_comma, index
    return None, False, -1


def _header_line(lines: list[str], first_numeric: int) -> tuple[str, int]:
    for index in range(first_numeric - 1, -1, -1):
        if lines[index].strip():
            return lines[index].strip().lstrip("#").strip(), index
    return "", -1


def _unit_from_text(header_fields: list[str], lines: list[str], first_numeric: int) -> str | None:
    if len(header_fields) >= 2:
        match = _UNIT_IN_HEADER.search(header_fields[1])
        if match:
            return match.group(1)
    for line in lines[:first_numeric]:
        match = _UNIT_LINE.match(line.strip().lstrip("#").strip())
        if match:
            return match.group(1).strip().strip('"')
    return None


@dataclass(frozen=True)
class _Table:
    wavelength_nm: np.ndarray
    values: np.ndarray
    rows: list
    column: str
    file_unit: str | None


def _read_wavelength_table(path: Path) -> _Table:
    """Read the numeric two-column table of a text file, validating wavelengths."""
    path = Path(path)
    try:
        raw = path.read_bytes()
    except OSError as exc:
        raise InputError(
            f"cannot read the file ({exc.strerror})", path=path, hint="check the path"
        ) from None
    if b"\x00" in raw:
        raise InputError(
            "the file is binary, not a text table",
            path=path,
            hint="export the spectrum as CSV or tab-separated text",
        )
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        text = raw.decode("latin-1")
    if sum(not (c.isprintable() or c in "\r\n\t") for c in text) > max(5, len(text) // 100):
        raise InputError(
            "the file is binary, not a text table",
            path=path,
            hint="export the spectrum as CSV or tab-separated text",
        )
    lines = text.splitlines()
    if not any(line.strip() for line in lines):
        raise InputError(
            "the file is empty", path=path, hint="export the spectrum again with its data table"
        )
    delimiter, decimal_comma, first = _sniff(lines)
    if first < 0:
        one_col = any(_as_float(ln.strip(), False) is not None for ln in lines if ln.strip())
        raise InputError(
            "the table has only one column" if one_col else "no numeric table found",
            path=path,
            hint="the file needs two columns: wavelength [nm] and spectral irradiance",
        )
    header, _ = _header_line(lines, first)
    header_fields = _split(header, delimiter) if header else []
    file_unit = _unit_from_text(header_fields, lines, first)
    column = header_fields[1] if len(header_fields) >= 2 else "irradiance"

    wavelengths: list[float] = []
    values: list[float] = []
    rows: list[int] = []
    for index in range(first, len(lines)):
        stripped = lines[index].strip()
        if not stripped or stripped.startswith("#"):
            continue
        fields = _split(stripped, delimiter)
        if len(fields) < 2:
            raise InputError(
                "this row has only one value",
                path=path,
                line=index + 1,
                hint="every row needs wavelength and irradiance",
            )
        parsed = []
        for text_value, field_name in zip(fields[:2], ("wavelength", column), strict=True):
            value = _as_float(text_value, decimal_comma)
            if value is None or not np.isfinite(value):
                raise InputError(
                    f"{text_value!r} is not a number",
                    path=path,
                    line=index + 1,
                    field=field_name,
                    hint="remove text, blanks and NaN from the data table",
                )
            parsed.append(value)
        wavelengths.append(parsed[0])
        values.append(parsed[1])
        rows.append(index + 1)
    wl = np.array(wavelengths)
    e = np.array(values)
    if wl.size < 2:
        raise InputError(
            "the table has fewer than two rows", path=path, hint="export the full spectrum"
        )
    steps = np.diff(wl)
    if np.any(steps <= 0):
        bad = int(np.argmax(steps <= 0)) + 1
        what = "repeats" if steps[bad - 1] == 0 else "is smaller than the one above"
        raise InputError(
            f"wavelength {wl[bad]:g} {what}",
            path=path,
            line=rows[bad],
            field="wavelength",
            hint="wavelengths must increase strictly; sort the table and remove duplicates",
        )
    if wl[-1] < WAVELENGTH_LIMITS_NM[0] or wl[0] > WAVELENGTH_LIMITS_NM[1] or wl[-1] < 20:
        raise InputError(
            f"wavelengths {wl[0]:g}–{wl[-1]:g} are not in nm",
            path=path,
            line=rows[0],
            field="wavelength",
            hint="wavelengths must be in nanometres (e.g. 280–400, not 0.28–0.40 µm)",
        )

    return _Table(wl, e, rows, column, file_unit)


def read_spectrum(path, unit: str | None = None, *, name: str | None = None) -> Spectrum:
    """Read a spectrum file (CSV, TSV or TXT) and convert it to W m-2 nm-1.

    The table is the block of numeric rows after any metadata lines; the line above it is
    the header. Column 1 is wavelength [nm], column 2 spectral irradiance. The irradiance
    unit comes from the header (``irradiance [uW/cm^2/nm]``), a metadata line
    (``Unit: uW/cm^2/nm``) or the ``unit`` argument; if both file and caller give one
    they must agree.

    Parameters
    ----------
    path : str or Path
        The file.
    unit : str, optional
        Unit of the irradiance column, e.g. ``"uW/cm^2/nm"``.
    name : str, optional
        Label; defaults to the file stem.

    Returns
    -------
    Spectrum
        Wavelength [nm] and spectral irradiance [W m-2 nm-1].

    Raises
    ------
    InputError
        Empty or binary file, no numeric table, one column, text or NaN in a number,
        duplicate or decreasing wavelengths, wavelengths not in nm, large negative values,
        missing or conflicting unit, or an irradiance impossible for the stated unit.

    Warns
    -----
    SpectrumWarning
        When small negative values (dark-subtraction noise) are clipped to zero.
    """
    path = Path(path)
    table = _read_wavelength_table(path)
    wl, values, rows, column = table.wavelength_nm, table.values, table.rows, table.column
    file_unit = table.file_unit
    e = values.copy()
    unit_used = _resolve_unit(unit, file_unit, path, rows[0])
    try:
        factor = si_factor(unit_used, "spectral_irradiance")
    except InputError as exc:
        raise InputError(exc.message, path=path, field=column, hint=exc.hint) from None
    e = e * factor

    peak = float(np.max(np.abs(e))) if e.size else 0.0
    if peak > MAX_SPECTRAL_IRRADIANCE_W_M2_NM:
        where = int(np.argmax(np.abs(e)))
        raise InputError(
            f"{values[where]:g} {unit_used} is {e[where]:.3g} W/m^2/nm, far above sunlight "
            f"(about 2 W/m^2/nm at its peak)",
            path=path,
            line=rows[where],
            field=column,
            hint="is the unit right? A file in uW/cm^2/nm read as W/m^2/nm is 100 times too high",
        )
    negative = e < 0
    if np.any(negative):
        worst = int(np.argmin(e))
        if -e[worst] > NEGATIVE_NOISE_SHARE * max(float(np.max(e)), 0.0):
            raise InputError(
                f"large negative irradiance {values[worst]:g}",
                path=path,
                line=rows[worst],
                field=column,
                hint="check the dark reference; only small negative noise near zero is accepted",
            )
        warnings.warn(
            f"{path.name}: {int(negative.sum())} small negative values (dark-subtraction noise) "
            "clipped to zero",
            SpectrumWarning,
            stacklevel=2,
        )
        e = np.clip(e, 0.0, None)
    return Spectrum(wl, e, name=name or path.stem, source=str(path))


def _resolve_unit(unit: str | None, file_unit: str | None, path: Path, line: int) -> str:
    if unit and file_unit:
        if si_factor(unit, "spectral_irradiance") != si_factor(file_unit, "spectral_irradiance"):
            raise InputError(
                f"the file says {file_unit!r} but {unit!r} was given",
                path=path,
                hint="drop --unit, or correct the file header",
            )
        return unit
    if unit or file_unit:
        return unit or file_unit
    raise InputError(
        "the irradiance unit is not stated",
        path=path,
        line=line,
        hint="write it in the header, e.g. 'irradiance [uW/cm^2/nm]', or pass --unit",
    )


def read_transmittance(path) -> tuple[np.ndarray, np.ndarray]:
    """Read a spectral transmittance file (screens: glass, acrylic, films).

    Same table rules as :func:`read_spectrum`: wavelength [nm] in column 1, transmittance
    in column 2, either as a fraction 0–1 or in percent (a ``%`` unit in the header or a
    ``Unit:`` line).

    Parameters
    ----------
    path : str or Path
        The file.

    Returns
    -------
    wavelength_nm, transmittance : numpy.ndarray
        Wavelengths [nm] and transmittance as a fraction [-].

    Raises
    ------
    InputError
        As for :func:`read_spectrum`, and for values outside 0–1 (0–100 %).
    """
    path = Path(path)
    table = _read_wavelength_table(path)
    unit = (table.file_unit or "").strip().lower()
    if unit in ("%", "percent", "pct"):
        values, limit = table.values / 100.0, "0–100 %"
    elif unit in ("", "1", "-", "fraction"):
        values, limit = table.values, "0–1"
    else:
        raise InputError(
            f"unit {table.file_unit!r} is not a unit of transmittance",
            path=path,
            field=table.column,
            hint="give transmittance as a fraction 0–1, or write [%] in the header",
        )
    bad = np.flatnonzero((values < -0.01) | (values > 1.01))
    if bad.size:
        i = int(bad[0])
        raise InputError(
            f"transmittance {table.values[i]:g} is outside {limit}",
            path=path,
            line=table.rows[i],
            field=table.column,
            hint="write [%] in the header if the values are in percent",
        )
    return table.wavelength_nm, np.clip(values, 0.0, 1.0)
