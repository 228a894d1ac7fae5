"""Spectrum → weighted quantities: bands, UV Index, vitamin D, actinic hazard, light.

Method (one for every quantity): the spectrum is taken as piecewise linear between its
samples; each quantity integrates E(λ)·s(λ) over its range [λ1, λ2] with the trapezoid
rule on the measured grid, with the range limits (and the kinks of the erythema
spectrum) inserted as extra nodes by linear interpolation. Non-uniform steps are handled
exactly by this rule. Because every quantity is linear in E, the rule is precomputed as
one matrix per wavelength grid, and many spectra are reduced in one product
(``irradiance @ matrix``) — "weight first, place second" (design.md).

Sources: bands CIE (ISO 21348), UVA split CIE 134/1; erythema ISO 17166:1999 / CIE S 007;
UV Index WHO/WMO/UNEP/ICNIRP 2002 (UVI = 40 m² W⁻¹ × E_er); previtamin D3 CIE 174:2006;
actinic hazard and keeper limits ICNIRP 2004 and IEC 62471:2006; illuminance CIE 018:2019
(K_m = 683.002 lm W⁻¹); CCT from colour-science (Ohno 2013); sunlight reference ASTM
G173-03 global tilt, as shipped by pvlib.
"""

from __future__ import annotations

import functools
import math
import warnings

import numpy as np

from audit_lib.errors import AuditWarning, InputError
from audit_lib.light.action_spectra import (
    actinic_hazard_icnirp2004,
    erythema_cie1998,
    photopic_luminous_efficiency,
    previtamin_d3_cie2006,
)

UVI_PER_W_M2 = 40.0  #: UV Index per W m-2 of erythemal irradiance [m2 W-1] (WHO 2002)
SED_J_M2 = 100.0  #: one standard erythema dose [J m-2] (CIE S 007 / ISO 17166)
LUMINOUS_EFFICACY_LM_W = 683.002  #: K_m [lm W-1] (CIE 018:2019)
MAX_DUV_FOR_CCT = 0.05  #: CCT is reported only within this |Duv| of the locus [-]
ACTINIC_LIMIT_J_M2 = 30.0  #: effective actinic dose limit in 8 h [J m-2] (ICNIRP 2004)
UVA_EYE_DOSE_J_M2 = 1.0e4  #: UVA eye dose limit for t ≤ 1000 s [J m-2] (IEC 62471 §4.3.2)
UVA_EYE_IRRADIANCE_W_M2 = 10.0  #: UVA eye irradiance limit beyond 1000 s [W m-2]

#: Quantities that maps show; all are linear in irradiance, so they superpose.
MAP_QUANTITIES = ("uvi", "vitamin_d_w_m2", "uvb_w_m2", "illuminance_lux")


def _unit_weight(wavelength_nm):
    return np.ones_like(np.asarray(wavelength_nm, dtype=float))


#: name → (λ1 [nm], λ2 [nm], weighting function, scale). Quantity = scale·∫E·s dλ.
QUANTITY_DEFINITIONS = {
    "uvc_w_m2": (100.0, 280.0, _unit_weight, 1.0),
    "uvb_w_m2": (280.0, 315.0, _unit_weight, 1.0),
    "uva_w_m2": (315.0, 400.0, _unit_weight, 1.0),
    "uva2_w_m2": (315.0, 340.0, _unit_weight, 1.0),
    "uva1_w_m2": (340.0, 400.0, _unit_weight, 1.0),
    "visible_w_m2": (380.0, 780.0, _unit_weight, 1.0),
    "short_uvb_w_m2": (280.0, 290.0, _unit_weight, 1.0),
    "erythemal_w_m2": (250.0, 400.0, erythema_cie1998, 1.0),
    "uvi": (250.0, 400.0, erythema_cie1998, UVI_PER_W_M2),
    "vitamin_d_w_m2": (252.0, 330.0, previtamin_d3_cie2006, 1.0),
    "actinic_w_m2": (180.0, 400.0, actinic_hazard_icnirp2004, 1.0),
    "illuminance_lux": (360.0, 830.0, photopic_luminous_efficiency, LUMINOUS_EFFICACY_LM_W),
}
QUANTITIES = tuple(QUANTITY_DEFINITIONS)
_KINKS_NM = (298.0, 328.0)  # erythema branch points


