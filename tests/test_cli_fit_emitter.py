"""The `light-audit fit-emitter` command."""

import json

import numpy as np
import pytest

from audit_lib.run.cli import main
from audit_lib.sources.emitters import line_shape


def _write(path, wl, values, unit="W/m^2/nm"):
    lines = [f"wavelength_nm,irradiance [{unit}]"]
    lines += [f"{w:.1f},{v:.8g}" for w, v in zip(wl, values, strict=True)]
    path.write_text("\n".join(lines) + "\n")


def test_fit_emitter_recovers_a_synthetic_line(tmp_path, capsys):
    """A synthetic split-Gaussian line (the default shape; the issue's definitions of FWHM and
    asymmetry),
    written in uW/cm^2/nm, is read with its unit and fitted back."""
    wl = np.arange(260.0, 360.0, 0.5)
    values_w = 0.01 * line_shape(wl, 306.0, 11.0, 1.25)
    path = tmp_path / "uvb_led.csv"
    _write(path, wl, values_w * 100.0, unit="uW/cm^2/nm")  # 1 W/m^2 = 100 uW/cm^2
    assert main(["fit-emitter", str(path), "--json"]) == 0
    fit = json.loads(capsys.readouterr().out)
    assert fit["peak_nm"] == pytest.approx(306.0, abs=0.01)
    assert fit["fwhm_nm"] == pytest.approx(11.0, rel=1e-3)
    assert fit["asymmetry"] == pytest.approx(1.25, rel=1e-3)
    assert fit["amplitude"] == pytest.approx(0.01, rel=1e-3)
    assert main(["fit-emitter", str(path)]) == 0
    assert "fit residual (RMS)" in capsys.readouterr().out


def test_fit_emitter_bad_shape_exits_2(tmp_path, capsys):
    wl = np.arange(280.0, 330.0, 1.0)
    path = tmp_path / "line.csv"
    _write(path, wl, line_shape(wl, 305, 10))
    assert main(["fit-emitter", str(path), "--shape", "voigt"]) == 2
    assert "unknown line shape 'voigt'" in capsys.readouterr().err
