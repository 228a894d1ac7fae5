"""The `light-audit spectrum` command: JSON keys, units, exit status 2 on bad input."""

import json
import subprocess
import sys

import numpy as np
import pytest

from audit_lib.run.cli import main

from .test_spectra import BAD, DATA

KEYS = ["uvi", "uvi_category", "uvc_w_m2", "uvb_w_m2", "uva_w_m2", "uva1_w_m2", "uva2_w_m2",
        "erythemal_w_m2", "vitamin_d_w_m2", "actinic_w_m2", "keeper_limit_s", "risk_group",
        "illuminance_lux", "cct_k", "short_uvb_fraction", "vitd_to_erythemal_ratio",
        "sun_vitd_to_erythemal_ratio", "peak_nm", "fwhm_nm", "asymmetry"]


def _json(capsys, *argv):
    assert main(["spectrum", *map(str, argv), "--json"]) == 0
    return json.loads(capsys.readouterr().out)


def test_json_has_every_key(capsys):
    """The keys promised by the spectral-core issue, in SI units."""
    result = _json(capsys, DATA / "demo_uv_tube_t5.tsv")
    assert set(KEYS) <= set(result)
    assert result["cct_k"] is not None and result["illuminance_lux"] > 0


@pytest.mark.parametrize("unit", ["W/m^2/nm", "mW/m^2/nm", "uW/cm^2/nm", "µW/cm²/nm"])
def test_same_light_in_every_unit(tmp_path, capsys, unit):
    """One Gaussian UVB line written out in each accepted unit gives the same UVI, checked
    against a plain numpy trapezoid with the ISO 17166 formula (independent computation)."""
    wl = np.arange(270.0, 420.0, 1.0)
    e_si = 0.02 * np.exp(-0.5 * ((wl - 303) / 6) ** 2)
    factor = {"W/m^2/nm": 1, "mW/m^2/nm": 1e3, "uW/cm^2/nm": 100, "µW/cm²/nm": 100}[unit]
    path = tmp_path / "line.csv"
    path.write_text("wavelength_nm,value\n" + "\n".join(
        f"{w:g},{v * factor:.9g}" for w, v in zip(wl, e_si, strict=True)), encoding="utf-8")
    s_er = np.where(wl <= 298, 1.0, np.where(wl <= 328, 10 ** (0.094 * (298 - wl)),
                                             10 ** (0.015 * (140 - wl))))
    s_er[(wl < 250) | (wl > 400)] = 0
    expected = 40 * np.trapezoid(e_si * s_er, wl)
    result = _json(capsys, path, "--unit", unit)
    assert result["uvi"] == pytest.approx(expected, rel=0.01)
    assert result["uvb_w_m2"] == pytest.approx(
        np.trapezoid(e_si[(wl >= 280) & (wl <= 315)], wl[(wl >= 280) & (wl <= 315)]), rel=0.01)


def test_table_output(capsys):
    """Without --json a readable table is printed."""
    assert main(["spectrum", str(DATA / "demo_uv_compact_lamp.txt")]) == 0
    out = capsys.readouterr().out
    assert "UV Index" in out and "Correlated colour temperature" in out


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_input_exits_2_naming_the_file(tmp_path, capsys, case):
    """Exit status 2 and one message with the file name for every bad-input case."""
    path = tmp_path / f"{case}.csv"
    path.write_text(BAD[case][0], encoding="utf-8")
    assert main(["spectrum", str(path)]) == 2
    err = capsys.readouterr().err
    assert str(path) in err and "Traceback" not in err


def test_console_script_never_prints_a_traceback(tmp_path):
    """The installed command in a fresh process: exit 2, message, no traceback."""
    path = tmp_path / "garbage.csv"
    path.write_bytes(b"\x00\x01\x02binary")
    run = subprocess.run([sys.executable, "-m", "audit_lib.run.cli", "spectrum", str(path)],
                         capture_output=True, text=True, check=False)
    assert run.returncode == 2
    assert "garbage.csv" in run.stderr and "Traceback" not in run.stderr


def test_missing_file_exits_2(tmp_path, capsys):
    """A path that does not exist is bad input too."""
    assert main(["spectrum", str(tmp_path / "nope.csv")]) == 2
    assert "nope.csv" in capsys.readouterr().err


def test_risk_group_needs_the_measurement_distance(capsys):
    """IEC 62471 states the risk group at 200 mm (from memory): with --distance the spectrum
    is moved there by the inverse-square law and classified; without it the group is null and
    the table says why."""
    moved = _json(capsys, DATA / "demo_uv_tube_t5.tsv", "--distance", "40 cm")
    assert moved["risk_group_distance_m"] == 0.2
    assert moved["measurement_distance_m"] == pytest.approx(0.4)
    assert moved["actinic_w_m2_at_distance"] == pytest.approx(4 * moved["actinic_w_m2"])
    assert moved["risk_group"] in ("exempt", "risk group 1", "risk group 2", "risk group 3")
    assert _json(capsys, DATA / "demo_uv_tube_t5.tsv", "--distance", "0.4") == moved
    unknown = _json(capsys, DATA / "demo_uv_tube_t5.tsv")
    assert unknown["risk_group"] is None and unknown["risk_group_distance_m"] is None
    assert main(["spectrum", str(DATA / "demo_uv_tube_t5.tsv")]) == 0
    assert "no risk group: IEC 62471 states it at 200 mm" in capsys.readouterr().out
    assert main(["spectrum", str(DATA / "demo_uv_tube_t5.tsv"), "--distance", "30 cm"]) == 0
    assert "inverse-square law, an assumption" in capsys.readouterr().out
    assert main(["spectrum", str(DATA / "demo_uv_tube_t5.tsv"), "--distance", "far"]) == 2
    assert "--distance" in capsys.readouterr().err
