"""Readings tables: CSV and xlsx in long format, units converted, every bad row reported."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from audit_lib.errors import InputErrors
from audit_lib.site.readings import COLUMNS, read_readings, read_readings_with_problems

HEADER = "date,enclosure,lamp,position,x_m,y_m,z_m,distance_m,quantity,value,unit,meter,note"
ROWS = [
    "2026-03-10,viv-1,bar,basking,,,,,uvi,3.4,UVI,m1,",
    "2026-03-10,viv-1,bar,,0.4,0.3,0.2,0.35,uvb_w_m2,120,uW/cm^2,m2,\"on axis, lamp only\"",
    "2026-03-10,viv-1,,hide,,,,,illuminance_lux,2.5,klx,m3,",
    "2026-03-10,viv-1,bar,basking,,,,,uva_w_m2,85,mW/m2,m4,",
]


def _write(tmp_path, rows, header=HEADER, name="r.csv", preamble=("# audit of 2026",)):
    path = tmp_path / name
    path.write_text("\n".join([*preamble, header, *rows]) + "\n", encoding="utf-8")
    return path


def test_csv_follows_the_table_contract(tmp_path):
    """Columns and dtypes of the shared readings contract; 1 uW/cm2 = 0.01 W/m2, 1 klx =
    1000 lx, 1 mW/m2 = 0.001 W/m2 (SI prefixes, NIST SP 811)."""
    frame = read_readings(_write(tmp_path, ROWS))
    assert tuple(frame.columns) == COLUMNS
    assert frame["date"].dtype == "datetime64[ns]"
    assert frame["source_line"].tolist() == [3, 4, 5, 6]
    np.testing.assert_allclose(frame["value_si"], [3.4, 1.20, 2500.0, 0.085])
    assert frame.loc[1, "note"] == "on axis, lamp only"
    assert frame.loc[1, "distance_m"] == pytest.approx(0.35)
    assert np.isnan(frame.loc[0, "x_m"])
    assert frame.loc[1, "unit"] == "uW/cm^2" and frame.loc[1, "value"] == 120


def test_quantity_aliases(tmp_path):
    """Short quantity names map to the contract's names (our own vocabulary)."""
    rows = ["2026-03-10,viv-1,,,,,,,UVB,120,µW/cm²,,", "2026-03-10,viv-1,,,,,,,lux,900,lx,,"]
    frame = read_readings(_write(tmp_path, rows))
    assert frame["quantity"].tolist() == ["uvb_w_m2", "illuminance_lux"]
    assert frame["value_si"].tolist() == pytest.approx([1.2, 900.0])


def test_xlsx_gives_the_same_table_as_csv(tmp_path):
    """An .xlsx sheet (Office Open XML, ECMA-376; read with openpyxl) reads like the CSV."""
    from openpyxl import Workbook

    csv_frame = read_readings(_write(tmp_path, ROWS))
    book = Workbook()
    sheet = book.active
    sheet.append(["# audit of 2026"])
    sheet.append(HEADER.split(","))
    for row in csv_frame.itertuples(index=False):
        sheet.append([row.date.to_pydatetime(), row.enclosure, row.lamp, row.position,
                      *[None if np.isnan(v) else v for v in (row.x_m, row.y_m, row.z_m,
                                                             row.distance_m)],
                      row.quantity, row.value, row.unit, row.meter, row.note])
    book.save(tmp_path / "r.xlsx")
    xlsx_frame = read_readings(tmp_path / "r.xlsx")
    pd.testing.assert_frame_equal(
        xlsx_frame.drop(columns=["source_file"]), csv_frame.drop(columns=["source_file"]))


def test_every_bad_row_is_reported_with_its_line(tmp_path):
    """All problems at once, each with file, line and column (RFC 4180 rows; ISO 8601 dates)."""
    rows = [
        "2026-03-10,viv-1,,,,,,,uvi,3.4,UVI,,",            # 3 good
        "10/03/2026,viv-1,,,,,,,uvi,3.4,UVI,,",            # 4 date
        "2026-03-10,,,,,,,,uvi,3.4,UVI,,",                 # 5 enclosure
        "2026-03-10,viv-1,,,,,,,uvb_w_m2,3.4,furlongs,,",  # 6 unit
        "2026-03-10,viv-1,,,,,,,uvi,3.4,W/m^2,,",          # 7 unit for an index
        "2026-03-10,viv-1,,,abc,,,,uvi,3.4,UVI,,",         # 8 number
        "2026-03-10,viv-1,,,,,,,uvi,,UVI,,",               # 9 empty value
    ]
    path = _write(tmp_path, rows)
    frame, problems = read_readings_with_problems(path)
    assert len(frame) == 1
    assert [(p.line, p.field) for p in problems] == [
        (4, "date"), (5, "enclosure"), (6, "unit"), (7, "unit"), (8, "x_m"), (9, "value")]
    with pytest.raises(InputErrors, match=r"r\.csv:6: unit: unit 'furlongs' is not a unit of "
                                          r"irradiance"):
        read_readings(path)


def test_missing_and_unknown_columns(tmp_path):
    """The header must hold the required columns and no unknown ones (our contract)."""
    path = _write(tmp_path, ["2026-03-10,viv-1,3.4,UVI,x"],
                  header="date,enclosure,value,unit,colour")
    with pytest.raises(InputErrors) as info:
        read_readings(path)
    messages = [p.message for p in info.value.problems]
    assert messages == ["missing column 'quantity'", "unknown column 'colour'"]
    assert all(p.line == 2 for p in info.value.problems)


