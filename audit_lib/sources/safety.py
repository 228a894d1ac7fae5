"""Lamp-level photobiological safety: the indicative IEC 62471 risk group at a stated distance.

IEC 62471:2006 classifies a lamp at a stated distance: 200 mm for lamps that are not general
lighting service (GLS) lamps, and for GLS lamps the distance at which they give 500 lx, but
not nearer than 200 mm (§5.1.1; distances and the Table 6.1 limits from memory, so every
result is "indicative"). The lamp's spectral irradiance there comes from the lamp model on
its axis (:func:`audit_lib.sources.axis.spectrum_on_axis`: every source with its own
distance, pattern and incidence), and is reduced to the actinic UV hazard E_S (ICNIRP 2004
weighting) and the UVA eye hazard E_UVA (315-400 nm), each classified with
:func:`audit_lib.light.metrics.hazard_risk_groups`. The blue-light, retinal thermal and
infrared hazards need radiance and are not assessed.
"""

from __future__ import annotations

import numpy as np

from audit_lib.errors import InputError
from audit_lib.light.metrics import (
    GENERAL_LIGHTING_ILLUMINANCE_LUX,
    RISK_GROUP_DISTANCE_M,
    hazard_risk_groups,
    keeper_limit_s,
    weighted_quantities,
)
from audit_lib.sources.axis import quantity_on_axis, spectrum_on_axis

#: How the classification distance was chosen (values of ``risk_group_distance_rule``).
DISTANCE_RULES = ("200_mm", "500_lux")


def general_lighting_distance_m(lamp, illuminance_lux: float = GENERAL_LIGHTING_ILLUMINANCE_LUX,
                                *, nearest_m: float = RISK_GROUP_DISTANCE_M) -> float:
    """Distance on a lamp's axis where it gives ``illuminance_lux``, not nearer than ``nearest_m``.

    Illuminance falls monotonically along the axis, so the distance is bracketed between
    ``nearest_m`` and a far point and found with :func:`scipy.optimize.brentq`.

    Parameters
    ----------
    lamp : LedArray, TubeLamp, PointLamp or MeasuredLamp
        The lamp.
    illuminance_lux : float
        Target illuminance [lx] (IEC 62471: 500 lx for general lighting service lamps).
    nearest_m : float
        Lower bound of the distance [m] (IEC 62471: 200 mm).

    Returns
    -------
    float
        Distance below the lamp face [m]; ``nearest_m`` when the lamp gives less than the
        target there.
    """
    from scipy.optimize import brentq

    def excess(d):
        return quantity_on_axis(lamp, "illuminance_lux", d) - illuminance_lux

    at_nearest = excess(nearest_m)
    if not np.isfinite(at_nearest):
        raise InputError(f"lamp {lamp.name!r} has no modelled visible light", field="illuminance",
                         hint="a general lighting lamp needs a spectrum covering 380-780 nm")
    if at_nearest <= 0:
        return float(nearest_m)
    far = nearest_m
    while excess(far) > 0:
        far *= 2.0
        if far > 1e4:
            raise InputError(f"lamp {lamp.name!r} still gives {illuminance_lux:g} lx at 10 km",
                             field="illuminance")
    return float(brentq(excess, far / 2.0, far, xtol=1e-6, rtol=1e-9))


def lamp_risk_group(lamp, *, general_lighting: bool = False) -> dict:
    """Indicative IEC 62471 risk group of a lamp model at the standard's distance.

    Parameters
    ----------
    lamp : LedArray, TubeLamp, PointLamp or MeasuredLamp
        The lamp model at full output (a measured lamp needs a spectrum).
    general_lighting : bool
        True for a general lighting service lamp: classified where it gives 500 lx (not
        nearer than 200 mm) instead of at 200 mm.

    Returns
    -------
    dict
        ``risk_group`` (overall, one of :data:`audit_lib.light.metrics.RISK_GROUPS`),
        ``actinic_risk_group``, ``uva_risk_group``, ``risk_group_distance_m`` [m],
        ``risk_group_distance_rule`` (one of :data:`DISTANCE_RULES`),
        ``actinic_w_m2_at_distance`` (E_S) and ``uva_w_m2_at_distance`` (E_UVA) [W m-2],
        ``illuminance_lux_at_distance`` [lx] and ``keeper_limit_s_at_distance`` [s]
        (30 J m-2 / E_S; None when unlimited). Indicative only (limits from memory; not a
        certification).
    """
    if general_lighting:
        distance, rule = general_lighting_distance_m(lamp), "500_lux"
    else:
        distance, rule = RISK_GROUP_DISTANCE_M, "200_mm"
    spectrum = spectrum_on_axis(lamp, distance)
    q = {k: float(v) for k, v in weighted_quantities(spectrum.wavelength_nm,
                                                     spectrum.irradiance_w_m2_nm).items()}
    groups = hazard_risk_groups(q["actinic_w_m2"], q["uva_w_m2"])
    return {
        "risk_group": groups["overall"],
        "actinic_risk_group": groups["actinic"],
        "uva_risk_group": groups["uva"],
        "risk_group_distance_m": float(distance),
        "risk_group_distance_rule": rule,
        "actinic_w_m2_at_distance": q["actinic_w_m2"],
        "uva_w_m2_at_distance": q["uva_w_m2"],
        "illuminance_lux_at_distance": q["illuminance_lux"],
        "keeper_limit_s_at_distance": (float(keeper_limit_s(q["actinic_w_m2"]))
                                       if q["actinic_w_m2"] > 0 else None),
    }