class CoverageWarning(AuditWarning):
    """A spectrum does not cover the whole range a weighting function needs."""


def _spread_to_grid(grid: np.ndarray, nodes: np.ndarray, node_weights: np.ndarray) -> np.ndarray:
    """Return P.T @ node_weights, where P interpolates linearly from ``grid`` to ``nodes``."""
    upper = np.clip(np.searchsorted(grid, nodes, side="right"), 1, grid.size - 1)
    lower = upper - 1
    frac = (nodes - grid[lower]) / (grid[upper] - grid[lower])
    return np.bincount(lower, (1.0 - frac) * node_weights, minlength=grid.size) + np.bincount(
        upper, frac * node_weights, minlength=grid.size
    )


def integration_weights(wavelength_nm, low_nm, high_nm, weighting, scale=1.0) -> np.ndarray:
    """Vector k such that ``irradiance @ k`` = scale·∫ E(λ) s(λ) dλ over [low, high].

    Parameters
    ----------
    wavelength_nm : array_like
        Measurement grid, strictly increasing [nm].
    low_nm, high_nm : float
        Integration range [nm].
    weighting : callable
        s(λ) [-].
    scale : float
        Factor applied to the integral (e.g. 40 m2 W-1 for UVI) [-].

    Returns
    -------
    numpy.ndarray
        Weights, one per grid point [nm].
    """
    grid = np.asarray(wavelength_nm, dtype=float)
    lo, hi = max(low_nm, grid[0]), min(high_nm, grid[-1])
    if hi <= lo:
        return np.zeros(grid.size)
    extra = [x for x in (lo, hi, *_KINKS_NM) if lo <= x <= hi]
    nodes = np.unique(np.concatenate([grid[(grid >= lo) & (grid <= hi)], extra]))
    if nodes.size < 2:
        return np.zeros(grid.size)
    steps = np.diff(nodes)
    trapezoid = np.zeros(nodes.size)
    trapezoid[:-1] += steps / 2
    trapezoid[1:] += steps / 2
    return scale * _spread_to_grid(grid, nodes, weighting(nodes) * trapezoid)


@functools.lru_cache(maxsize=64)
def _weights_for_grid(grid_bytes: bytes) -> np.ndarray:
    grid = np.frombuffer(grid_bytes, dtype=float)
    matrix = np.column_stack(
        [integration_weights(grid, *QUANTITY_DEFINITIONS[q]) for q in QUANTITIES]
    )
    matrix.setflags(write=False)
    return matrix


def weighted_quantities(wavelength_nm, irradiance_w_m2_nm) -> dict[str, np.ndarray]:
    """Band totals and weighted irradiances of one or many spectra.

    Parameters
    ----------
    wavelength_nm : array_like, shape (n,)
        Strictly increasing wavelengths [nm].
    irradiance_w_m2_nm : array_like, shape (..., n)
        Spectral irradiance [W m-2 nm-1]; leading axes are kept.

    Returns
    -------
    dict of str to numpy.ndarray
        ``uvc_w_m2`` (100–280 nm), ``uvb_w_m2`` (280–315), ``uva_w_m2`` (315–400),
        ``uva2_w_m2`` (315–340), ``uva1_w_m2`` (340–400), ``visible_w_m2`` (380–780),
        ``short_uvb_w_m2`` (280–290) [W m-2]; ``erythemal_w_m2`` [W m-2]; ``uvi`` [-];
        ``vitamin_d_w_m2`` [W m-2]; ``actinic_w_m2`` (E_S) [W m-2]; ``illuminance_lux`` [lx].
        Each has the shape of the leading axes. Ranges a spectrum does not cover count as
        zero (see :func:`coverage_gaps`).
    """
    grid = np.ascontiguousarray(wavelength_nm, dtype=float)
    values = np.asarray(irradiance_w_m2_nm, dtype=float) @ _weights_for_grid(grid.tobytes())
    return {q: values[..., i] for i, q in enumerate(QUANTITIES)}


