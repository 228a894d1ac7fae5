"""Site folders: loading, unit strings, round trip, starting folder, and the demo sites."""

from __future__ import annotations

import datetime as dt
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from audit_lib.errors import InputError
from audit_lib.run.cli import main
from audit_lib.site.folder import check_site, load_site, new_site, save_site

SAMPLES = Path(__file__).resolve().parent.parent / "sample_sites"
PARK = SAMPLES / "kestrel-moor-wildlife-park"
CLIENT = SAMPLES / "ashdown-private-collection"
#: Ferguson et al. 2010, Zoo Biology 29:317-334: maximum UVI range per zone (FROM MEMORY,
#: as in audit_lib/data/ferguson_zones.csv).
ZONE_MAX_UVI = {1: (0.6, 1.4), 2: (1.1, 3.0), 3: (2.9, 7.4), 4: (4.5, 9.5)}


@pytest.fixture(scope="module")
def park():
    return load_site(PARK)


def test_new_site_is_valid_and_converts_unit_strings(tmp_path):
    """The starter file's '60 cm', '0.8 mm', '40 cm' become metres (SI; NIST SP 811 §B.8)."""
    new_site(tmp_path / "s")
    site = load_site(tmp_path / "s")
    assert site.lamp_model("uvb-tube-60cm").length_m == pytest.approx(0.6)
    assert site.lamp_model("uvb-tube-60cm").reference.distance_m == pytest.approx(0.3)
    enclosure = site.enclosure("viv-1")
    assert enclosure.screens[0].wire_diameter_m == pytest.approx(0.0008)
    assert enclosure.screens[0].pitch_m == pytest.approx(0.004)
    assert enclosure.keeper_working_distance_m == pytest.approx(0.4)
    assert len(site.readings) == 2


def test_new_site_refuses_to_overwrite(tmp_path):
    """Starting a site never overwrites one (common practice)."""
    new_site(tmp_path)
    with pytest.raises(InputError, match=r"site.toml already exists here"):
        new_site(tmp_path)


def test_new_site_command(tmp_path, capsys):
    """`light-audit new-site DIR` writes a folder that `check` accepts (exit 0)."""
    assert main(["new-site", str(tmp_path / "n")]) == 0
    assert main(["check", str(tmp_path / "n")]) == 0
    assert "My collection: valid; 1 enclosures" in capsys.readouterr().out


@pytest.mark.parametrize("root", [PARK, CLIENT], ids=["park", "client"])
def test_sample_sites_pass_check(root, capsys):
    """Both demo sites are valid: `light-audit check` exits 0 with a one-line summary."""
    assert check_site(root) == []
    assert main(["check", str(root)]) == 0
    out = capsys.readouterr().out.strip().splitlines()
    assert len(out) == 1 and ": valid;" in out[0]


@pytest.mark.parametrize("root", [PARK, CLIENT], ids=["park", "client"])
def test_save_and_load_round_trip(root, tmp_path):
    """save_site then load_site gives the same records and readings (TOML v1.0.0 via tomli-w)."""
    site = load_site(root)
    save_site(site, tmp_path / "copy")
    again = load_site(tmp_path / "copy")
    assert again.records == site.records
    pd.testing.assert_frame_equal(again.readings, site.readings)
    # and saving the copy again changes nothing
    first = (tmp_path / "copy" / "site.toml").read_text()
    save_site(again, tmp_path / "copy")
    assert (tmp_path / "copy" / "site.toml").read_text() == first


def test_lookup_of_unknown_id_names_the_known_ones(park):
    """Looking up a missing id is an InputError listing the valid ids (convention: name choices)."""
    with pytest.raises(InputError, match=r"no enclosure with id 'rh-99' \(hint: known: rh-01"):
        park.enclosure("rh-99")


def test_park_covers_what_the_demo_must_show(park):
    """Demo coverage: >= 10 enclosures, all four Ferguson zones (Ferguson et al. 2010), LED
    arrays, tubes, a point lamp, mesh screens, three yearly audits."""
    records = park.records
    assert len(records.enclosures) >= 10
    zones = {park.species(s).zone for e in records.enclosures for s in e.species}
    assert zones == {1, 2, 3, 4}
    kinds = {park.lamp_model(lp.model).kind for e in records.enclosures for lp in e.lamps}
    assert {"led_array", "tube", "point", "from_readings"} <= kinds
    assert any(s.kind == "mesh" for e in records.enclosures for s in e.screens)
    assert sorted(park.readings["date"].dt.year.unique()) == [2024, 2025, 2026]
    assert all("demo data" in s.note for s in records.species)


def _basking_uvi(site, year: int) -> dict[str, float]:
    r = site.readings
    sel = r[(r["quantity"] == "uvi") & (r["date"].dt.year == year)]
    out = {}
    for enc in site.records.enclosures:
        basking = next(s.id for s in enc.surfaces if s.kind == "basking")
        rows = sel[(sel["enclosure"] == enc.id) & (sel["position"] == basking)]
        out[enc.id] = float(rows["value_si"].iloc[0])
    return out


