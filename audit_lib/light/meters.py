"""Spectral mismatch correction of broadband meter readings.

A broadband UV Index meter is built to weight light like the erythema action spectrum
s_er(λ) and is calibrated under one source, usually the sun. Its real relative spectral
response s_m(λ) differs from s_er(λ), so under a lamp with another spectrum (a narrowband
UVB LED, say) it reads high or low. The *spectral mismatch correction factor* fixes that:

    F* = [∫E_lamp s_t dλ · ∫E_cal s_m dλ] / [∫E_lamp s_m dλ · ∫E_cal s_t dλ]

    corrected reading = F* × raw reading

with E_lamp the lamp spectrum, E_cal the calibration source spectrum and s_t the target
action spectrum (erythema for a UV Index meter). This is the spectral mismatch correction
factor defined in CIE S 017:2020 (ILV) term 17-25-115, whose note 3 extends it from
photometers to actinic radiometers; CIE 220:2016 ("Characterization and calibration
methods of UV radiometers", section 4.2.1) applies it to UV radiometers. The equation above
is the standard form (written from memory, consistent with that definition; the ILV
entry gives it for a V(λ) photometer calibrated with CIE illuminant A). The photovoltaic
standard IEC 60904-7 writes the same quantity the other way up as the spectral mismatch
factor MM = 1 / F* (measured value divided by MM), which is what
``pvlib.spectrum.calc_spectral_mismatch_field`` computes for a flat target response;
both are returned.

Integration: every function is linearly interpolated onto the union of all input
wavelength grids, counted as zero outside its own range, and integrated with the
trapezoid rule. Only the shape of each spectrum matters: F* does not change when any of
them is scaled.
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass, field
from os import PathLike
from pathlib import Path

import numpy as np
import pandas as pd

from audit_lib.errors import InputError
from audit_lib.light.action_spectra import ACTION_SPECTRA
from audit_lib.light.spectra import Spectrum


@dataclass(frozen=True)
class MeterResponse:
    """A meter's relative spectral response.

    Parameters
    ----------
    wavelength_nm : numpy.ndarray
        Strictly increasing wavelengths [nm].
    response : numpy.ndarray
        Relative response, any scale, non-negative [-].
    name : str
        Meter id or label.
    """

    wavelength_nm: np.ndarray
    response: np.ndarray
    name: str = ""
    source: str = field(default="", compare=False)

    def __post_init__(self) -> None:
        wl = np.array(self.wavelength_nm, dtype=float)
        r = np.array(self.response, dtype=float)
        label = self.name or None
        if wl.ndim != 1 or r.shape != wl.shape or wl.size < 2:
            raise InputError("meter response needs two columns of the same length (at least 2 "
                             "rows)", field=label)
        if not np.all(np.diff(wl) > 0):
            raise InputError("meter response wavelengths must be strictly increasing",
                             field=label)
        if not np.all(np.isfinite(r)) or np.any(r < 0) or not np.any(r > 0):
            raise InputError("meter response must be finite, non-negative and not all zero",
                             field=label)
        object.__setattr__(self, "wavelength_nm", wl)
        object.__setattr__(self, "response", r)


@dataclass(frozen=True)
class MismatchCorrection:
    """The mismatch correction of one meter under one lamp.

    Attributes
    ----------
    correction_factor : float
        F*, multiply the raw reading by it [-].
    mismatch_factor : float
        MM = 1 / F* (IEC 60904-7 form), divide the raw reading by it [-].
    meter, lamp, calibration, target : str
        Names of the inputs used.
    """

    correction_factor: float
    mismatch_factor: float
    meter: str
    lamp: str
    calibration: str
    target: str


def read_meter_response(path: str | PathLike, *, name: str | None = None) -> MeterResponse:
    """Read a meter's relative spectral response from a CSV file.

    The file has a header row ``wavelength_nm,relative_response`` (lines starting with
    ``#`` are comments) and one row per wavelength.

    Parameters
    ----------
    path : str or PathLike
        The CSV file.
    name : str, optional
        Label; defaults to the file stem.

    Returns
    -------
    MeterResponse
    """
    path = Path(path)
    rows: list[tuple[float, float]] = []
    header_seen = False
    for number, text in enumerate(path.read_text(encoding="utf-8-sig").splitlines(), start=1):
        text = text.strip()
        if not text or text.startswith("#"):
            continue
        fields = [f.strip() for f in text.split(",")]
        if not header_seen:
            header_seen = True
            if fields[:2] != ["wavelength_nm", "relative_response"]:
                raise InputError(f"header is {text!r}", path=path, line=number,
                                 hint="the first row must be wavelength_nm,relative_response")
            continue
        try:
            rows.append((float(fields[0]), float(fields[1])))
        except (ValueError, IndexError):
            raise InputError(f"expected two numbers, got {text!r}", path=path, line=number,
                             field="relative_response") from None
    if len(rows) < 2:
        raise InputError("fewer than two rows of data", path=path)
    data = np.array(rows)
    try:
        return MeterResponse(data[:, 0], data[:, 1], name or path.stem, str(path))
    except InputError as exc:
        raise InputError(exc.message, path=path, hint=exc.hint) from None


def reference_sun() -> Spectrum:
    """ASTM G173-03 global tilted reference solar spectrum (from pvlib's copy) [W m-2 nm-1]."""
    import pvlib

    table = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    return Spectrum(table.index.to_numpy(float), table["global"].to_numpy(float),
                    "ASTM G173-03 global tilt", "pvlib.spectrum.get_reference_spectra")


def _target_function(target) -> tuple[Callable, str]:
    if callable(target):
        return target, getattr(target, "__name__", "custom")

    choices = {"erythema": ACTION_SPECTRA["erythema (CIE S 007)"]}
    for key, function in ACTION_SPECTRA.items():
        choices[key] = choices[function.__name__] = function
    if target not in choices:
        raise InputError(f"unknown target action spectrum {target!r}", field="target",
                         hint="one of " + ", ".join(sorted(choices)))
    return choices[target], choices[target].__name__


def spectral_mismatch(meter: MeterResponse, lamp: Spectrum, calibration: Spectrum | None = None,
                      target: str | Callable = "erythema") -> MismatchCorrection:
    """Spectral mismatch correction of a broadband meter reading a lamp.

    Parameters
    ----------
    meter : MeterResponse
        The meter's relative spectral response s_m(λ) [-].
    lamp : Spectrum
        The lamp's spectrum as seen at the meter (any scale) [W m-2 nm-1].
    calibration : Spectrum, optional
        Spectrum of the source the meter was calibrated under; default the ASTM G173-03
        global tilted sun (pvlib's copy) [W m-2 nm-1].
    target : str or callable
        Action spectrum the meter should follow: ``"erythema"`` (CIE S 007 / ISO 17166,
        for UV Index meters), another name in ``audit_lib.light.action_spectra.ACTION_SPECTRA``,
        or a function of wavelength [nm] returning weights [-].

    Returns
    -------
    MismatchCorrection
        F* (CIE S 017:2020 17-25-115; CIE 220:2016) and MM = 1 / F* (IEC 60904-7).

    Raises
    ------
    InputError
        If an integral is zero (the meter or the target sees nothing of a spectrum).
    """
    if calibration is None:
        calibration = reference_sun()
    weight, target_name = _target_function(target)
    grid = np.unique(np.concatenate([meter.wavelength_nm, lamp.wavelength_nm,
                                     calibration.wavelength_nm]))

    def on_grid(wl, values):
        return np.interp(grid, wl, values, left=0.0, right=0.0)

    s_m = on_grid(meter.wavelength_nm, meter.response)
    s_t = np.asarray(weight(grid), dtype=float)
    e_lamp = on_grid(lamp.wavelength_nm, lamp.irradiance_w_m2_nm)
    e_cal = on_grid(calibration.wavelength_nm, calibration.irradiance_w_m2_nm)
    integrals = {
        "lamp seen by the target": np.trapezoid(e_lamp * s_t, grid),
        "lamp seen by the meter": np.trapezoid(e_lamp * s_m, grid),
        "calibration source seen by the target": np.trapezoid(e_cal * s_t, grid),
        "calibration source seen by the meter": np.trapezoid(e_cal * s_m, grid),
    }
    for what, value in integrals.items():
        if not value > 0:
            raise InputError(f"the {what} integrates to zero", field="spectrum",
                             hint="check the wavelength ranges of meter, lamp and calibration")
    lt, lm, ct, cm = integrals.values()
    f_star = float((lt * cm) / (lm * ct))
    return MismatchCorrection(f_star, 1.0 / f_star, meter.name, lamp.name, calibration.name,
                              target_name)


def correct_readings(readings: pd.DataFrame, factors: dict, *, quantity: str = "uvi"
                     ) -> pd.DataFrame:
    """Apply mismatch correction factors to readings, keeping the raw values.

    Parameters
    ----------
    readings : pandas.DataFrame
        Readings (contract columns ``meter``, ``lamp``, ``quantity``, ``value_si``).
    factors : dict
        Correction factor F* [-] (or :class:`MismatchCorrection`) keyed by
        ``(meter, enclosure, lamp)``, ``(meter, lamp)`` or ``meter`` alone (tried in
        that order).
    quantity : str
        Quantity the factors apply to (``"uvi"`` for UV Index meters).

    Returns
    -------
    pandas.DataFrame
        A copy with ``value_si_raw``, ``correction_factor`` [-] and ``value_si_corrected``;
        rows of another quantity or without a factor get NaN factor and NaN corrected value,
        so an uncorrected reading is never shown as corrected.
    """
    out = readings.copy()
    out["value_si_raw"] = out["value_si"].astype(float)

    def lookup(meter, enclosure, lamp) -> float:
        for key in ((meter, enclosure, lamp), (meter, lamp), meter):
            if key in factors:
                f = factors[key]
                return float(f.correction_factor if isinstance(f, MismatchCorrection) else f)
        return np.nan

    enclosures = out["enclosure"] if "enclosure" in out.columns else [""] * len(out)
    out["correction_factor"] = [
        lookup(m, e, lp) if q == quantity else np.nan
        for m, e, lp, q in zip(out["meter"], enclosures, out["lamp"], out["quantity"],
                               strict=True)
    ]
    out["value_si_corrected"] = out["value_si_raw"] * out["correction_factor"]
    return out