def coverage_gaps(wavelength_nm, threshold: float = 1e-3) -> dict[str, float]:
    """Share of each weighting function [-] that a wavelength grid does not cover.

    The share is weighted: 1 − ∫ s(λ) dλ over the covered part / ∫ s(λ) dλ over the whole
    range, so a grid ending at 800 nm misses almost nothing of V(λ).

    Parameters
    ----------
    wavelength_nm : array_like
        Measurement grid [nm].
    threshold : float
        Smallest share reported [-].

    Returns
    -------
    dict of str to float
        Only the quantities with a gap above ``threshold``.
    """
    lo, hi = float(np.min(wavelength_nm)), float(np.max(wavelength_nm))
    gaps = {}
    for q in ("uvb_w_m2", "uva_w_m2", "erythemal_w_m2", "vitamin_d_w_m2", "illuminance_lux"):
        a, b, weighting, _ = QUANTITY_DEFINITIONS[q]
        grid = np.linspace(a, b, 2001)
        s = weighting(grid)
        covered = np.where((grid >= lo) & (grid <= hi), s, 0.0)
        share = 1.0 - np.trapezoid(covered, grid) / np.trapezoid(s, grid)
        if share > threshold:
            gaps[q] = float(share)
    return gaps


def uv_index(erythemal_w_m2):
    """UV Index [-] from erythemally weighted irradiance [W m-2] (WHO 2002: ×40 m2 W-1)."""
    return np.asarray(erythemal_w_m2) * UVI_PER_W_M2


def erythemal_from_uv_index(uvi):
    """Erythemally weighted irradiance [W m-2] from a UV Index [-] (1 UVI = 25 mW m-2)."""
    return np.asarray(uvi) / UVI_PER_W_M2


def uvi_category(uvi) -> str:
    """WHO exposure category of a UV Index.

    The index is rounded to a whole number first (common practice), then: low 0–2,
    moderate 3–5, high 6–7, very high 8–10, extreme 11+ (WHO/WMO/UNEP/ICNIRP 2002).

    Parameters
    ----------
    uvi : float
        UV Index [-].

    Returns
    -------
    str
        ``"low"``, ``"moderate"``, ``"high"``, ``"very high"`` or ``"extreme"``.
    """
    rounded = math.floor(float(uvi) + 0.5)
    if rounded <= 2:
        return "low"
    if rounded <= 5:
        return "moderate"
    if rounded <= 7:
        return "high"
    if rounded <= 10:
        return "very high"
    return "extreme"


def keeper_limit_s(actinic_w_m2):
    """Permissible daily exposure time [s] for skin and eyes: 30 J m-2 / E_S.

    Source: ICNIRP 2004; IEC 62471:2006 §4.3.1. Infinite where E_S is zero.

    Parameters
    ----------
    actinic_w_m2 : float or array_like
        Actinic effective irradiance E_S [W m-2].
    """
    e = np.asarray(actinic_w_m2, dtype=float)
    with np.errstate(divide="ignore"):
        return np.where(e > 0, ACTINIC_LIMIT_J_M2 / np.where(e > 0, e, 1.0), np.inf)


def uva_eye_limit_s(uva_w_m2):
    """Permissible UVA (315–400 nm) exposure time of the eye [s].

    IEC 62471:2006 §4.3.2: E_UVA·t ≤ 10⁴ J m-2 for t ≤ 1000 s, E_UVA ≤ 10 W m-2 beyond.
    Infinite where E_UVA ≤ 10 W m-2. Applies at the cornea.

    Parameters
    ----------
    uva_w_m2 : float or array_like
        UVA irradiance [W m-2].
    """
    e = np.asarray(uva_w_m2, dtype=float)
    return np.where(
        e > UVA_EYE_IRRADIANCE_W_M2, UVA_EYE_DOSE_J_M2 / np.maximum(e, UVA_EYE_IRRADIANCE_W_M2),
        np.inf,
    )


