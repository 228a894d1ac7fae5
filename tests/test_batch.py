"""The batch run: outputs, isolation of failures, interrupted runs, escaping.

External references: papermill's documented behaviour (parameters injected after the
``parameters`` cell; a failing cell raises ``PapermillExecutionError`` and the executed
notebook is still written), nbconvert's HTML export, RFC 8259 (JSON has no NaN or Infinity),
RFC 4180 (CSV), the HTML Living Standard's escaping of ``<``, ``>``, ``&`` and quotes
(``html.escape``), and POSIX ``rename`` (atomic replacement within one file system).
"""

from __future__ import annotations

import csv
import io
import json
import math
import os
import re
import shutil
import signal
import subprocess
import sys
import time
from pathlib import Path

import nbformat
import pytest

from audit_lib.errors import InputError
from audit_lib.report.index_page import render_index
from audit_lib.run.batch import (
    CSV_COLUMNS,
    BatchResult,
    EnclosureOutcome,
    results_csv,
    results_document,
    run_batch,
    safe_stem,
)
from audit_lib.run.notebooks import write_atomic

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
SMALL = ROOT / "sample_sites" / "ashdown-private-collection"
WORKBOOK = ROOT / "workbooks" / "enclosure_report.ipynb"
HOSTILE = '<script>alert("x")</script> & <img src=x onerror=alert(1)>'


# --- fast unit checks ----------------------------------------------------------------------


@pytest.mark.parametrize("identifier", ["../../etc/passwd", "/abs/path", "a/b", "..",
                                        "site-overview", "Upper Case", "x" * 200, ""])
def test_safe_stem_never_leaves_the_folder(tmp_path, identifier):
    """A stem is one path component of safe characters (POSIX path resolution rules)."""
    stem = safe_stem(identifier)
    assert "/" not in stem and stem not in ("", ".", "..") and not stem.startswith(".")
    assert (tmp_path / f"{stem}.html").resolve().parent == tmp_path.resolve()
    assert stem != "site-overview"  # the overview's own file name is reserved


def test_safe_stem_keeps_valid_ids_and_separates_others():
    """Ids matching the site format's rule are kept; distinct ids never share a stem."""
    assert safe_stem("rh-01") == "rh-01"
    assert safe_stem("a b") != safe_stem("a-b")


def _result(tmp_path) -> BatchResult:
    checks = [{"check_id": "basking_uvi_max", "name": "basking UV Index maximum", "value": 3.2,
               "unit": "UVI",
               "target_low": 2.9, "target_high": 7.4, "state": "within range",
               "reason": "fine, \"quoted\", with a comma"},
              {"check_id": "keeper_exposure_time", "name": "keeper exposure limit",
               "value": float("inf"), "unit": "min",
               "target_low": 30.0, "target_high": float("inf"), "state": "within range",
               "reason": "no limit"},
              {"check_id": "animal_uvi_mean", "name": "mean UV Index of the animal",
               "value": float("nan"), "unit": "UVI",
               "target_low": 1.0, "target_high": 2.6, "state": "not enough data",
               "reason": "no time budget"}]
    return BatchResult("Demo", tmp_path, [
        EnclosureOutcome("e1", "One", "meets targets", "reports/e1.html", "reports/e1.ipynb",
                         checks),
        EnclosureOutcome("e2", HOSTILE, error="ValueError: broken on purpose")])


def test_results_json_is_strict_json(tmp_path):
    """RFC 8259: NaN and infinity become null; the schema's keys are all present."""
    doc = results_document(_result(tmp_path))
    text = json.dumps(doc, allow_nan=False)  # raises if any NaN/inf slipped through
    back = json.loads(text)
    first, second = back["enclosures"]
    assert set(first) >= {"id", "verdict", "report", "checks", "error"}
    assert set(first["checks"][0]) == {"check_id", "name", "species", "value", "unit",
                                       "target_low", "target_high", "state", "reason",
                                       "basis", "source", "value_low", "value_high"}
    assert first["checks"][0]["check_id"] == "basking_uvi_max"
    assert first["lamps"] == [] and first["actions"] == [] and "audit_date" in first
    assert first["checks"][1]["value"] is None and first["checks"][1]["target_high"] is None
    assert first["checks"][2]["value"] is None
    assert second["verdict"] is None and second["error"].startswith("ValueError")


