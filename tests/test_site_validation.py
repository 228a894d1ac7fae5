"""Validation up front and complete (issue 14): every named file read, lamp heights,
refused paths, one message per problem, reserved ids, command-line dates.

Every site here is an invented starter folder with one planted fault.
"""

from __future__ import annotations

import datetime as dt
import re
from pathlib import Path

import pytest

from audit_lib.errors import InputError
from audit_lib.run import batch
from audit_lib.run.cli import main
from audit_lib.site import files
from audit_lib.site.dates import parse_date
from audit_lib.site.folder import check_site, new_site
from audit_lib.site.schema import RESERVED_IDS

TODAY = dt.date(2026, 12, 1)
TRANSMISSION_OK = "wavelength [nm],transmittance [%]\n280,10\n400,90\n"
RESPONSE_OK = "wavelength_nm,relative_response\n280,0.1\n320,1.0\n400,0.01\n"


def _site(tmp_path: Path, *edits: tuple[str, str]) -> Path:
    root = tmp_path / "site"
    new_site(root)
    path = root / "site.toml"
    text = path.read_text()
    for old, new in edits:
        assert old in text, old
        text = text.replace(old, new, 1)
    path.write_text(text)
    return root


GLASS = ('[[enclosures.screens]]\nid = "mesh-top"',
         '[[enclosures.screens]]\nid = "glass-front"\nkind = "glass"\n'
         'transmission_spectrum = "spectra/glass.csv"\n\n[[enclosures.screens]]\nid = "mesh-top"')
RESPONSE = ('# spectral_response = "spectra/uvi-meter-response.csv"',
            'spectral_response = "spectra/uvi-meter-response.csv"')


def test_check_reads_screen_transmission_with_the_audit_reader(tmp_path):
    """A corrupt screen transmission file fails `check`, not the batch: it is read with
    :func:`audit_lib.light.spectra.read_transmittance` (fractions 0-1 or percent; a
    transmittance above 100 % is impossible, common practice)."""
    root = _site(tmp_path, GLASS)
    (root / "spectra" / "glass.csv").write_text("wavelength [nm],transmittance [%]\n280,10\n"
                                                "400,180\n")
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "enclosures[0].screens[0].transmission_spectrum"
    assert re.fullmatch(r"cannot read transmission spectrum: spectra/glass\.csv:3: "
                        r"transmittance \[%\]: transmittance 180 is outside 0–100 %",
                        problem.message)
    (root / "spectra" / "glass.csv").write_text(TRANSMISSION_OK)
    assert check_site(root, today=TODAY) == []


def test_check_reads_meter_response_with_the_audit_reader(tmp_path):
    """A meter response file is read with :func:`audit_lib.light.meters.read_meter_response`
    (the reader the meter correction uses; our own CSV layout)."""
    root = _site(tmp_path, RESPONSE)
    (root / "spectra" / "uvi-meter-response.csv").write_text("wl,resp\n280,0.1\n")
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "meters[0].spectral_response"
    assert problem.message.startswith("cannot read meter response: "
                                      "spectra/uvi-meter-response.csv:1: header is 'wl,resp'")
    assert problem.hint == "the first row must be wavelength_nm,relative_response"
    (root / "spectra" / "uvi-meter-response.csv").write_text(RESPONSE_OK)
    assert check_site(root, today=TODAY) == []


def test_check_reads_the_logo_with_the_report_reader(tmp_path):
    """The logo is checked by the reader the reports embed it with (PNG, JPEG, GIF, SVG:
    the image types every browser shows; common practice)."""
    root = _site(tmp_path, ('# logo = "logo.png"', 'logo = "logo.bmp"'))
    (root / "logo.bmp").write_bytes(b"BM")
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "site.logo"
    assert re.match(r"cannot read logo: logo\.bmp: logo must be a PNG, JPEG, GIF or SVG",
                    problem.message)


def test_refused_path_is_reported_once_and_never_opened(tmp_path, monkeypatch):
    """A path leaving the site folder is refused without being read (common practice for
    untrusted paths: resolve, then check containment before any open)."""
    opened = []
    monkeypatch.setitem(files.READERS, "spectrum", ("spectrum", opened.append))
    root = _site(tmp_path, ('# spectrum = "spectra/uvb-tube-60cm.csv"',
                            'spectrum = "../outside.csv"'))
    (tmp_path / "outside.csv").write_text("wavelength,irradiance\n300,1\n301,2\n")
    (problem,) = check_site(root, today=TODAY)
    assert problem.message == "file '../outside.csv' lies outside the site folder"
    assert opened == []


def test_hint_is_printed_once(tmp_path, capsys):
    """One message per problem: a reader's hint is not repeated (issue 14)."""
    root = _site(tmp_path, ('# spectrum = "spectra/uvb-tube-60cm.csv"',
                            'spectrum = "spectra/uvb-tube-60cm.csv"'))
    (root / "spectra" / "uvb-tube-60cm.csv").write_text("wavelength,irradiance\n300,1\n301,2\n")
    assert main(["check", str(root)]) == 2
    err = capsys.readouterr().err
    assert err.count("hint:") == 1
    assert "cannot read spectrum: spectra/uvb-tube-60cm.csv:2: the irradiance unit" in err