#: Indicative IEC 62471:2006 risk groups, in order (exempt group, risk groups 1-3).
RISK_GROUPS = ("exempt", "risk group 1", "risk group 2", "risk group 3")
#: Upper emission limits of the exempt group, risk group 1 and risk group 2 for the actinic
#: UV hazard E_S [W m-2]: 30 J m-2 effective over 30 000 s, 10 000 s and 1 000 s.
#: IEC 62471:2006 Table 6.1 -- FROM MEMORY (the standard was not read); the derivation from
#: the ICNIRP 2004 limit of 30 J m-2 (read) and those exposure times is consistent with it.
ACTINIC_RISK_LIMITS_W_M2 = (0.001, 0.003, 0.03)
#: The same for the UVA (315-400 nm) eye hazard E_UVA [W m-2]: 10^4 J m-2 over 1 000 s,
#: 300 s and 100 s. IEC 62471:2006 Table 6.1 -- FROM MEMORY.
UVA_RISK_LIMITS_W_M2 = (10.0, 33.0, 100.0)
#: Distance at which lamps other than general lighting service lamps are classified [m]
#: (IEC 62471:2006 §5.1.1, 200 mm -- from memory).
RISK_GROUP_DISTANCE_M = 0.2
#: General lighting service lamps are classified where they give this illuminance, but not
#: nearer than :data:`RISK_GROUP_DISTANCE_M` [lx] (IEC 62471:2006 §5.1.1 -- from memory).
GENERAL_LIGHTING_ILLUMINANCE_LUX = 500.0


def hazard_risk_groups(actinic_w_m2: float, uva_w_m2: float) -> dict[str, str]:
    """Indicative IEC 62471 risk group of each UV hazard and the overall (higher) group.

    Limits :data:`ACTINIC_RISK_LIMITS_W_M2` and :data:`UVA_RISK_LIMITS_W_M2` (IEC 62471:2006
    Table 6.1, from memory); a value equal to a limit falls in the higher group. The
    irradiances must be those at the classification distance (200 mm, or the 500 lx distance
    for general lighting service lamps): the groups mean nothing at any other distance.
    Indicative only: a classification needs the standard's measurement conditions and is
    not a certification.

    Parameters
    ----------
    actinic_w_m2 : float
        E_S at the classification distance [W m-2].
    uva_w_m2 : float
        E_UVA at the classification distance [W m-2].

    Returns
    -------
    dict of str to str
        ``actinic``, ``uva`` and ``overall``, each one of :data:`RISK_GROUPS`.
    """
    def level(value, limits):
        return int(np.searchsorted(limits, value, side="right"))

    actinic = level(actinic_w_m2, ACTINIC_RISK_LIMITS_W_M2)
    uva = level(uva_w_m2, UVA_RISK_LIMITS_W_M2)
    return {"actinic": RISK_GROUPS[actinic], "uva": RISK_GROUPS[uva],
            "overall": RISK_GROUPS[max(actinic, uva)]}


def risk_group(actinic_w_m2: float, uva_w_m2: float) -> str:
    """Indicative IEC 62471 risk group: the higher of the actinic and UVA groups.

    See :func:`hazard_risk_groups` (limits from memory; irradiances at the classification
    distance).

    Parameters
    ----------
    actinic_w_m2 : float
        E_S [W m-2].
    uva_w_m2 : float
        E_UVA [W m-2].

    Returns
    -------
    str
        ``"exempt"``, ``"risk group 1"``, ``"risk group 2"`` or ``"risk group 3"``.
    """
    return hazard_risk_groups(actinic_w_m2, uva_w_m2)["overall"]