def test_results_csv_one_row_per_check(tmp_path):
    """RFC 4180: quotes and commas survive; failed enclosures keep one row with the error."""
    text = results_csv(results_document(_result(tmp_path)))
    rows = list(csv.DictReader(io.StringIO(text)))
    assert tuple(rows[0]) == CSV_COLUMNS
    assert len(rows) == 3 + 1
    assert rows[0]["reason"] == 'fine, "quoted", with a comma'
    assert float(rows[0]["value"]) == 3.2 and rows[1]["target_high"] == ""
    assert [r["check_id"] for r in rows[:3]] == ["basking_uvi_max", "keeper_exposure_time",
                                                  "animal_uvi_mean"]
    assert rows[3]["enclosure"] == "e2" and rows[3]["error"] == "ValueError: broken on purpose"


def test_index_escapes_site_text(tmp_path):
    """HTML escaping (html.escape): site names and errors never become markup."""
    result = _result(tmp_path)
    page = render_index(HOSTILE, result.outcomes, facts=[("Auditor", HOSTILE)])
    assert "<script>" not in page and "<img" not in page
    assert "&lt;script&gt;" in page and "&amp;" in page
    assert 'href="reports/e1.html"' in page
    assert "broken on purpose" in page


def test_write_atomic_replaces_whole_file(tmp_path):
    """POSIX rename: the target is either the old or the new content, no temp file left."""
    target = tmp_path / "a.html"
    write_atomic(target, "old")
    write_atomic(target, "new " * 1000)
    assert target.read_text() == "new " * 1000
    assert [p.name for p in tmp_path.iterdir()] == ["a.html"]


def test_page_cleaning_skips_embedded_figures_only():
    """Machine paths around a figure's RFC 2397 ``data:`` URI are cleaned as in one piece
    (``strip_machine_paths``); the base64 data (RFC 4648 alphabet, which holds ``/``) is
    left whole."""
    from audit_lib.report.paths import strip_machine_paths
    from audit_lib.run.batch import _client_clean

    known = {"/data/site/park": "park", "/data/out": ""}
    page = ('<p>/data/site/park/readings.csv</p><img src="data:image/png;base64,AAAA/data/out/x'
            'B+/=" alt="/srv/u/fig.png">/data/out/reports/a.html (/usr/lib/x.py)'
            "<div style=\"background:url(data:image/png;base64,/data/out/Z==)\">/data/out</div>")
    cleaned = _client_clean(page, known)
    assert "base64,AAAA/data/out/xB+/=" in cleaned and "base64,/data/out/Z==" in cleaned
    outside = [strip_machine_paths(part, known) for part in re.split(
        r"data:image/png;base64,[A-Za-z0-9+/=]+", page)]
    assert re.split(r"data:image/png;base64,[A-Za-z0-9+/=]+", cleaned) == outside
    assert "park/readings.csv" in cleaned and "reports/a.html (x.py)" in cleaned


def test_unknown_only_id_is_rejected_before_running(tmp_path):
    """Nothing runs for an id that is not in the site; the message lists the known ids."""
    with pytest.raises(InputError, match=r"no enclosure with id 'nope'.*known ids: rh-01"):
        run_batch(DEMO, tmp_path / "out", only=["nope"], progress=False)
    assert not (tmp_path / "out" / "index.html").exists()


