"""Validation of site folders: every planted problem is reported, with file, line and hint."""

from __future__ import annotations

import datetime as dt
import re
import shutil
from pathlib import Path

import pytest

from audit_lib.errors import InputErrors
from audit_lib.run.cli import main
from audit_lib.site.folder import check_site, load_site, new_site
from audit_lib.site.messages import locate_keys

BROKEN = Path(__file__).parent / "data" / "broken_site"
TODAY = dt.date(2026, 12, 1)

#: (file, line, field, message pattern) of every problem planted in tests/data/broken_site.
PLANTED = [
    ("site.toml", 9, "site.time_zone", r"unknown time zone 'Europe/Londres'"),
    ("site.toml", 15, "meters[0].calibraton_date", r"unknown key 'calibraton_date'"),
    ("site.toml", 23, "meters[2].type", r"Input should be 'uv_index_meter'"),
    ("site.toml", 29, "lamp_models[0].length", r"unit 'lx' is not a unit of length"),
    ("site.toml", 38, "lamp_models[1].reference.distance", r"unit 'zorks' is not recognised"),
    ("site.toml", 45, "lamp_models[2].spectrum", r"file 'spectra/not-there.csv' does not exist"),
    ("site.toml", 60, "enclosures[0].species[0]", r"no species with id 'unknown-lizard'"),
    ("site.toml", 72, "enclosures[0].lamps[0].model", r"no lamp model with id 'uvb-tube-90cm'"),
    ("site.toml", 76, "enclosures[0].lamps[0].installed", r"install date 2099-09-01 is in"),
    ("site.toml", 77, "enclosures[0].lamps[0].schedule", r"no schedule with id 'night'"),
    ("site.toml", 87, "enclosures[0].lamps[1].failed_emitters", r"no emitter number 9"),
    ("site.toml", 90, "enclosures[1].id", r"duplicate enclosure id 'viv-1'"),
    ("site.toml", 97, "enclosures[2].id", r"'Viv 3/../x' is not a safe id"),
    ("site.toml", 103, "enclosures[3].depth_m", r"required key is missing"),
    ("site.toml", 106, "enclosures[3].width_m", r"valid number"),
    ("audit.csv", 4, "enclosure", r"no enclosure with id 'viv-9'"),
    ("audit.csv", 5, "lamp", r"no lamp in enclosure 'viv-1' with id 'tube-7'"),
    ("audit.csv", 6, "position", r"no position in enclosure 'viv-1' with id 'shelf'"),
    ("audit.csv", 7, "date", r"date 2099-01-15 is in the future"),
    ("audit.csv", 8, "value", r"negative reading -0.4"),
    ("audit.csv", 9, "value", r"uvi of 41 is above 25"),
    ("audit.csv", 10, "value", r"uvb_w_m2 of 150 is above 30"),
    ("audit.csv", 11, "unit", r"unit 'uW/cm\^2' is not a unit of illuminance"),
    ("audit.csv", 12, "quantity", r"unknown quantity 'uvc'"),
    ("audit.csv", 13, "meter", r"no meter with id 'uvi-meter-x'"),
    ("audit.csv", 14, "date", r"'15/01/2026' is not a date in YYYY-MM-DD form"),
    ("audit.csv", 15, "value", r"'two' is not a number"),
    ("audit.csv", 16, None, r"14 fields where the header has 13"),
    ("audit.csv", 17, "x_m", r"give x_m, y_m and z_m together"),
    ("audit.csv", 18, "x_m", r"point \(2.4, 0.3, 0.1\) m lies outside the enclosure"),
    ("audit.csv", 19, "distance_m", r"distance -0.3 m is not positive"),
    ("audit.csv", 20, "meter", r"a lux_meter does not measure uvi"),
]


def test_broken_site_reports_every_planted_problem_and_nothing_else():
    """Each planted error is found once, with file, line, key path and message.

    Sources: TOML v1.0.0 (toml.io) for key paths and tables; RFC 4180 for CSV rows;
    ISO 8601 for dates; the IANA time zone database (PEP 615 ``zoneinfo``); SI units
    (NIST SP 811) for the unit checks.
    """
    problems = check_site(BROKEN, today=TODAY)
    found = [(Path(p.path).name, p.line, p.field, p.message) for p in problems]
    for name, line, field, pattern in PLANTED:
        hits = [f for f in found
                if f[0] == name and f[1] == line and f[2] == field and re.search(pattern, f[3])]
        assert len(hits) == 1, (name, line, field, pattern, found)
    assert len(problems) == len(PLANTED), [str(p) for p in problems]
    assert all(p.hint for p in problems if "Input should be" not in p.message)


def test_load_site_raises_all_problems_at_once():
    """load_site refuses an invalid site and names every problem (common practice: report all)."""
    with pytest.raises(InputErrors, match=r"(?s)Europe/Londres.*calibraton_date.*'two'") as info:
        load_site(BROKEN, today=TODAY)
    assert len(info.value.problems) == len(PLANTED)


def test_check_command_prints_problems_and_exits_2(capsys):
    """`light-audit check` exits 2 on an invalid site (POSIX usage-error convention)."""
    assert main(["check", str(BROKEN)]) == 2
    err = capsys.readouterr().err
    assert re.search(r"site\.toml:76: enclosures\[0\]\.lamps\[0\]\.installed: install date", err)
    assert "problem(s) found; nothing was computed" in err


def _site_with(tmp_path: Path, old: str, new: str) -> Path:
    root = tmp_path / "site"
    new_site(root)
    path = root / "site.toml"
    text = path.read_text()
    assert old in text
    path.write_text(text.replace(old, new, 1))
    return root


