"""Reports a client can be handed: designed figures, no machine paths, results that stack, PDF.

External references: RFC 4180 (CSV), the Unicode byte-order mark as spreadsheets use it to
recognise UTF-8 (Microsoft's documented behaviour of Excel, common practice), pandas'
``read_csv``/``concat`` as the independent reader, Chromium's ``--print-to-pdf`` and the PDF
header ``%PDF-`` (ISO 32000-1, 7.5.2). Precision: handheld UV Index meters read to 0.1 UVI
(common practice, from memory).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import json
import re
import shutil
from pathlib import Path

import pandas as pd
import pytest

from audit_lib.report import formats as fmt
from audit_lib.report.paths import strip_machine_paths

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
SMALL = ROOT / "sample_sites" / "ashdown-private-collection"
# a 1 x 1 transparent PNG (PNG specification, ISO/IEC 15948: signature, IHDR, IDAT, IEND)
PNG = bytes.fromhex(
    "89504e470d0a1a0a0000000d49484452000000010000000108060000001f15c489"
    "0000000d49444154789c6360000002000154a24f5d0000000049454e44ae426082")


# --- formats ------------------------------------------------------------------------------


def test_figures_are_shown_at_the_meters_precision():
    """UV Index to 0.1 (a handheld meter's resolution, common practice); shares in whole per
    cent; missing as "–", no upper limit as "no limit"; the CSV number is the shown one."""
    assert fmt.text(3.2961, "uvi") == "3.3"
    assert fmt.text(0.6512, "share_pct") == "65"
    assert fmt.text(float("nan"), "uvi") == fmt.MISSING == fmt.text(None, "uvi")
    assert fmt.text(float("inf"), "minutes") == "no limit"
    assert fmt.text(38.135, "minutes", unit=True) == "38 min"
    assert fmt.text(0.00017785, "small_share_pct") == "0.018"
    assert fmt.rounded(0.00017785, "small_share_pct") == pytest.approx(0.00018, abs=1e-12)
    assert fmt.rounded(0.6512, "share_pct") == 0.65
    assert fmt.text(20472.0, "lux") == "20500"
    assert fmt.header("Basking maximum", "uvi") == "Basking maximum [UVI]"


def test_a_figure_never_rounds_onto_the_wrong_side_of_its_limit():
    """A basking maximum of 2.96 below a range from 3.0 shows as 2.96, not 3.0 (the state
    word and the figure must agree)."""
    check = {"check_id": "basking_uvi_max", "value": 2.96, "unit": "UVI",
             "target_low": 3.0, "target_high": 7.4, "state": "below range"}
    assert fmt.check_text(check) == "2.96"
    assert fmt.check_range_text(check) == "3.00–7.40"
    assert fmt.check_rounded(check) == 2.96
    within = dict(check, value=3.04, state="within range")
    assert fmt.check_text(within) == "3.0" and fmt.check_range_text(within) == "3.0–7.4"
    keeper = {"check_id": "keeper_exposure_time", "value": 38.1, "unit": "min",
              "target_low": 30.0, "target_high": None, "state": "within range"}
    assert fmt.check_range_text(keeper) == "at least 30"


def test_designed_table_escapes_text_and_right_aligns_numbers():
    """HTML escaping (html.escape) of site text; numbers in cells of class num."""
    html = fmt.html_table([{"a": "<b>x</b>", "v": 1.234}],
                          [fmt.Column("a", "Name"), fmt.Column("v", "Figure [UVI]", "uvi")])
    assert "&lt;b&gt;x&lt;/b&gt;" in html and "<td class=num>1.2</td>" in html
    assert "NaN" not in fmt.html_table([{"a": "y", "v": float("nan")}],
                                       [fmt.Column("a", "A"), fmt.Column("v", "V", "uvi")])


def test_machine_paths_are_made_relative_or_cut():
    """Known folders become their name (site) or nothing (output); other absolute paths are
    cut to the file name; data URIs and URLs are left alone."""
    known = {"/data/ann/sites/park": "park", "/data/ann/out": ""}
    text = ('bad row in /data/ann/sites/park/readings/a.csv; {"results_json": '
            '"/data/ann/out/results.json"} File "/usr/lib/python3/x.py" '
            'src="data:image/jpeg;base64,/9j/4AAQ/home/abc" https://example.org/tmp/a')
    got = strip_machine_paths(text, known)
    assert "park/readings/a.csv" in got and '"results.json"' in got and '"x.py"' in got
    assert "base64,/9j/4AAQ/home/abc" in got and "https://example.org/tmp/a" in got
    assert "/data/ann" not in got and "/usr/lib" not in got


# --- previous audit -------------------------------------------------------------------------


def test_previous_audit_comes_from_the_history_and_the_same_pipeline(tmp_path):
    """One source: the previous audit's date and readings from the history store, its verdict
    and basking maximum from audit_enclosure at that date; none before the first audit."""
    import warnings

    from audit_lib.history.sync import sync_site_history
    from audit_lib.pipeline.audit import audit_enclosure
    from audit_lib.pipeline.previous import previous_audit
    from audit_lib.site.folder import load_site

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        site = load_site(DEMO)
        db = tmp_path / "history.sqlite"
        sync_site_history(site, db)
        found = previous_audit(site, "rh-03", dt.date(2026, 3, 10), db_path=db)
        again = audit_enclosure(site, "rh-03", audit_date="2025-03-11", with_failures=False)
    assert found.audit_date == dt.date(2025, 3, 11) and not found.missing
    assert found.audit.verdict == again.verdict
    assert [c.value for c in found.audit.checks] == [c.value for c in again.checks]
    days = set(found.readings["date"].dt.date)
    assert days == {dt.date(2025, 3, 11), dt.date(2026, 3, 10)}
    first = previous_audit(site, "rh-03", dt.date(2024, 3, 12), db_path=db)
    assert first.audit_date is None and "no earlier audit" in first.missing
    none = previous_audit(site, "rh-03", dt.date(2026, 3, 10), db_path=tmp_path / "no.sqlite")
    assert none.audit_date is None and "no history store" in none.missing


# --- PDF: a missing browser is bad input ------------------------------------------------------


def test_pdf_without_chromium_exits_2_before_any_work(tmp_path, monkeypatch, capsys):
    """The command's contract: bad input (no browser for --pdf), exit 2, nothing written."""
    from audit_lib.errors import InputError
    from audit_lib.run.cli import main
    from audit_lib.run.pdf import find_chromium

    monkeypatch.setenv("PATH", str(tmp_path / "empty"))
    with pytest.raises(InputError, match="cannot write a PDF: Chromium is not installed"):
        find_chromium()
    out = tmp_path / "out"
    assert main(["run", str(SMALL), "--out", str(out), "--pdf", "--quiet"]) == 2
    assert "apt-get install chromium" in capsys.readouterr().err
    assert not out.exists()


# --- end to end -------------------------------------------------------------------------------


def _site_with_logo(tmp_path: Path) -> Path:
    site = tmp_path / "Ashdown Ünïcode site"
    shutil.copytree(SMALL, site)
    (site / "logo.png").write_bytes(PNG)
    toml = site / "site.toml"
    toml.write_text(toml.read_text(encoding="utf-8").replace(
        '[site]\nname = "Ashdown private collection"',
        '[site]\nname = "Ashdown private collection – Ménagerie"\nlogo = "logo.png"'),
        encoding="utf-8")
    return site


def _files(out: Path):
    return [p for p in out.rglob("*") if p.is_file() and p.suffix in (".html", ".json", ".csv")]


@pytest.mark.slow
def test_results_stack_and_a_mixed_rerun_keeps_each_date(tmp_path):
    """Two audit dates stack in pandas (read_csv + concat); the CSV is UTF-8 with a BOM and
    CRLF rows (RFC 4180) so a spreadsheet reads the non-ASCII site name; a rerun of one
    enclosure at another date keeps every row's own date; no page holds a machine path; the
    logo is on the index and overview; no executed workbook unless asked."""
    from audit_lib.run.batch import run_batch

    site = _site_with_logo(tmp_path)
    out = tmp_path / "out folder"
    first = run_batch(site, out, progress=False, jobs=2, audit_date="2026-05-14")
    assert not first.failures
    one = first.outcomes[0].id
    older = tmp_path / "older"
    assert not run_batch(site, older, only=[one], progress=False, jobs=1,
                         audit_date="2025-05-20").failures

    raw = (out / "results.csv").read_bytes()
    assert raw.startswith(b"\xef\xbb\xbf") and b"\r\n" in raw
    frames = [pd.read_csv(folder / "results.csv", encoding="utf-8-sig")
              for folder in (out, older)]
    stacked = pd.concat(frames, ignore_index=True)
    assert {"site", "audit_date"} <= set(stacked.columns)
    assert set(stacked["audit_date"]) == {"2026-05-14", "2025-05-20"}
    assert set(stacked["site"]) == {"Ashdown private collection – Ménagerie"}
    assert len(stacked) == sum(len(f) for f in frames)
    rows = list(csv.DictReader(io.StringIO(raw.decode("utf-8-sig"))))
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    values = [c["value"] for e in doc["enclosures"] for c in e["checks"]]
    assert [r["value"] != "" for r in rows] == [v is not None for v in values]
    for row in rows:  # as displayed: at most the shown decimals
        assert not row["value"] or len(row["value"].split(".")[-1]) <= 6

    # the mixed rerun into the same folder
    rerun = run_batch(site, out, only=[one], progress=False, jobs=1, audit_date="2025-05-20")
    assert not rerun.failures
    doc = json.loads((out / "results.json").read_text(encoding="utf-8"))
    dates = {e["id"]: e["audit_date"] for e in doc["enclosures"]}
    assert dates[one] == "2025-05-20"
    assert {d for i, d in dates.items() if i != one} == {"2026-05-14"}
    csv_dates = pd.read_csv(out / "results.csv", encoding="utf-8-sig").groupby(
        "enclosure")["audit_date"].unique()
    assert {k: list(v) for k, v in csv_dates.items()} == {k: [v] for k, v in dates.items()}
    index = (out / "index.html").read_text(encoding="utf-8")
    for enclosure_id, date in dates.items():
        row = re.search(rf"<tr><th scope=\"row\">{enclosure_id}<.*?</tr>", index, re.S).group(0)
        assert date in row
    assert doc["overview"]["report"] == "reports/site-overview.html"
    overview = (out / doc["overview"]["report"]).read_text(encoding="utf-8")
    assert "2025-05-20" in overview and "2026-05-14" in overview
    assert 'href="reports/site-overview.html"' in index

    # client-clean
    for page in _files(out):
        text = page.read_text(encoding="utf-8-sig")
        for folder in (str(site), str(out), str(tmp_path), str(ROOT)):
            assert folder not in text, (page, folder)
    assert not list(out.rglob("*.ipynb")) and ".ipynb" not in index
    assert index.count('class="report-logo" src="data:image/png;base64,') == 1
    assert 'class="report-logo"' in overview


@pytest.mark.slow
def test_kept_notebooks_are_linked(tmp_path):
    """--keep-notebooks keeps the executed workbook and the index links it."""
    from audit_lib.run.batch import run_batch

    out = tmp_path / "out"
    result = run_batch(SMALL, out, progress=False, jobs=2, overview=False, keep_notebooks=True)
    assert not result.failures
    index = (out / "index.html").read_text(encoding="utf-8")
    for o in result.outcomes:
        assert (out / o.notebook).is_file() and f'href="{o.notebook}"' in index


@pytest.mark.slow
@pytest.mark.browser
@pytest.mark.skipif(shutil.which("chromium") is None, reason="Debian's chromium not installed")
def test_pdf_beside_every_page(tmp_path):
    """--pdf: every report, the overview and the index get a PDF (ISO 32000 header) beside
    their HTML, the index links them, and no PDF holds a path of this machine."""
    from audit_lib.run.cli import main

    out = tmp_path / "out"
    assert main(["run", str(SMALL), "--out", str(out), "--pdf", "--quiet", "--jobs", "2"]) == 0
    pages = [out / "index.html", *sorted((out / "reports").glob("*.html"))]
    assert len(pages) >= 3
    for page in pages:
        pdf = page.with_suffix(".pdf").read_bytes()
        assert pdf[:5] == b"%PDF-", page
        # no address of this machine in a link annotation (ISO 32000-1, 12.6.4.7 URI actions)
        assert b"file://" not in pdf and str(out).encode() not in pdf, page
    index = (out / "index.html").read_text(encoding="utf-8")
    assert 'href="reports/site-overview.pdf"' in index
    assert not list(out.rglob(".*.part-*"))