def test_invalid_site_runs_nothing(tmp_path):
    """Validation first: an invalid site raises and writes no output."""
    from audit_lib.errors import InputErrors

    broken = tmp_path / "site"
    shutil.copytree(SMALL, broken)
    toml = broken / "site.toml"
    toml.write_text(toml.read_text().replace("format_version = 1", "format_version = 99"))
    with pytest.raises(InputErrors, match="format_version"):
        run_batch(broken, tmp_path / "out", progress=False)
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").rglob("*.html"))


def test_longest_workbooks_are_queued_first():
    """Longest-processing-time-first list scheduling (Graham 1969, SIAM J. Appl. Math. 17,
    416-429): enclosures by their number of lamps and surfaces (what sets the number of
    figures), ties kept in site order. The overview runs after them, on their results."""
    from types import SimpleNamespace

    from audit_lib.run.batch import _order

    sizes = {"small": (1, 1), "big": (3, 2), "mid": (2, 1), "mid2": (1, 2)}
    site = SimpleNamespace(enclosure=lambda i: SimpleNamespace(
        lamps=[0] * sizes[i][0], surfaces=[0] * sizes[i][1]))
    tasks = [{"id": i} for i in sizes]
    assert [t["id"] for t in _order(tasks, site)] == ["big", "mid", "mid2", "small"]


# --- end to end ------------------------------------------------------------------------------


@pytest.fixture(scope="module")
def demo_run(tmp_path_factory):
    out = tmp_path_factory.mktemp("demo") / "out"
    return run_batch(DEMO, out, progress=False, keep_notebooks=True), out


def _load(out: Path) -> dict:
    return json.loads((out / "results.json").read_text())


@pytest.mark.slow
def test_demo_run_writes_every_report(demo_run):
    """Every enclosure has a report, an executed notebook and a results entry (papermill +
    nbconvert: executed notebook beside a self-contained HTML report)."""
    from audit_lib.site.folder import load_site

    result, out = demo_run
    site = load_site(DEMO)
    doc = _load(out)
    assert doc["site"] == site.name
    assert [e["id"] for e in doc["enclosures"]] == [e.id for e in site.records.enclosures]
    assert not result.failures
    for entry in doc["enclosures"]:
        report = out / entry["report"]
        assert report.is_file() and (out / entry["notebook"]).is_file()
        html = report.read_text()
        assert html.rstrip().endswith("</html>")
        assert "<script" not in html.lower()  # no require.js, MathJax or mermaid
        assert "data:image/png;base64," in html  # figures embedded
        assert entry["verdict"] in html
        nb = nbformat.read(out / entry["notebook"], as_version=4)
        assert nb.metadata.papermill.parameters["enclosure_id"] == entry["id"]
    assert (out / "reports" / "site-overview.html").is_file()
    rows = list(csv.DictReader(io.StringIO((out / "results.csv").read_text("utf-8-sig"))))
    assert len(rows) == sum(len(e["checks"]) for e in doc["enclosures"])
    index = (out / "index.html").read_text()
    for entry in doc["enclosures"]:
        assert f'href="{entry["report"]}"' in index
    assert not list((out / "reports").glob(".*"))  # no temporary files left


@pytest.mark.slow
def test_demo_results_match_the_library(demo_run):
    """results.json holds the library's own figures (audit_enclosure run in this process)."""
    from audit_lib.pipeline.audit import audit_enclosure
    from audit_lib.site.folder import load_site

    _, out = demo_run
    site = load_site(DEMO)
    for entry in _load(out)["enclosures"]:
        audit = audit_enclosure(site, entry["id"])
        assert entry["verdict"] == audit.verdict
        assert [c["name"] for c in entry["checks"]] == [c.name for c in audit.checks]
        assert [c["check_id"] for c in entry["checks"]] == [c.id for c in audit.checks]
        for got, want in zip(entry["checks"], audit.checks, strict=True):
            assert got["state"] == want.state
            if want.value is None or not math.isfinite(want.value):
                assert got["value"] is None
            else:
                assert got["value"] == pytest.approx(want.value, rel=1e-6)