def test_unknown_key_hint_names_the_closest_key(tmp_path):
    """A misspelt key gets a did-you-mean hint (difflib, Python standard library)."""
    root = _site_with(tmp_path, "asymmetry = 0.5", "asymetry = 0.5")
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "lamp_models[0].bands[0].asymetry"
    assert re.search(r"did you mean 'asymmetry'\?", problem.hint)
    assert problem.line == locate_keys((root / "site.toml").read_text())[problem.field]


def test_number_without_unit_is_refused(tmp_path):
    """'length = 60' could be cm or m: a unit is required (design.md, units rule; NIST SP 811)."""
    root = _site_with(tmp_path, 'length = "60 cm"', "length = 60")
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "lamp_models[0].length"
    assert problem.message == "a number without a unit"
    assert 'length = "60 <unit>"' in problem.hint


def test_key_given_twice_with_and_without_unit(tmp_path):
    """One quantity, one key: 'length' and 'length_m' together are an error (common practice)."""
    root = _site_with(tmp_path, 'length = "60 cm"', 'length = "60 cm"\nlength_m = 0.6')
    (problem,) = check_site(root, today=TODAY)
    assert re.search(r"give either 'length' or 'length_m', not both", problem.message)


def test_mesh_needs_wire_smaller_than_pitch(tmp_path):
    """Mesh open-area transmission (1 - d/p)^2 needs d < p (geometry; Burger et al. 2007)."""
    root = _site_with(tmp_path, 'wire_diameter = "0.8 mm"', 'wire_diameter = "5 mm"')
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "enclosures[0].screens[0]"
    assert problem.message == "mesh wire diameter must be smaller than the pitch"


def test_time_budget_over_one_and_unknown_place(tmp_path):
    """Time-budget shares are fractions of the day: they add up to at most 1 (common practice)."""
    root = _site_with(tmp_path, "time_budget = { basking = 0.3, floor = 0.5, hide = 0.2 }",
                      "time_budget = { basking = 0.6, floor = 0.5, attic = 0.2 }")
    messages = sorted(p.message for p in check_site(root, today=TODAY))
    assert messages == ["no surface or position with id 'attic'",
                        "time budget shares add up to more than 1"]


def test_file_outside_the_site_folder_is_refused(tmp_path):
    """Paths in a site file stay inside the folder (common practice for untrusted paths)."""
    root = _site_with(tmp_path, '# spectrum = "spectra/uvb-tube-60cm.csv"',
                      'spectrum = "../elsewhere.csv"')
    (tmp_path / "elsewhere.csv").write_text("wavelength,irradiance [W/m^2/nm]\n300,1\n301,1\n")
    (problem,) = check_site(root, today=TODAY)
    assert problem.message == "file '../elsewhere.csv' lies outside the site folder"


def test_unreadable_spectrum_file_is_reported(tmp_path):
    """A named spectrum is read with the spectral core's reader; its error is passed on."""
    root = _site_with(tmp_path, '# spectrum = "spectra/uvb-tube-60cm.csv"',
                      'spectrum = "spectra/uvb-tube-60cm.csv"')
    (root / "spectra" / "uvb-tube-60cm.csv").write_text("wavelength,irradiance\n300,1\n301,1\n")
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "lamp_models[0].spectrum"
    assert re.search(r"cannot read spectrum: .*unit is not stated", problem.message)


def test_toml_syntax_error_names_the_line(tmp_path):
    """A TOML syntax error is reported with its line (TOML v1.0.0; Python tomllib)."""
    root = _site_with(tmp_path, 'name = "My collection"', 'name = "My collection')
    (problem,) = check_site(root, today=TODAY)
    assert problem.message.startswith("not valid TOML")
    assert problem.line == 9


def test_missing_site_file(tmp_path):
    """An empty folder is not a site; the hint names the command that makes one."""
    (problem,) = check_site(tmp_path)
    assert re.search(r"no site.toml in this folder", problem.message)
    assert "light-audit new-site" in problem.hint


def test_locate_keys_follows_arrays_of_tables():
    """Arrays of tables count from 0 per parent (TOML v1.0.0, section 'Array of Tables')."""
    text = "\n".join([
        "format_version = 1",           # 1
        "[[a]]",                        # 2
        "id = 'x'",                     # 3
        "[[a.b]]",                      # 4
        "k = 1",                        # 5
        "[[a]]",                        # 6
        "[[a.b]]",                      # 7
        "[[a.b]]",                      # 8
        "k = 2",                        # 9
        "[c]",                          # 10
        "d = { e = 1 }",                # 11
    ])
    lines = locate_keys(text)
    assert lines["a[0].id"] == 3
    assert lines["a[0].b[0].k"] == 5
    assert lines["a[1]"] == 6
    assert lines["a[1].b[1].k"] == 9
    assert lines["c.d"] == 11


def test_site_and_broken_copy_are_independent(tmp_path):
    """Copying the broken fixture gives the same report (no state outside the folder)."""
    copy = tmp_path / "copy"
    shutil.copytree(BROKEN, copy)
    assert len(check_site(copy, today=TODAY)) == len(PLANTED)


def test_site_file_not_utf8(tmp_path):
    """TOML files are UTF-8 (TOML v1.0.0, 'Spec'): other encodings are refused clearly."""
    (tmp_path / "site.toml").write_bytes('name = "Caf\u00e9"\n'.encode("latin-1"))
    (problem,) = check_site(tmp_path)
    assert re.search(r"not UTF-8 text", problem.message)
