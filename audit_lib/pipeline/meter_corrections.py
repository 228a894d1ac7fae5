"""A site's UV Index readings corrected for each meter's spectral mismatch.

For every UV Index meter of a site that names a ``spectral_response`` file and every lamp
whose model has a spectrum (measured file or modelled bands, see
:func:`audit_lib.pipeline.assemble.model_spectrum`), the correction factor F* of
:func:`audit_lib.light.meters.spectral_mismatch` is computed with the ASTM G173-03 sun as the
calibration source, and applied to that meter's readings of that lamp. Readings of other
meters, of no single lamp (``lamp`` empty) or of other quantities keep NaN as corrected
value: they are shown raw only.

Assumption: the spectrum reaching the meter has the lamp's shape. That holds for open
mesh (spectrally neutral); a UV-transmitting acrylic or glass screen changes the shape and
is not accounted for here.
"""

from __future__ import annotations

import pandas as pd

from audit_lib.light.meters import (
    correct_readings,
    read_meter_response,
    reference_sun,
    spectral_mismatch,
)
from audit_lib.pipeline.assemble import model_spectrum

#: Meter types whose readings are corrected, with the action spectrum they should follow.
METER_TARGETS = {"uv_index_meter": "erythema"}


def site_meter_corrections(site, enclosure_ids=None) -> pd.DataFrame:
    """Correction factor of each (meter, enclosure, lamp) pair of a site.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_ids : iterable of str, optional
        Only these enclosures (all by default): one enclosure's report needs its own lamps,
        not the whole site's, so a batch stays linear in the number of enclosures.

    Returns
    -------
    pandas.DataFrame
        Columns ``meter``, ``enclosure``, ``lamp``, ``lamp_model``, ``correction_factor``
        (F*, multiply the raw reading) [-], ``mismatch_factor`` (MM = 1 / F*) [-],
        ``calibration``, ``target``.
    """
    columns = ["meter", "enclosure", "lamp", "lamp_model", "correction_factor",
               "mismatch_factor", "calibration", "target"]
    meters = [m for m in site.records.meters
              if m.spectral_response and m.type in METER_TARGETS]
    wanted = None if enclosure_ids is None else set(enclosure_ids)
    enclosures = [e for e in site.records.enclosures if wanted is None or e.id in wanted]
    rows = []
    if meters:
        sun = reference_sun()
        spectra = {}
        for meter in meters:
            response = read_meter_response(site.path_of(meter.spectral_response), name=meter.id)
            for enclosure in enclosures:
                for lamp in enclosure.lamps:
                    if lamp.model not in spectra:
                        spectra[lamp.model] = model_spectrum(site, site.lamp_model(lamp.model))
                    spectrum = spectra[lamp.model]
                    if spectrum is None:
                        continue
                    c = spectral_mismatch(response, spectrum, sun, METER_TARGETS[meter.type])
                    rows.append((meter.id, enclosure.id, lamp.id, lamp.model,
                                 c.correction_factor, c.mismatch_factor, c.calibration,
                                 c.target))
    return pd.DataFrame(rows, columns=columns)


def correct_site_readings(site) -> pd.DataFrame:
    """Return the site's readings with raw and mismatch-corrected values.

    Adds ``value_si_raw``, ``correction_factor`` and ``value_si_corrected`` columns (see
    :func:`audit_lib.light.meters.correct_readings`).
    """
    table = site_meter_corrections(site)
    factors = {(r.meter, r.enclosure, r.lamp): r.correction_factor
               for r in table.itertuples(index=False)}
    return correct_readings(site.readings, factors, quantity="uvi")