@pytest.mark.slow
def test_demo_figures_agree_across_results_csv_index_and_overview(demo_run):
    """consistency: results.csv repeats results.json's check figures (by check id); the
    index shows each verdict; the overview workbook ran on the run's results.json and its
    report shows each enclosure's basking maximum and lamp forecast dates as results.json
    has them (RFC 4180 CSV; papermill's recorded parameters)."""
    _, out = demo_run
    doc = _load(out)
    from audit_lib.report.formats import check_rounded, check_text

    rows = list(csv.DictReader(io.StringIO((out / "results.csv").read_text("utf-8-sig"))))
    by_key = {(r["enclosure"], r["check_id"]): r for r in rows}
    overview_nb = nbformat.read(out / "reports" / "site-overview.ipynb", as_version=4)
    assert overview_nb.metadata.papermill.parameters["results_json"] == str(
        (out / "results.json").resolve())
    overview_html = (out / "reports" / "site-overview.html").read_text()
    index = (out / "index.html").read_text()
    for entry in doc["enclosures"]:
        assert entry["audit_date"] and entry["verdict"] in index
        for check in entry["checks"]:
            row = by_key[(entry["id"], check["check_id"])]
            assert row["check"] == check["name"]
            if check["value"] is None:
                assert row["value"] == ""
            else:
                assert float(row["value"]) == check_rounded(check)
                assert check_rounded(check) == pytest.approx(check["value"], abs=0.5)
        bask = next(c for c in entry["checks"]
                    if c["check_id"] in ("basking_uvi_max", "used_area_uvi_max"))
        assert f"{check_text(bask)} <" in overview_html, bask
        for lamp in entry["lamps"]:
            assert lamp["replace_by"] is None or lamp["replace_by"] in overview_html


@pytest.mark.slow
def test_second_sample_site_end_to_end(tmp_path):
    """The consultant's small site runs the same way (second layout of the format)."""
    result = run_batch(SMALL, tmp_path / "out", progress=False, jobs=2)
    assert not result.failures
    doc = _load(tmp_path / "out")
    assert len(doc["enclosures"]) == len(result.outcomes) >= 1
    assert all((tmp_path / "out" / e["report"]).is_file() for e in doc["enclosures"])


def _breaking_workbook(tmp_path: Path, body: str) -> Path:
    nb = nbformat.read(WORKBOOK, as_version=4)
    index = next(i for i, c in enumerate(nb.cells) if "parameters" in c.metadata.get("tags", []))
    nb.cells.insert(index + 1, nbformat.v4.new_code_cell(body))
    path = tmp_path / "enclosure_report.ipynb"
    nbformat.write(nb, path)
    return path


@pytest.mark.slow
def test_broken_enclosure_is_isolated(tmp_path, capsys):
    """papermill: a failing cell raises PapermillExecutionError; the batch lists that enclosure
    with the error (one line as it happens, beside the progress bar), keeps its executed
    notebook, and finishes the others."""
    workbook = _breaking_workbook(
        tmp_path, 'if enclosure_id == "rh-02":\n    raise RuntimeError("broken on purpose")')
    out = tmp_path / "out"
    result = run_batch(DEMO, out, only=["rh-01", "rh-02", "rh-03"], workbook=workbook,
                       overview=False, progress=True, keep_notebooks=True)
    live = [ln for ln in capsys.readouterr().err.splitlines() if ln.startswith("could not")]
    assert live == [f"could not audit rh-02: {result.failures[0].error}"]
    failed = {o.id: o for o in result.failures}
    assert list(failed) == ["rh-02"]
    assert "RuntimeError: broken on purpose" in failed["rh-02"].error
    assert not (out / "reports" / "rh-02.html").exists()
    assert (out / "reports" / "rh-02.ipynb").is_file()
    assert (out / "reports" / "rh-01.html").is_file() and (out / "reports" / "rh-03.html").is_file()
    index = (out / "index.html").read_text()
    assert "broken on purpose" in index and "could not be audited" in index
    entry = next(e for e in _load(out)["enclosures"] if e["id"] == "rh-02")
    assert entry["verdict"] is None and "broken on purpose" in entry["error"]
    cli = subprocess.run([sys.executable, "-m", "audit_lib.run.cli", "run", str(DEMO), "--out",
                          str(tmp_path / "cli"), "--only", "rh-02", "--quiet"],
                         capture_output=True, text=True, cwd=tmp_path)
    assert cli.returncode == 0, cli.stderr  # the real workbook audits rh-02 fine


