"""Tests of site-level meter corrections (audit_lib.pipeline.meter_corrections)."""

import numpy as np
import pytest

from audit_lib.light.action_spectra import erythema_cie1998
from audit_lib.pipeline.meter_corrections import correct_site_readings, site_meter_corrections
from audit_lib.site.folder import load_site, new_site


def _site_with_response(tmp_path, response):
    root = tmp_path / "site"
    new_site(root)
    wl = np.arange(250.0, 401.0, 1.0)
    rows = "\n".join(f"{w:g},{r:.8g}" for w, r in zip(wl, response(wl), strict=True))
    (root / "spectra" / "uvi-meter-response.csv").write_text(
        "# relative spectral response\nwavelength_nm,relative_response\n" + rows + "\n")
    toml = root / "site.toml"
    toml.write_text(toml.read_text().replace(
        '# spectral_response = "spectra/uvi-meter-response.csv"',
        'spectral_response = "spectra/uvi-meter-response.csv"'))
    return load_site(root)


def test_ideal_meter_readings_are_unchanged(tmp_path):
    """A meter whose response is the erythema action spectrum (ISO 17166 / CIE S 007) has
    F* = 1 under any lamp (CIE S 017:2020 17-25-115), so corrected = raw. Within 0.3 %:
    the response file is tabulated at 1 nm and interpolated linearly onto the finer grid
    of the sun and lamp spectra, where the exact erythema function is evaluated."""
    site = _site_with_response(tmp_path, erythema_cie1998)
    table = site_meter_corrections(site)
    assert len(table) == 1 and table.loc[0, "lamp"] == "tube-1"
    assert table.loc[0, "correction_factor"] == pytest.approx(1.0, abs=3e-3)
    out = correct_site_readings(site)
    np.testing.assert_allclose(out["value_si_corrected"], out["value_si_raw"], rtol=3e-3)


def test_mismatched_meter_readings_are_scaled(tmp_path):
    """A flat UVB-UVA response calibrated on the ASTM G173 sun gives F* != 1 under a
    phosphor tube, and corrected = F* x raw (CIE S 017:2020 17-25-115)."""
    site = _site_with_response(tmp_path, lambda wl: np.where(wl >= 280, 1.0, 0.0))
    factor = site_meter_corrections(site).loc[0, "correction_factor"]
    assert factor > 0 and abs(factor - 1) > 0.05
    out = correct_site_readings(site)
    np.testing.assert_allclose(out["value_si_corrected"], factor * out["value_si_raw"])