def risk_group_at_distance(actinic_w_m2: float, uva_w_m2: float, distance_m: float) -> dict:
    """Indicative risk group of a point source measured at ``distance_m``, moved to 200 mm.

    Both irradiances are scaled by (distance / 0.2 m)^2 -- the inverse-square law of a point
    source, an assumption: extended lamps (tubes, panels) fall off more slowly near the lamp,
    so for them the figure at 200 mm is an upper estimate (common practice).

    Parameters
    ----------
    actinic_w_m2, uva_w_m2 : float
        E_S and E_UVA measured at ``distance_m`` [W m-2].
    distance_m : float
        Lamp-to-sensor distance of the measurement [m].

    Returns
    -------
    dict
        ``risk_group`` (overall), ``actinic_risk_group``, ``uva_risk_group``,
        ``risk_group_distance_m`` [m], ``actinic_w_m2_at_distance`` and
        ``uva_w_m2_at_distance`` [W m-2], ``risk_group_scaling`` (``"inverse_square"``).
    """
    if not np.isfinite(distance_m) or distance_m <= 0:
        raise InputError(f"measurement distance must be positive, got {distance_m!r}",
                         field="distance_m", hint="the lamp-to-sensor distance, e.g. 0.3 m")
    scale = (float(distance_m) / RISK_GROUP_DISTANCE_M) ** 2
    actinic, uva = float(actinic_w_m2) * scale, float(uva_w_m2) * scale
    groups = hazard_risk_groups(actinic, uva)
    return {"risk_group": groups["overall"], "actinic_risk_group": groups["actinic"],
            "uva_risk_group": groups["uva"], "risk_group_distance_m": RISK_GROUP_DISTANCE_M,
            "actinic_w_m2_at_distance": actinic, "uva_w_m2_at_distance": uva,
            "risk_group_scaling": "inverse_square"}


def peak_shape(wavelength_nm, irradiance, lo_nm: float = 250.0, hi_nm: float = 400.0):
    """Peak wavelength, FWHM and asymmetry of the main peak inside [lo, hi].

    Half-maximum crossings are found by linear interpolation between samples.
    Asymmetry = short-side half width / long-side half width (> 1: skewed towards
    shorter wavelengths). NaN where the curve does not fall to half maximum inside the
    range or the range holds no signal.

    Parameters
    ----------
    wavelength_nm : array_like, shape (n,)
        Wavelengths [nm].
    irradiance : array_like, shape (..., n)
        Spectral irradiance (any scale).
    lo_nm, hi_nm : float
        Search range [nm].

    Returns
    -------
    peak_nm, fwhm_nm, asymmetry : numpy.ndarray
        Shapes of the leading axes [nm], [nm], [-].
    """
    wl_all = np.asarray(wavelength_nm, dtype=float)
    inside = (wl_all >= lo_nm) & (wl_all <= hi_nm)
    wl = wl_all[inside]
    e = np.asarray(irradiance, dtype=float)[..., inside]
    lead = e.shape[:-1]
    e = e.reshape(-1, wl.size) if wl.size else np.zeros((int(np.prod(lead)), 0))
    nan = np.full(e.shape[0], np.nan)
    if wl.size < 3:
        return tuple(x.reshape(lead) for x in (nan, nan.copy(), nan.copy()))
    rows = np.arange(e.shape[0])
    p = np.argmax(e, axis=1)
    top = e[rows, p]
    half = top / 2
    index = np.arange(wl.size)
    below = e < half[:, None]
    left = np.where(below & (index < p[:, None]), index, -1).max(axis=1)
    right = np.where(below & (index > p[:, None]), index, wl.size).min(axis=1)
    ok = (left >= 0) & (right < wl.size) & (top > 0)
    li, ri = np.clip(left, 0, wl.size - 2), np.clip(right, 1, wl.size - 1)

    def crossing(i, j):
        ei, ej = e[rows, i], e[rows, j]
        with np.errstate(invalid="ignore", divide="ignore"):
            return wl[i] + (half - ei) * (wl[j] - wl[i]) / (ej - ei)

    x_left = crossing(li, li + 1)
    x_right = crossing(ri - 1, ri)
    peak = np.where(top > 0, wl[p], np.nan)
    fwhm = np.where(ok, x_right - x_left, np.nan)
    with np.errstate(invalid="ignore", divide="ignore"):
        asym = np.where(ok, (peak - x_left) / (x_right - peak), np.nan)
    return peak.reshape(lead), fwhm.reshape(lead), asym.reshape(lead)