def test_park_readings_meet_zones_except_the_planted_problems(park):
    """2026 basking UVI within the zone's maximum range (Ferguson et al. 2010, values from
    memory) everywhere but the lamp too close (rh-02, above) and the decayed lamp (rh-05)."""
    uvi = _basking_uvi(park, 2026)
    for enc in park.records.enclosures:
        low, high = ZONE_MAX_UVI[park.species(enc.species[0]).zone]
        if enc.id == "rh-02":
            assert uvi[enc.id] > high
        elif enc.id == "rh-05":
            assert uvi[enc.id] < low
        else:
            assert low <= uvi[enc.id] <= high, (enc.id, uvi[enc.id], low, high)


def test_park_decayed_tube_loses_output_year_on_year(park):
    """The never-replaced T8 tube (rh-05) reads lower at each audit: fluorescent UVB tubes
    lose roughly a quarter of their UV a year (common practice; demo assumption)."""
    r = park.readings
    checks = r[(r["enclosure"] == "rh-05") & (r["distance_m"] > 0)].sort_values("date")
    values = checks["value_si"].to_numpy()
    assert len(values) == 3
    assert np.all(np.diff(values) < 0)
    assert values[-1] / values[0] == pytest.approx(0.75**2, rel=0.2)


def test_park_failed_emitter_shows_in_2026_only(park):
    """Under the failed emitter of rh-09 the 2026 reading drops far more than the panel's decay
    (LED decay ~8 %/year, demo assumption; superposition of emitter contributions)."""
    r = park.readings
    rows = r[(r["enclosure"] == "rh-09") & (r["quantity"] == "uvi")]
    rows = rows.assign(year=rows["date"].dt.year)
    under = rows[rows["position"] == "under-uvb300-3"].set_index("year")
    basking = rows[rows["position"] == "basking"].set_index("year")
    drop_under = under.loc[2026, "value_si"] / under.loc[2024, "value_si"]
    drop_basking = basking.loc[2026, "value_si"] / basking.loc[2024, "value_si"]
    assert drop_under < 0.9 * drop_basking
    assert under.loc[2025, "value_si"] / under.loc[2024, "value_si"] > 0.85
    assert park.enclosure("rh-09").lamps[0].failed_emitters == [3]


def test_park_enclosure_without_refuge(park):
    """rh-08 has no place at or below UVI 0.5 (refuge threshold, common practice as in
    audit_lib.judge.targets.REFUGE_UVI_MAX) while the other enclosures have one."""
    r = park.readings
    sel = r[(r["quantity"] == "uvi") & (r["position"] != "") & (r["date"].dt.year == 2026)]
    lowest = sel.groupby("enclosure")["value_si"].min()
    assert lowest["rh-08"] > 1.0
    assert (lowest.drop("rh-08") <= 0.5).all()


def test_park_spectra_files_read_and_match_their_reference(park):
    """The instrument-style spectrum files read with the spectral core and give the model's
    reference UVI (UVI = 40 m2/W x erythemal irradiance; WHO 2002, CIE S 007/E-1998)."""
    from audit_lib.light.metrics import weighted_quantities
    from audit_lib.light.spectra import read_spectrum

    for model_id in ("flood-uvb-100w", "t5-uvb-115cm"):
        model = park.lamp_model(model_id)
        spectrum = read_spectrum(park.path_of(model.spectrum))
        uvi = float(weighted_quantities(spectrum.wavelength_nm,
                                        spectrum.irradiance_w_m2_nm)["uvi"])
        assert uvi == pytest.approx(model.reference.uvi, rel=0.02)
    files = sorted(p.name for p in (PARK / "spectra").glob("*.csv"))
    assert "rh-05_t8-tube_2026-03-10.csv" in files


def test_client_site_uses_a_different_layout():
    """The client site shows the same format written differently: xlsx readings, unit strings,
    inline tables, daily hours (format documented in docs/site-format.md)."""
    text = (CLIENT / "site.toml").read_text()
    assert 'width = "120 cm"' in text and "[[schedules]]" not in text
    site = load_site(CLIENT)
    assert set(site.readings["source_file"].str.rsplit(".", n=1).str[-1]) == {"xlsx"}
    assert site.enclosure("dragon-viv").width_m == pytest.approx(1.2)
    assert len(site.records.enclosures) == 3
    assert site.records.site.client


def test_dates_in_the_future_depend_on_today(tmp_path):
    """'Future' is relative to the day of the check (ISO 8601 calendar dates)."""
    new_site(tmp_path)
    assert check_site(tmp_path, today=dt.date(2026, 1, 15)) == []
    problems = check_site(tmp_path, today=dt.date(2026, 1, 14))
    assert [p.field for p in problems] == ["date", "date"]


