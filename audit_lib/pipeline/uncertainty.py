"""The uncertainty budget of one audited enclosure (see :mod:`audit_lib.judge.uncertainty`).

The meters are those whose UV Index readings of the audit day calibrate the model (the
largest "± %" among them counts, conservatively); a meter's readings count as corrected
for spectral mismatch when the site gives its ``spectral_response`` and its type is one
that :mod:`audit_lib.pipeline.meter_corrections` corrects. The spread is that of the ratios
the calibration itself uses (:func:`audit_lib.pipeline.steps.calibration_ratios`).
"""

from __future__ import annotations

import pandas as pd

from audit_lib.judge.uncertainty import (
    OutputUncertainty,
    calibration_spread_u,
    meter_uncertainty_pct,
)
from audit_lib.pipeline.meter_corrections import METER_TARGETS
from audit_lib.pipeline.steps import calibration_ratios


def calibration_meters(site, enclosure_id: str, day) -> list[str]:
    """Ids of the meters with UV Index readings at named places on the audit day."""
    rows = site.readings_of(enclosure_id)
    if rows.empty:
        return []
    day_rows = rows[(pd.to_datetime(rows["date"]).dt.date == day) & (rows["quantity"] == "uvi")
                    & (rows["position"].astype(str) != "")]
    return sorted({str(m) for m in day_rows["meter"].dropna() if str(m)})


def audit_uncertainty(site, enclosure_id: str, day, points) -> OutputUncertainty:
    """The budget of an audit's scale factor: meters, calibration spread, no decay.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_id : str
        Enclosure id.
    day : datetime.date
        The audit day.
    points : pandas.DataFrame
        Modelled (``uvi``) and measured (``measured_uvi``) UV Index at the positions.

    Returns
    -------
    OutputUncertainty
    """
    ratios = calibration_ratios(points) if len(points) else []
    meters = {m.id: m for m in site.records.meters}
    pcts = []
    for meter_id in calibration_meters(site, enclosure_id, day):
        m = meters.get(meter_id)
        if m is None:
            continue
        corrected = bool(m.spectral_response) and m.type in METER_TARGETS
        pcts.append(meter_uncertainty_pct(m.type, stated=m.uncertainty_pct,
                                          mismatch_corrected=corrected))
    if len(ratios) and not pcts:  # readings of a meter the site does not list
        pcts.append(meter_uncertainty_pct("uv_index_meter"))
    return OutputUncertainty(meter_pct=max(pcts) if len(ratios) else 0.0,
                             spread_u=calibration_spread_u(ratios), readings=len(ratios))


__all__ = ["audit_uncertainty", "calibration_meters"]