@functools.lru_cache(maxsize=1)
def sun_reference() -> dict[str, float]:
    """Weighted quantities of the ASTM G173-03 global tilt spectrum (pvlib's copy).

    Returns
    -------
    dict of str to float
        :func:`weighted_quantities` of the reference sun, plus ``vitd_to_erythemal_ratio``
        and ``short_uvb_fraction`` [-].
    """
    import pvlib

    reference = pvlib.spectrum.get_reference_spectra(standard="ASTM G173-03")
    wl = reference.index.to_numpy(dtype=float)
    values = {k: float(v) for k, v in weighted_quantities(wl, reference["global"]).items()}
    values["vitd_to_erythemal_ratio"] = values["vitamin_d_w_m2"] / values["erythemal_w_m2"]
    values["short_uvb_fraction"] = values["short_uvb_w_m2"] / values["uvb_w_m2"]
    return values


@functools.lru_cache(maxsize=1)
def _cie1931_cmfs():
    import colour

    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    return np.asarray(cmfs.wavelengths, float), np.asarray(cmfs.values, float)


@functools.lru_cache(maxsize=16)
def _xyz_weights(grid_bytes: bytes) -> np.ndarray:
    grid = np.frombuffer(grid_bytes, dtype=float)
    cmf_wl, cmf = _cie1931_cmfs()
    columns = []
    for i in range(3):
        def bar(wl, i=i):
            return np.interp(wl, cmf_wl, cmf[:, i], left=0.0, right=0.0)

        columns.append(integration_weights(grid, cmf_wl[0], cmf_wl[-1], bar))
    return np.column_stack(columns)


def correlated_colour_temperature(wavelength_nm, irradiance_w_m2_nm):
    """Correlated colour temperature [K] of one or many spectra.

    Tristimulus values with the CIE 1931 2° observer (colour-science's copy, integrated
    with the same rule as every other quantity), chromaticity in the CIE 1960 UCS, CCT by
    Robertson's (1968) method as implemented in colour-science.

    Parameters
    ----------
    wavelength_nm : array_like, shape (n,)
        Wavelengths [nm], covering the visible.
    irradiance_w_m2_nm : array_like, shape (..., n)
        Spectral irradiance [W m-2 nm-1].

    Returns
    -------
    float or numpy.ndarray
        CCT [K]; NaN for a spectrum with no visible light, or whose chromaticity lies
        more than 0.05 (|Duv|) from the Planckian locus, where CCT has no meaning
        (CIE 015:2018; the 0.05 bound is common practice).
    """
    import colour

    grid = np.ascontiguousarray(wavelength_nm, dtype=float)
    xyz = np.asarray(irradiance_w_m2_nm, float) @ _xyz_weights(grid.tobytes())
    denominator = xyz[..., 0] + 15 * xyz[..., 1] + 3 * xyz[..., 2]
    ok = (xyz[..., 1] > 0) & (denominator > 0)
    safe = np.where(ok, denominator, 1.0)
    uv = np.stack([4 * xyz[..., 0] / safe, 6 * xyz[..., 1] / safe], axis=-1)
    uv = np.where(ok[..., None], uv, [[0.2, 0.3]][0])
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        cct_duv = np.asarray(colour.temperature.uv_to_CCT(uv, method="Robertson 1968"))
    cct = np.where(ok & (np.abs(cct_duv[..., 1]) <= MAX_DUV_FOR_CCT), cct_duv[..., 0], np.nan)
    return float(cct) if cct.ndim == 0 else cct