def test_site_file_path_is_accepted_for_its_folder(tmp_path):
    """Giving site.toml instead of its folder loads the same site (common practice)."""
    new_site(tmp_path)
    assert load_site(tmp_path / "site.toml").records == load_site(tmp_path).records


def _keys(value, skip=("time_budget",)):
    if isinstance(value, dict):
        for key, item in value.items():
            yield key
            if key not in skip:
                yield from _keys(item)
    elif isinstance(value, list):
        for item in value:
            yield from _keys(item)


def test_docs_examples_parse_and_use_only_known_keys():
    """Every TOML example in docs/site-format.md parses (TOML v1.0.0) and uses only keys the
    schema knows (SI keys or their unit-string stems), so the documentation cannot drift."""
    import re

    import audit_lib.site.schema as schema

    try:
        import tomllib
    except ModuleNotFoundError:  # Python 3.10
        import tomli as tomllib

    known = set()
    for record in vars(schema).values():
        if isinstance(record, type) and issubclass(record, schema.Record):
            for name in record.model_fields:
                known.add(name)
                for suffix in schema.UNIT_SUFFIXES:
                    if name.endswith(suffix):
                        known.add(name[: -len(suffix)])
    text = (Path(__file__).resolve().parent.parent / "docs" / "site-format.md").read_text()
    blocks = re.findall(r"```toml\n(.*?)```", text, re.S)
    assert len(blocks) >= 10
    for block in blocks:
        unknown = set(_keys(tomllib.loads(block))) - known
        assert not unknown, (unknown, block[:60])


def test_meter_overdue_for_calibration_warns(tmp_path):
    """A meter used more than a year after calibration gets a warning, not an error (yearly
    calibration of handheld UV meters: common practice)."""
    from audit_lib.site.folder import SiteWarning

    new_site(tmp_path)
    path = tmp_path / "site.toml"
    path.write_text(path.read_text().replace("calibration_date = 2025-06-01",
                                             "calibration_date = 2024-06-01"))
    with pytest.warns(SiteWarning, match=r"meter 'uvi-meter' was calibrated on 2024-06-01, more "
                                         r"than a year before its readings of 2026-01-15"):
        load_site(tmp_path)


def test_new_site_placeholders_are_flagged_until_edited(tmp_path, capsys):
    """An unedited starting folder is valid but not silently so: each placeholder and
    unchanged example is a warning naming its key and line (issue 14)."""
    from audit_lib.site.folder import SiteWarning
    from audit_lib.site.template import PLACEHOLDERS, STARTER_SITE_TOML

    assert all(f'{key} = "{value}"' in STARTER_SITE_TOML for key, value in PLACEHOLDERS.items())
    root = tmp_path / "n"
    new_site(root)
    with pytest.warns(SiteWarning) as caught:
        load_site(root)
    texts = [str(w.message) for w in caught]
    assert [t.split(": ", 1)[1] for t in texts] == [
        "site.name: still the starter's placeholder 'My collection' "
        "(hint: write your own; it is shown on every report)",
        "site.auditor: still the starter's placeholder 'Your name' "
        "(hint: write your own; it is shown on every report)",
        "meters[0]: meter 'uvi-meter' is the starter's example, unchanged "
        "(hint: describe your own meter here, or remove this one)",
        "lamp_models[0]: lamp model 'uvb-tube-60cm' is the starter's example, unchanged "
        "(hint: describe your own lamp model here, or remove this one)",
        "species[0]: species 'example-lizard' is the starter's example, unchanged "
        "(hint: describe your own species here, or remove this one)",
        "enclosures[0]: enclosure 'viv-1' is the starter's example, unchanged "
        "(hint: describe your own enclosure here, or remove this one)",
        "the starter's example readings, unchanged "
        "(hint: replace them with your own readings, or delete the file)",
    ]
    assert main(["check", str(root)]) == 0
    captured = capsys.readouterr()
    assert "valid; 1 enclosures, 1 lamps, 1 lamp models, 2 readings; 7 warning(s) to attend to" \
        in captured.out
    assert "site.auditor: still the starter's placeholder 'Your name'" in captured.err

    toml = root / "site.toml"
    text = toml.read_text()
    for old, new in [('"My collection"', '"Fen edge reptile room"'),
                     ('"Your name"', '"A. Keeper"'),
                     ("calibration_date = 2025-06-01", "calibration_date = 2025-11-03"),
                     ('reference = { distance = "30 cm", uvi = 2.0 }',
                      'reference = { distance = "30 cm", uvi = 2.4 }'),
                     ('scientific_name = "Example species"', 'scientific_name = "Fictus lacerta"'),
                     ('name = "Vivarium 1"', 'name = "Corner vivarium"')]:
        text = text.replace(old, new, 1)
    toml.write_text(text)
    readings = root / "readings" / "first-audit.csv"
    readings.write_text(readings.read_text().replace(",2.1,", ",2.3,"))
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error", SiteWarning)
        load_site(root)
