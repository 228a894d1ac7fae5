"""Reading spectrum files as instruments export them, and refusing bad ones clearly."""

import warnings

import numpy as np
import pytest

from audit_lib.errors import InputError
from audit_lib.light.metrics import weighted_quantities
from audit_lib.light.spectra import Spectrum, SpectrumWarning, read_spectrum, resample_spectrum

DATA = __import__("pathlib").Path(__file__).parent / "data" / "spectra"


def _write(tmp_path, text, name="s.csv", mode="w"):
    path = tmp_path / name
    if mode == "wb":
        path.write_bytes(text)
    else:
        path.write_text(text, encoding="utf-8")
    return path


def test_reads_metadata_header_and_unit_in_brackets():
    """Instrument export: metadata lines, blank line, header with [uW/cm^2/nm]; converted
    with 1 uW/cm² = 0.01 W/m² (SI)."""
    s = read_spectrum(DATA / "demo_uvb_led_308nm.csv")
    assert s.wavelength_nm[0] == 250.0 and s.wavelength_nm[-1] == 800.0
    raw = [ln for ln in (DATA / "demo_uvb_led_308nm.csv").read_text().splitlines()
           if ln.startswith("308.0,")][0]
    assert s.irradiance_w_m2_nm[s.wavelength_nm == 308.0][0] == pytest.approx(
        float(raw.split(",")[1]) * 0.01)


def test_reads_tab_file_with_unit_line():
    """Tab-separated export with a 'Unit:' metadata line."""
    s = read_spectrum(DATA / "demo_uv_tube_t5.tsv")
    assert s.wavelength_nm.size > 200
    assert s.irradiance_w_m2_nm.max() == pytest.approx(0.03, rel=0.05)


def test_reads_semicolon_decimal_comma():
    """Semicolon-separated export with decimal commas and a unit in parentheses."""
    s = read_spectrum(DATA / "demo_uv_compact_lamp.txt")
    assert s.wavelength_nm[1] == pytest.approx(251.0)
    assert s.irradiance_w_m2_nm.max() < 0.1


@pytest.mark.parametrize(("unit", "factor"), [("W/m^2/nm", 1.0), ("mW/m^2/nm", 1e-3),
                                              ("uW/cm^2/nm", 1e-2), ("µW/cm²/nm", 1e-2)])
def test_caller_unit_scales_everything(tmp_path, unit, factor):
    """The same numbers in four units give UVI in the ratio of the SI factors
    (1 mW = 1e-3 W; 1 µW/cm² = 1e-2 W/m²: BIPM SI brochure)."""
    wl = np.arange(280, 401)
    body = "\n".join(f"{w},{0.5 * np.exp(-((w - 305) / 8) ** 2):.6f}" for w in wl)
    path = _write(tmp_path, "wavelength,irradiance\n" + body)
    s = read_spectrum(path, unit=unit)
    base = read_spectrum(path, unit="W/m^2/nm")
    assert float(weighted_quantities(s.wavelength_nm, s.irradiance_w_m2_nm)["uvi"]) == \
        pytest.approx(factor * float(weighted_quantities(base.wavelength_nm,
                                                         base.irradiance_w_m2_nm)["uvi"]))


BAD = {
    "empty": ("", "the file is empty"),
    "no_table": ("just some words\nand more words\n", "no numeric table found"),
    "one_column": ("wavelength\n280\n290\n300\n", "only one column"),
    "text_in_number": ("wavelength,irradiance [W/m^2/nm]\n280,0.1\n290,abc\n300,0.1\n",
                       r"s\.csv:3: irradiance \[W/m\^2/nm\]: 'abc' is not a number"),
    "nan": ("wavelength,irradiance [W/m^2/nm]\n280,0.1\n290,nan\n300,0.1\n",
            r":3: .*'nan' is not a number"),
    "duplicate": ("wavelength,irradiance [W/m^2/nm]\n280,0.1\n280,0.1\n300,0.1\n",
                  r":3: wavelength: wavelength 280 repeats"),
    "decreasing": ("wavelength,irradiance [W/m^2/nm]\n280,0.1\n300,0.1\n290,0.1\n",
                   r":4: wavelength: wavelength 290 is smaller"),
    "micrometres": ("wavelength,irradiance [W/m^2/nm]\n0.28,0.1\n0.30,0.1\n0.40,0.1\n",
                    r"not in nm.*nanometres"),
    "large_negative": ("wavelength,irradiance [W/m^2/nm]\n280,0.1\n290,-0.05\n300,0.1\n",
                       r":3: .*large negative irradiance"),
    "no_unit": ("wavelength,irradiance\n280,0.1\n290,0.1\n", r"unit is not stated.*--unit"),
    "bad_unit": ("wavelength,irradiance [furlongs]\n280,0.1\n290,0.1\n",
                 r"'furlongs' is not a unit of spectral irradiance"),
    "impossible": ("wavelength,irradiance [W/m^2/nm]\n280,12\n290,150\n300,20\n",
                   r":3: .*far above sunlight.*100 times too high"),
}