def batch_metrics(wavelength_nm, irradiance_w_m2_nm, *, with_cct: bool = True):
    """Every numeric metric of many spectra at once (vectorised).

    Parameters
    ----------
    wavelength_nm : array_like, shape (n,)
        Wavelengths [nm].
    irradiance_w_m2_nm : array_like, shape (..., n)
        Spectral irradiance [W m-2 nm-1].
    with_cct : bool
        Compute the CCT (needs colour-science).

    Returns
    -------
    dict of str to numpy.ndarray
        The :func:`weighted_quantities` plus ``keeper_limit_s`` [s], ``uva_eye_limit_s``
        [s], ``short_uvb_fraction`` [-], ``vitd_to_erythemal_ratio`` [-], ``peak_nm``
        [nm], ``fwhm_nm`` [nm], ``asymmetry`` [-] and ``cct_k`` [K] (NaN where undefined).
    """
    e = np.asarray(irradiance_w_m2_nm, dtype=float)
    q = weighted_quantities(wavelength_nm, e)
    with np.errstate(divide="ignore", invalid="ignore"):
        q["short_uvb_fraction"] = np.where(
            q["uvb_w_m2"] > 0, q["short_uvb_w_m2"] / q["uvb_w_m2"], np.nan)
        q["vitd_to_erythemal_ratio"] = np.where(
            q["erythemal_w_m2"] > 0, q["vitamin_d_w_m2"] / q["erythemal_w_m2"], np.nan)
    q["keeper_limit_s"] = keeper_limit_s(q["actinic_w_m2"])
    q["uva_eye_limit_s"] = uva_eye_limit_s(q["uva_w_m2"])
    q["peak_nm"], q["fwhm_nm"], q["asymmetry"] = peak_shape(wavelength_nm, e)
    if with_cct:
        q["cct_k"] = np.asarray(correlated_colour_temperature(wavelength_nm, e))
    return q


def spectrum_metrics(spectrum, distance_m: float | None = None) -> dict:
    """Every audited quantity of one spectrum, as JSON-able values (SI units).

    Parameters
    ----------
    spectrum : audit_lib.light.spectra.Spectrum
        The spectrum [nm], [W m-2 nm-1].
    distance_m : float, optional
        Lamp-to-sensor distance at which the spectrum was measured [m]. Needed for the
        indicative risk group, which IEC 62471 states at 200 mm: the spectrum is moved there
        by the inverse-square law (:func:`risk_group_at_distance`). Without it the risk
        group is None and ``risk_group_missing`` says why.

    Returns
    -------
    dict
        The keys of :func:`batch_metrics` plus ``uvi_category``, ``sun_vitd_to_erythemal_ratio``
        and ``sun_short_uvb_fraction`` [-] (ASTM G173), ``coverage_gaps``,
        ``measurement_distance_m`` [m] and the keys of :func:`risk_group_at_distance`
        (None without a distance, with ``risk_group_missing = "no_measurement_distance"``).
        Values that cannot be computed (no UVB, visible not covered, unlimited time) are None.

    Warns
    -----
    CoverageWarning
        When the spectrum misses part of a weighting range.
    """
    wl, e = spectrum.wavelength_nm, spectrum.irradiance_w_m2_nm
    gaps = coverage_gaps(wl)
    for name, share in gaps.items():
        warnings.warn(
            f"{spectrum.name or 'spectrum'} covers {wl[0]:g}–{wl[-1]:g} nm: {share:.1%} of the "
            f"weighting range of {name} is not covered and counts as zero",
            CoverageWarning,
            stacklevel=2,
        )
    covers_visible = wl[0] <= 400.0 and wl[-1] >= 700.0
    values = batch_metrics(wl, e, with_cct=covers_visible)
    result = {k: (float(v) if np.isfinite(v) else None) for k, v in values.items()}
    sun = sun_reference()
    result.update(
        uvi_category=uvi_category(result["uvi"]),
        sun_vitd_to_erythemal_ratio=sun["vitd_to_erythemal_ratio"],
        sun_short_uvb_fraction=sun["short_uvb_fraction"],
        coverage_gaps=gaps,
        measurement_distance_m=None if distance_m is None else float(distance_m),
    )
    if distance_m is None:
        result.update(risk_group=None, actinic_risk_group=None, uva_risk_group=None,
                      risk_group_distance_m=None, actinic_w_m2_at_distance=None,
                      uva_w_m2_at_distance=None, risk_group_scaling=None,
                      risk_group_missing="no_measurement_distance")
    else:
        result.update(risk_group_at_distance(result["actinic_w_m2"], result["uva_w_m2"],
                                             distance_m), risk_group_missing=None)
    if not covers_visible:
        result["illuminance_lux"] = None
        result["cct_k"] = None
    return result