def _children(pid: int) -> list[int]:
    path = Path(f"/proc/{pid}/task/{pid}/children")
    return [int(x) for x in path.read_text().split()] if path.exists() else []


@pytest.mark.slow
@pytest.mark.skipif(not Path("/proc/self/task").exists(), reason="needs Linux /proc")
def test_killed_worker_then_rerun_completes(tmp_path):
    """A worker killed mid-run (SIGKILL) fails only its workbooks; no truncated file is left
    (POSIX rename); a rerun into the same folder completes the set."""
    workbook = _breaking_workbook(tmp_path, "import time\ntime.sleep(4)")
    out = tmp_path / "out"
    code = ("import sys; from audit_lib.run.batch import run_batch; "
            f"r = run_batch({str(SMALL)!r}, {str(out)!r}, workbook={str(workbook)!r}, "
            "overview=False, progress=False, jobs=2); sys.exit(1 if r.failures else 0)")
    proc = subprocess.Popen([sys.executable, "-c", code], cwd=tmp_path)
    deadline = time.time() + 120
    workers: list[int] = []
    while time.time() < deadline and len(workers) < 2:
        workers = _children(proc.pid)
        time.sleep(0.2)
    assert workers, "the batch started no worker"
    time.sleep(6)  # workers started their kernels and are inside a workbook
    os.kill(workers[0], signal.SIGKILL)
    assert proc.wait(timeout=300) == 1
    doc = _load(out)
    assert any(e["error"] for e in doc["enclosures"])
    for html in (out / "reports").glob("*.html"):
        assert html.read_text().rstrip().endswith("</html>")
    result = run_batch(SMALL, out, workbook=workbook, overview=False, progress=False)
    assert not result.failures
    assert all(e["verdict"] and (out / e["report"]).is_file()
               for e in _load(out)["enclosures"])


@pytest.mark.slow
def test_hostile_enclosure_name_is_escaped(tmp_path):
    """HTML escaping end to end: a site's text shows as text in the report and the index."""
    site = tmp_path / "site"
    shutil.copytree(SMALL, site)
    toml = site / "site.toml"
    text = toml.read_text()
    first = text.index("[[enclosures]]")
    name_at = text.index("name = ", first)
    end = text.index("\n", name_at)
    toml.write_text(text[:name_at] + f"name = {json.dumps(HOSTILE)}" + text[end:])
    from audit_lib.site.folder import load_site

    enclosure_id = load_site(site).records.enclosures[0].id
    out = tmp_path / "out"
    result = run_batch(site, out, only=[enclosure_id], overview=False, progress=False)
    assert not result.failures
    for page in (out / "index.html", out / "reports" / f"{enclosure_id}.html"):
        html = page.read_text()
        assert "<script>alert" not in html and "<img src=x" not in html
        assert "&lt;script&gt;alert" in html


def test_cli_run_on_invalid_site_exits_2(tmp_path, capsys):
    """The command's contract (docs/batch-reports.md): bad input, exit status 2, one message
    per problem, nothing written."""
    from audit_lib.run.cli import main

    broken = tmp_path / "site"
    shutil.copytree(SMALL, broken)
    toml = broken / "site.toml"
    toml.write_text(toml.read_text().replace("format_version = 1", "format_version = 99"))
    assert main(["run", str(broken), "--out", str(tmp_path / "out"), "--quiet"]) == 2
    assert "format_version" in capsys.readouterr().err
    assert not (tmp_path / "out" / "index.html").exists()
