"""Published weighting functions (action spectra), one function each, with a registry.

Every function takes wavelengths [nm] and returns the relative weight [-], zero outside
the range the source defines. Tabulated spectra are read from ``audit_lib/data/``, whose
files name their source in their header lines; :data:`DATA_FILES` maps each to its
SHA-256 so a test can tell if a shipped table was edited.

Interpolation policy (one for the whole library): between tabulated points the CIE 174
and V(λ) tables are interpolated linearly (1 nm tables); the ICNIRP S(λ) table (5 nm and
coarser steps, near-exponential) is interpolated log-linearly, as is common practice for
it. Outside a table's range the weight is zero.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from importlib import resources

import numpy as np

#: Shipped tables and their SHA-256 (a test recomputes them).
DATA_FILES: dict[str, str] = {
    "cie174_previtamin_d3.csv": (
        "7b281daf7477112bb4a2b46dc88a353ac2b7bb50b9ba88c1266199053fd61e6b"
    ),
    "icnirp2004_actinic_hazard.csv": (
        "47342f8125aa7effd192ac1839d559fc4f051ad5fc5702ba7efe083404e496c0"
    ),
    "cie1924_photopic_vlambda.csv": (
        "805122c213afed68600379171fc1b720d1a6c391ecb48781d139875b519bd2cb"
    ),
}


@functools.cache
def read_table(name: str) -> tuple[np.ndarray, np.ndarray]:
    """Read a two-column table shipped in ``audit_lib/data``.

    Parameters
    ----------
    name : str
        File name, one of :data:`DATA_FILES`.

    Returns
    -------
    wavelength_nm, weight : numpy.ndarray
        The tabulated points [nm], [-].
    """
    text = resources.files("audit_lib.data").joinpath(name).read_text(encoding="utf-8")
    rows = [ln for ln in text.splitlines() if ln.strip() and not ln.startswith("#")]
    data = np.array([[float(x) for x in ln.split(",")] for ln in rows[1:]])
    data.setflags(write=False)
    return data[:, 0], data[:, 1]


def _interp_zero_outside(wavelength_nm, table_nm, table_w, log: bool = False) -> np.ndarray:
    wl = np.asarray(wavelength_nm, dtype=float)
    if log:
        out = np.exp(np.interp(wl, table_nm, np.log(table_w)))
    else:
        out = np.interp(wl, table_nm, table_w)
    return np.where((wl >= table_nm[0]) & (wl <= table_nm[-1]), out, 0.0)


def erythema_cie1998(wavelength_nm) -> np.ndarray:
    """Erythema reference action spectrum s_er(λ) [-].

    s_er = 1 for 250 ≤ λ ≤ 298 nm; 10^(0.094 (298 − λ)) for 298 < λ ≤ 328 nm;
    10^(0.015 (140 − λ)) for 328 < λ ≤ 400 nm; 0 elsewhere.

    Source: ISO 17166:1999 / CIE S 007/E:1998. The UVA branch uses 140, as in the standard
    (an older form with 139 still circulates; Webb et al. 2011, Photochem. Photobiol. 87:483).

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths [nm].

    Returns
    -------
    numpy.ndarray
        Relative weight [-].
    """
    wl = np.asarray(wavelength_nm, dtype=float)
    uvb = 10.0 ** (0.094 * (298.0 - wl))
    uva = 10.0 ** (0.015 * (140.0 - wl))
    out = np.where(wl <= 298.0, 1.0, np.where(wl <= 328.0, uvb, uva))
    return np.where((wl >= 250.0) & (wl <= 400.0), out, 0.0)


def previtamin_d3_cie2006(wavelength_nm) -> np.ndarray:
    """Action spectrum for previtamin D3 production in skin [-], 1 at 298 nm.

    Source: CIE 174:2006, tabulated at 1 nm from 252 to 330 nm (``cie174_previtamin_d3.csv``),
    interpolated linearly; zero outside 252–330 nm.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths [nm].

    Returns
    -------
    numpy.ndarray
        Relative weight [-].
    """
    return _interp_zero_outside(wavelength_nm, *read_table("cie174_previtamin_d3.csv"))


def actinic_hazard_icnirp2004(wavelength_nm) -> np.ndarray:
    """Actinic UV hazard weighting S(λ) [-], 1 at 270 nm.

    Source: ICNIRP (2004) Health Phys. 87:171–186; the same table in IEC 62471:2006 and
    CIE S 009:2002 (``icnirp2004_actinic_hazard.csv``, 180–400 nm). Interpolated
    log-linearly between the tabulated points (common practice: S(λ) is near-exponential;
    the analytic approximations are up to about 50 % off near 323 nm, so the table is used).
    Zero outside 180–400 nm.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths [nm].

    Returns
    -------
    numpy.ndarray
        Relative weight [-].
    """
    return _interp_zero_outside(
        wavelength_nm, *read_table("icnirp2004_actinic_hazard.csv"), log=True
    )


def photopic_luminous_efficiency(wavelength_nm) -> np.ndarray:
    """CIE 1924 photopic luminous efficiency V(λ) [-], 1 at 555 nm.

    Source: CIE 018:2019 (``cie1924_photopic_vlambda.csv``, 1 nm, 360–830 nm), interpolated
    linearly; zero outside.

    Parameters
    ----------
    wavelength_nm : array_like
        Wavelengths [nm].

    Returns
    -------
    numpy.ndarray
        Relative weight [-].
    """
    return _interp_zero_outside(wavelength_nm, *read_table("cie1924_photopic_vlambda.csv"))


#: Public names of the weighting functions (used in plots and reports).
ACTION_SPECTRA: dict[str, Callable[[np.ndarray], np.ndarray]] = {
    "erythema (CIE S 007)": erythema_cie1998,
    "previtamin D3 (CIE 174)": previtamin_d3_cie2006,
    "actinic hazard (ICNIRP)": actinic_hazard_icnirp2004,
    "photopic V(λ) (CIE 1924)": photopic_luminous_efficiency,
}

#: Wavelength range [nm] over which each weighting function is non-zero.
ACTION_SPECTRUM_RANGES_NM: dict[Callable, tuple[float, float]] = {
    erythema_cie1998: (250.0, 400.0),
    previtamin_d3_cie2006: (252.0, 330.0),
    actinic_hazard_icnirp2004: (180.0, 400.0),
    photopic_luminous_efficiency: (360.0, 830.0),
}