#: Display labels and units for :func:`format_metrics_table`.
METRIC_LABELS = {
    "uvi": ("UV Index", ""),
    "uvi_category": ("UV Index category (WHO)", ""),
    "uvc_w_m2": ("UVC 100–280 nm", "W/m²"),
    "uvb_w_m2": ("UVB 280–315 nm", "W/m²"),
    "uva_w_m2": ("UVA 315–400 nm", "W/m²"),
    "uva2_w_m2": ("UVA2 315–340 nm", "W/m²"),
    "uva1_w_m2": ("UVA1 340–400 nm", "W/m²"),
    "visible_w_m2": ("Visible 380–780 nm", "W/m²"),
    "erythemal_w_m2": ("Erythemally weighted", "W/m²"),
    "vitamin_d_w_m2": ("Previtamin-D3 weighted", "W/m²"),
    "actinic_w_m2": ("Actinic hazard E_S", "W/m²"),
    "keeper_limit_s": ("Keeper limit, skin and eyes (30 J/m² effective)", "s"),
    "uva_eye_limit_s": ("Keeper limit, UVA to the eye", "s"),
    "risk_group": ("IEC 62471 risk group at 200 mm (indicative)", ""),
    "illuminance_lux": ("Illuminance", "lx"),
    "cct_k": ("Correlated colour temperature", "K"),
    "short_uvb_fraction": ("Share of UVB below 290 nm", ""),
    "sun_short_uvb_fraction": ("same share for sunlight (ASTM G173)", ""),
    "vitd_to_erythemal_ratio": ("Vitamin D / erythemal ratio", ""),
    "sun_vitd_to_erythemal_ratio": ("same ratio for sunlight (ASTM G173)", ""),
    "peak_nm": ("Main UV peak", "nm"),
    "fwhm_nm": ("Main UV peak FWHM", "nm"),
    "asymmetry": ("Main UV peak asymmetry (short/long side)", ""),
}


def format_metrics_table(metrics: dict, title: str = "") -> str:
    """Render :func:`spectrum_metrics` as an aligned plain-text table."""
    rows = []
    for key, (label, unit) in METRIC_LABELS.items():
        text = format_metric(key, metrics.get(key))
        rows.append((label, text, "" if text in ("n/a", "unlimited") else unit))
    width = max(len(r[0]) for r in rows)
    lines = [title] if title else []
    lines += [f"{label:<{width}}  {text:>12} {unit}".rstrip() for label, text, unit in rows]
    for name, share in metrics.get("coverage_gaps", {}).items():
        lines.append(f"note: {share:.1%} of the weighting range of {name} is not covered")
    return "\n".join(lines)


def format_metric(key: str, value) -> str:
    """Format one metric for display: 4 significant digits, 'unlimited' or 'n/a' for None."""
    if value is None:
        return "unlimited" if key.endswith("limit_s") else "n/a"
    if isinstance(value, str):
        return value
    return f"{value:.4g}"