LAMP_Z = "z_m = 0.6                         # height above the floor"


@pytest.mark.parametrize(("z", "pattern"), [
    ("-0.2", r"lamp 'tube-1' is mounted at -0.2 m, at or below the floor"),
    ("0", r"lamp 'tube-1' is mounted at 0 m, at or below the floor"),
    ("1.2", r"lamp 'tube-1' is mounted at 1.2 m, more than 0.3 m above the enclosure's top"),
    ("0.25", r"lamp 'tube-1' at 0.25 m is not above basking surface 'basking' at 0.25 m: "
             r"it cannot light its top"),
])
def test_lamp_height_inside_the_enclosure_and_above_the_basking_surface(tmp_path, z, pattern):
    """A lamp hangs above the floor, inside the box or just on its lid, and above every
    basking surface: a source at or below a horizontal surface's plane gives it no
    irradiance (Lambert's cosine law: incidence cosine <= 0; any optics handbook)."""
    root = _site(tmp_path, (LAMP_Z, f"z_m = {z}"))
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "enclosures[0].lamps[0].z_m"
    assert re.fullmatch(pattern, problem.message)
    assert problem.hint


def test_lamp_resting_on_the_lid_is_accepted(tmp_path):
    """A fitting on a mesh lid sits a little above height_m (common practice)."""
    root = _site(tmp_path, (LAMP_Z, "z_m = 0.65"))
    assert check_site(root, today=TODAY) == []


def test_position_above_the_enclosure_is_refused(tmp_path):
    """Measuring positions lie inside the box, z included (enclosure frame, z up)."""
    root = _site(tmp_path, ("[[enclosures.lamps]]", '[[enclosures.positions]]\nid = "shelf"\n'
                            "x_m = 0.2\ny_m = 0.2\nz_m = 0.8\n\n[[enclosures.lamps]]"))
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "enclosures[0].positions[0]"
    assert problem.message == "position 'shelf' lies outside the enclosure"


@pytest.mark.parametrize("reserved", ["site-overview", "index"])
def test_reserved_report_names_cannot_be_enclosure_ids(tmp_path, reserved):
    """An enclosure id becomes a report file name and a results.json entry; the batch's own
    pages keep theirs (our contract, docs/batch-reports.md)."""
    root = _site(tmp_path, ('id = "viv-1"', f'id = "{reserved}"'))
    (root / "readings" / "first-audit.csv").unlink()
    (problem,) = check_site(root, today=TODAY)
    assert problem.field == "enclosures[0].id"
    assert problem.message == f"enclosure id {reserved!r} is reserved for the batch run's own pages"


def test_the_batch_overview_id_is_reserved():
    """The overview's id is one of the names the site format refuses."""
    assert batch.OVERVIEW_ID in RESERVED_IDS


@pytest.mark.parametrize(("text", "pattern"), [
    ("15/01/2026", r"'15/01/2026' is not a date in YYYY-MM-DD form"),
    ("2026-13-01", r"'2026-13-01' is not a date: month must be in 1..12"),
    ("2026-02-30", r"'2026-02-30' is not a date: day is out of range for month"),
    ("20260115", r"'20260115' is not a date in YYYY-MM-DD form"),
])
def test_one_date_parser_accepts_only_calendar_dates(text, pattern):
    """ISO 8601 calendar dates, extended format YYYY-MM-DD; nothing guessed."""
    with pytest.raises(InputError, match=pattern):
        parse_date(text, field="--date")
    assert parse_date("2026-01-15") == dt.date(2026, 1, 15)
    assert parse_date("2026-01-15 00:00:00") == dt.date(2026, 1, 15)


def test_run_with_a_bad_date_exits_2_before_any_work(tmp_path, capsys, monkeypatch):
    """`run --audit-date 15/01/2026`: exit 2 (POSIX usage error), no traceback, no kernel
    started, nothing written."""
    monkeypatch.setattr(batch, "_start_pool", lambda *a: pytest.fail("kernels started"))
    root = _site(tmp_path)
    out = tmp_path / "out"
    assert main(["run", str(root), "--out", str(out), "--audit-date", "15/01/2026"]) == 2
    err = capsys.readouterr().err
    assert "argument --audit-date: '15/01/2026' is not a date in YYYY-MM-DD form" in err
    assert "Traceback" not in err
    assert not out.exists()
    assert not (root / "history.sqlite").exists()
    with pytest.raises(InputError, match=r"audit_date: '15/01/2026' is not a date"):
        batch.run_batch(root, out, audit_date="15/01/2026", progress=False)
    assert not out.exists()


def test_forecast_with_a_bad_date_exits_2_without_a_traceback(tmp_path, capsys):
    """`forecast --date 2026-13-01`: exit 2, the message names the option; nothing written."""
    root = _site(tmp_path)
    assert main(["forecast", str(root), "--date", "2026-13-01"]) == 2
    err = capsys.readouterr().err
    assert "argument --date: '2026-13-01' is not a date: month must be in 1..12" in err
    assert "Traceback" not in err
    assert not (root / "history.sqlite").exists()