@pytest.mark.parametrize("case", sorted(BAD))
def test_bad_input_names_file_line_and_problem(tmp_path, case):
    """Every bad-input case of the spectral-core issue gets one clear message naming the
    file (and the line where there is one) with a hint (common practice for data tools)."""
    text, message = BAD[case]
    path = _write(tmp_path, text)
    with pytest.raises(InputError, match=message) as info:
        read_spectrum(path)
    assert str(path) in str(info.value) and "hint:" in str(info.value)


def test_binary_garbage(tmp_path):
    """Binary data is refused, not parsed."""
    path = _write(tmp_path, bytes(range(256)) * 4, mode="wb")
    with pytest.raises(InputError, match="binary"):
        read_spectrum(path)


def test_conflicting_units(tmp_path):
    """A unit in the file and a different one from the caller is an error, not a guess."""
    path = _write(tmp_path, "wavelength,irradiance [uW/cm^2/nm]\n280,1\n290,1\n")
    with pytest.raises(InputError, match="the file says 'uW/cm\\^2/nm' but 'W/m\\^2/nm'"):
        read_spectrum(path, unit="W/m^2/nm")


def test_small_negative_noise_is_clipped_with_warning(tmp_path):
    """Dark-subtracted spectra carry small negative noise near zero; clipped, with a warning
    (common practice)."""
    path = _write(tmp_path, "wavelength,irradiance [W/m^2/nm]\n280,-0.0001\n290,0.1\n300,0.1\n")
    with pytest.warns(SpectrumWarning, match="clipped to zero"):
        s = read_spectrum(path)
    assert s.irradiance_w_m2_nm.min() == 0.0


def test_resample_is_linear_and_zero_outside():
    """Resampling policy: linear inside, zero outside (stated in spectra.py)."""
    s = Spectrum([300.0, 310.0], [1.0, 3.0])
    r = resample_spectrum(s, [295.0, 305.0, 315.0])
    assert r.irradiance_w_m2_nm.tolist() == [0.0, 2.0, 0.0]


def test_spectrum_rejects_unsorted_arrays():
    """The record itself refuses decreasing wavelengths."""
    with pytest.raises(InputError, match="strictly increasing"):
        Spectrum([310.0, 300.0], [1.0, 1.0])


def test_no_warnings_for_clean_file():
    """A clean instrument export reads without warnings."""
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        read_spectrum(DATA / "demo_uv_tube_t5.tsv")


def test_transmittance_fraction_and_percent(tmp_path):
    """A screen's spectral transmittance as a fraction or in percent (definition of
    transmittance, CIE ILV 17-1303: ratio of transmitted to incident flux)."""
    from audit_lib.light.spectra import read_transmittance

    frac = _write(tmp_path, "wavelength,transmittance\n280,0.1\n300,0.5\n400,0.9\n", "f.csv")
    pct = _write(tmp_path, "wavelength,transmittance [%]\n280,10\n300,50\n400,90\n", "p.csv")
    for path in (frac, pct):
        wl, t = read_transmittance(path)
        assert t.tolist() == pytest.approx([0.1, 0.5, 0.9])
    bad = _write(tmp_path, "wavelength,transmittance\n280,10\n300,50\n", "b.csv")
    with pytest.raises(InputError, match=r"b\.csv:2: .*transmittance 10 is outside 0–1.*\[%\]"):
        read_transmittance(bad)