def test_folder_reads_every_file_in_name_order(tmp_path):
    """A readings folder is the union of its files, in name order (common practice)."""
    _write(tmp_path, ROWS[:1], name="b.csv")
    _write(tmp_path, ROWS[1:2], name="a.csv")
    (tmp_path / "notes.txt").write_text("not readings")
    frame = read_readings(tmp_path)
    assert frame["source_file"].tolist() == ["a.csv", "b.csv"]


def test_unsupported_file_type(tmp_path):
    """Only CSV/TSV and xlsx are readings (legacy .xls is not read by openpyxl)."""
    path = tmp_path / "r.xls"
    path.write_bytes(b"\xd0\xcf\x11\xe0")
    with pytest.raises(InputErrors, match=r"readings must be \.csv, \.tsv or \.xlsx"):
        read_readings(path)


def test_corrupt_spreadsheet_is_an_input_error(tmp_path):
    """A damaged .xlsx (not a ZIP container, ECMA-376 Part 2) is reported, not a traceback."""
    path = tmp_path / "r.xlsx"
    path.write_text("not a spreadsheet")
    with pytest.raises(InputErrors, match=r"r\.xlsx: cannot read the file: File is not a zip"):
        read_readings(path)


#: The ROWS above as a European spreadsheet saves them: semicolons, decimal commas.
EUROPEAN = [HEADER.replace(",", ";"),
            "2026-03-10;viv-1;bar;basking;;;;;uvi;3,4;UVI;m1;",
            "2026-03-10;viv-1;bar;;0,4;0,3;0,2;0,35;uvb_w_m2;120;uW/cm^2;m2;on axis, lamp only",
            "2026-03-10;viv-1;;hide;;;;;illuminance_lux;2,5;klx;m3;",
            "2026-03-10;viv-1;bar;basking;;;;;uva_w_m2;85;mW/m2;m4;"]


def test_semicolons_and_decimal_commas_read_like_the_comma_file(tmp_path):
    """A file saved by a spreadsheet in a decimal-comma locale (';' between columns, ','
    before decimals, as RFC 4180 allows another separator in practice) gives the same
    table as the comma file (common practice of European spreadsheet exports)."""
    comma = read_readings(_write(tmp_path, ROWS, name="comma.csv"))
    path = _write(tmp_path, EUROPEAN[1:], header=EUROPEAN[0], name="semi.csv")
    semi = read_readings(path)
    pd.testing.assert_frame_equal(semi.drop(columns=["source_file"]),
                                  comma.drop(columns=["source_file"]))


def test_windows_1252_file_is_read(tmp_path):
    """A "CSV" from a Western-European Windows spreadsheet is Windows-1252: µ and ² are the
    bytes B5 and B2 (the Windows-1252 code chart); 120 µW/cm² = 1.2 W/m² (NIST SP 811)."""
    text = "\n".join([EUROPEAN[0], "2026-03-10;viv-1;bar;;;;;;uvb_w_m2;120;µW/cm²;m2;"])
    (tmp_path / "r.csv").write_bytes(text.encode("cp1252"))
    frame = read_readings(tmp_path / "r.csv")
    assert frame["unit"].tolist() == ["µW/cm²"]
    assert frame["value_si"].tolist() == pytest.approx([1.2])


def test_point_in_a_decimal_comma_file_is_ambiguous(tmp_path):
    """'12.500' in a decimal-comma file may be twelve thousand five hundred (a thousands
    point) or twelve and a half: refused, not guessed (common practice)."""
    rows = ["2026-03-10;viv-1;;;;;;;uvi;3,4;UVI;;", "2026-03-10;viv-1;;;;;;;illuminance_lux;"
            "12.500;lx;;"]
    path = _write(tmp_path, rows, header=EUROPEAN[0])
    with pytest.raises(InputErrors, match=r"r\.csv:4: value: '12\.500' has a point in a file "
                                          r"written with decimal commas \(hint: write numbers "
                                          r"without thousands separators"):
        read_readings(path)


def test_unknown_separator_is_one_problem_naming_the_separator(tmp_path):
    """A header that does not split into columns is one problem that says so, not one
    "missing column" per required column (issue 14)."""
    path = _write(tmp_path, ["2026-03-10|viv-1|uvi|3.4|UVI"],
                  header="date|enclosure|quantity|value|unit")
    with pytest.raises(InputErrors) as info:
        read_readings(path)
    (problem,) = info.value.problems
    assert problem.message == "the header 'date|enclosure|quantity|value|unit' is not split " \
                              "into columns"
    assert problem.hint.startswith("separate the columns with commas, semicolons or tabs")


def test_semicolon_row_with_an_extra_field_names_the_separator(tmp_path):
    """A note holding the separator must be quoted (RFC 4180 section 2, rule 6)."""
    path = _write(tmp_path, ["2026-03-10;viv-1;;;;;;;uvi;3,4;UVI;;a; b"], header=EUROPEAN[0])
    with pytest.raises(InputErrors, match=r"14 fields where the header has 13 \(hint: columns "
                                          r"are separated by semicolons"):
        read_readings(path)


def test_demo_comma_files_read_as_before():
    """The existing comma files are read exactly as before the dialect detection: every
    value as written, as a plain float (regression pin of our own reader)."""
    import csv
    from pathlib import Path

    folder = Path(__file__).resolve().parent.parent / "sample_sites" / \
        "kestrel-moor-wildlife-park" / "readings"
    frame = read_readings(folder)
    expected = []
    for path in sorted(folder.glob("*.csv")):
        lines = [ln for ln in path.read_text().splitlines() if not ln.startswith("#")]
        expected += [float(row["value"]) for row in csv.DictReader(lines)]
    assert frame["value"].tolist() == expected
