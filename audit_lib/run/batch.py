"""The batch audit run: one report per enclosure, a site overview, an index and results files.

``run_batch`` validates the site first (nothing runs on an invalid site), then executes the
enclosure workbook once per enclosure with papermill in a pool of worker processes, writes
``results.json``, and then runs the site overview workbook on that file: the overview reads
the enclosures' results and audits nothing again, so its figures are the reports'. Each
worker imports the heavy libraries once, keeps one warm kernel and converts in-process with a
cached exporter (:mod:`audit_lib.run.notebooks`). Every file is written atomically; a failed
enclosure is listed with its error and does not stop the others; a rerun completes the set.

Layout of the output folder::

    index.html  results.json  results.csv
    reports/<enclosure id>.html  reports/<enclosure id>.ipynb  (executed workbook)
    reports/site-overview.html  reports/site-overview.ipynb

Sources: papermill's parameterised execution and nbconvert's HTML export (their documented
APIs); the process pool is Python's ``concurrent.futures``.
"""

from __future__ import annotations

import json
import os
import re
import sys
import time
import warnings
from concurrent.futures import ProcessPoolExecutor, as_completed
from concurrent.futures.process import BrokenProcessPool
from dataclasses import asdict, dataclass, field
from pathlib import Path

from audit_lib.errors import AuditError, AuditWarning, InputError
from audit_lib.history.sync import sync_site_history
from audit_lib.pipeline.scenarios import write_scenario_site
from audit_lib.report.paths import strip_machine_paths
from audit_lib.run.notebooks import (
    WORKBOOKS_DIR,
    WarmKernel,
    convert_notebook,
    make_exporter,
    read_report_data,
    write_atomic,
)
from audit_lib.run.outputs import REPORTS_DIR, shown_paths, write_outputs, write_pdfs
from audit_lib.run.pdf import find_chromium
from audit_lib.run.results import (  # noqa: F401 - part of this module's interface
    CHECK_KEYS,
    CSV_COLUMNS,
    RESULT_KEYS,
    results_csv,
    results_document,
)
from audit_lib.site.dates import parse_date
from audit_lib.site.folder import load_site

ENCLOSURE_WORKBOOK = WORKBOOKS_DIR / "enclosure_report.ipynb"
OVERVIEW_WORKBOOK = WORKBOOKS_DIR / "site_overview.ipynb"
OVERVIEW_ID = "site-overview"
#: Code a worker's kernel runs once, while the main process validates the site: the heavy
#: imports, one small figure, one spectrum's metrics and the site itself, so fonts, colour
#: tables, unit tables and cached weights are loaded before the first workbook; then the
#: loaded objects are frozen out of garbage collection (``gc.freeze``).
_WARM_UP = """\
def _audit_warm_up():
    import warnings

    import matplotlib.pyplot as plt
    import numpy as np
    import pandas, pvlib, scipy.optimize  # noqa: F401
    import audit_lib.pipeline.audit  # noqa: F401
    import audit_lib.report.cautions  # noqa: F401
    import audit_lib.report.site_overview  # noqa: F401
    from audit_lib.light.metrics import spectrum_metrics
    from audit_lib.report import audit_figures, enclosure  # noqa: F401
    from audit_lib.light.spectra import Spectrum

    with warnings.catch_warnings():  # silent here; the workbooks still show their warnings
        warnings.simplefilter("ignore")
        wavelength = np.arange(250.0, 801.0)
        peak = 1e-3 * np.exp(-0.5 * ((wavelength - 305.0) / 8.0) ** 2) + 1e-6
        spectrum_metrics(Spectrum(wavelength, peak, name="warm-up"))
        fig, ax = plt.subplots(figsize=(3, 2), layout="constrained")
        fig.colorbar(ax.imshow(np.eye(3)), ax=ax).set_label("UV Index [-]")
        ax.set_title("warm-up")
        fig.canvas.draw()
        plt.close(fig)
        try:  # the site's files and unit tables; a broken site is reported by the main process
            from audit_lib.site.folder import load_site

            load_site(SITE_DIR, reuse=True)
        except Exception:  # noqa: BLE001
            pass


_audit_warm_up()
del _audit_warm_up
# what is loaded now stays for the kernel's life: keep it out of the collector's full passes
# (matplotlib leaves many reference cycles; a full pass over every module's objects is slow)
# a young-generation pass every 10 000 net allocations instead of 700: a workbook allocates
# millions of short-lived objects; a fifth less collection time for about 20 MB more at peak
import gc as _audit_gc
_audit_gc.collect()
_audit_gc.freeze()
_audit_gc.set_threshold(10_000, 10, 10)
del _audit_gc
"""
_WORKER: dict = {}


@dataclass
class EnclosureOutcome:
    """What the batch made of one enclosure (or of the site overview).

    Attributes
    ----------
    id, name : str
        Enclosure id and name from the site file.
    verdict : str or None
        Overall verdict; None when the workbook failed or did not run.
    report, notebook : str or None
        HTML report and executed workbook, relative to the output folder.
    checks : list of dict
        Every check (:data:`CHECK_KEYS`).
    results : dict
        The rest of the workbook's results (:data:`RESULT_KEYS`: audit date, zone, reason,
        recommendation, actions, lamps).
    error : str or None
        Why the enclosure could not be audited.
    seconds : float
        Time its workbook took in the worker [s].
    """

    id: str
    name: str = ""
    verdict: str | None = None
    report: str | None = None
    notebook: str | None = None
    checks: list = field(default_factory=list)
    results: dict = field(default_factory=dict)
    error: str | None = None
    seconds: float = 0.0


@dataclass
class BatchResult:
    """A finished batch run: every outcome in site order and where the files are."""

    site_name: str
    out_dir: Path
    outcomes: list[EnclosureOutcome]
    overview: EnclosureOutcome | None = None
    pdf_errors: dict = field(default_factory=dict)

    @property
    def index_path(self) -> Path:
        """The ``index.html`` of the run."""
        return self.out_dir / "index.html"

    @property
    def failures(self) -> list[EnclosureOutcome]:
        """Outcomes (overview included) that could not be produced."""
        found = [o for o in self.outcomes if o.error]
        if self.overview is not None and self.overview.error:
            found.append(self.overview)
        return found


def safe_stem(identifier: str) -> str:
    """Return a file name stem for an id that cannot leave its folder.

    Ids that already match ``[a-z0-9][a-z0-9_-]*`` (the site format's rule) are kept;
    anything else is reduced to those characters plus a short hash, so two ids never
    share a file.

    Parameters
    ----------
    identifier : str
        Enclosure id.
    """
    if re.fullmatch(r"[a-z0-9][a-z0-9_-]{0,63}", identifier) and identifier != OVERVIEW_ID:
        return identifier
    import hashlib

    slug = re.sub(r"[^a-z0-9_-]+", "-", identifier.lower()).strip("-_")[:40] or "id"
    digest = hashlib.sha256(identifier.encode("utf-8")).hexdigest()[:8]
    return f"{slug}-{digest}"


def _inside(out_dir: Path, path: Path) -> Path:
    resolved = path.resolve()
    if not resolved.is_relative_to(out_dir.resolve()):
        raise AuditError(f"refusing to write outside the output folder: {path}")
    return resolved


# --- worker side ----------------------------------------------------------------------------


def _init_worker(warm_up: str) -> None:
    from multiprocessing.util import Finalize

    # jsonschema (pulled in by nbformat) compiles an IRI grammar on import when the optional
    # rfc3987-syntax package is present: about 1 s per process, for a string format the
    # notebook schema never uses. Without it jsonschema simply skips that format check.
    sys.modules.setdefault("rfc3987_syntax", None)

    try:
        kernel = WarmKernel(warm_up=warm_up)
        _WORKER["kernel"] = kernel
        kernel.launch()  # the kernel boots while this process imports and compiles below
        Finalize(kernel, kernel.shutdown, exitpriority=10)  # runs when the worker process ends
        import papermill  # noqa: F401

        _WORKER["exporter"] = make_exporter()
        kernel.ensure_started()
    except Exception as exc:  # noqa: BLE001 - each workbook reports it (no traceback, no
        # broken pool): a missing Jupyter part is named instead
        reason = (str(exc).strip().splitlines() or [""])[0]
        _WORKER["startup_error"] = (f"could not start Jupyter to run the workbook: "
                                    f"{type(exc).__name__}: {reason}")


def _ready() -> int:
    """A no-op task: returns once the worker has started (its initializer has run)."""
    return os.getpid()


def _first_line(text: str) -> str:
    lines = [ln for ln in str(text).strip().splitlines() if ln.strip()]
    return lines[-1] if lines else str(text)


def _run_task(task: dict) -> dict:
    """Execute and convert one workbook inside a worker; return a JSON-able outcome."""
    from papermill.exceptions import PapermillExecutionError

    if "startup_error" in _WORKER:
        return {"id": task["id"], "name": task["name"], "error": _WORKER["startup_error"],
                "seconds": 0.0}

    out_dir = Path(task["out_dir"])
    stem = task["stem"]
    html_path = _inside(out_dir, out_dir / REPORTS_DIR / f"{stem}.html")
    nb_path = _inside(out_dir, out_dir / REPORTS_DIR / f"{stem}.ipynb")
    tmp_nb = nb_path.with_name(f".{stem}.part-{os.getpid()}.ipynb")
    result = {"id": task["id"], "name": task["name"]}
    start = time.perf_counter()
    try:
        # the executed workbook is saved only when it is kept (it is most of a run's bytes)
        nb = _WORKER["kernel"].execute(task["workbook"],
                                       tmp_nb if task.get("keep_notebook") else None,
                                       task["parameters"])
        data = read_report_data(nb)
        if not data or "results" not in data:
            raise AuditError("the workbook published no results (its report-data cell)")
        html = _client_clean(convert_notebook(nb, _WORKER["exporter"]), task["paths"])
        write_atomic(html_path, html)
        _keep_notebook(tmp_nb, nb_path, task)
        results = data["results"]
        result.update(verdict=results.get("verdict"), checks=results.get("checks", []),
                      results={k: results[k] for k in RESULT_KEYS if k in results},
                      report=f"{REPORTS_DIR}/{html_path.name}",
                      notebook=f"{REPORTS_DIR}/{nb_path.name}" if nb_path.exists() else None)
    except PapermillExecutionError as exc:
        result["error"] = f"{exc.ename}: {_first_line(exc.evalue)} (workbook cell {exc.cell_index})"
    except Exception as exc:  # noqa: BLE001 - any failure is isolated to this enclosure
        result["error"] = f"{type(exc).__name__}: {_first_line(exc)}"
    if "error" in result:
        html_path.unlink(missing_ok=True)  # never leave an older verdict beside a failure
        html_path.with_suffix(".pdf").unlink(missing_ok=True)
        _keep_notebook(tmp_nb, nb_path, task)
        result["notebook"] = f"{REPORTS_DIR}/{nb_path.name}" if nb_path.exists() else None
        result["error"] = strip_machine_paths(result["error"], task["paths"])
    result["seconds"] = time.perf_counter() - start
    return result


#: A file embedded in a page (a figure's ``data:`` URI, base64): most of a report's bytes, and
#: never a machine path. Only one that starts an attribute or ``url(`` is skipped, so the text
#: either side of it is cleaned exactly as in one piece.
_DATA_URI = re.compile(r"(?<=[\"'(])data:[\w.+/-]+;base64,[A-Za-z0-9+/=]+")


def _client_clean(page: str, known: dict) -> str:
    """:func:`strip_machine_paths` on a page, around its embedded figures (about 5 x faster)."""
    parts, start = [], 0
    for match in _DATA_URI.finditer(page):
        parts += [strip_machine_paths(page[start:match.start()], known), match.group(0)]
        start = match.end()
    parts.append(strip_machine_paths(page[start:], known))
    return "".join(parts)


def _keep_notebook(tmp_nb: Path, nb_path: Path, task: dict) -> None:
    """Keep the executed workbook only when asked: it holds the auditor's own paths."""
    if task.get("keep_notebook"):
        if tmp_nb.exists():
            os.replace(tmp_nb, nb_path)
    else:
        tmp_nb.unlink(missing_ok=True)
        nb_path.unlink(missing_ok=True)  # an older run's workbook would not match the report


# --- main side --------------------------------------------------------------------------------


def _tasks(site, site_dir: Path, out_dir: Path, ids: list[str], audit_date: str | None,
           workbook: Path, keep_notebooks: bool = False) -> list[dict]:
    tasks = []
    for enclosure_id in ids:
        params = {"site_dir": str(site_dir), "enclosure_id": enclosure_id}
        if audit_date:
            params["audit_date"] = audit_date
        tasks.append({"id": enclosure_id, "name": site.enclosure(enclosure_id).name,
                      "stem": safe_stem(enclosure_id), "workbook": str(workbook),
                      "parameters": params, "out_dir": str(out_dir),
                      "paths": shown_paths(site_dir, out_dir), "keep_notebook": keep_notebooks})
    return tasks


def _overview_task(site_dir: Path, out_dir: Path, audit_date: str | None,
                   workbook: Path, keep_notebooks: bool = False) -> dict:
    """The overview workbook on the run's ``results.json`` (written before it runs)."""
    params = {"site_dir": str(site_dir), "results_json": str(out_dir / "results.json")}
    if audit_date:
        params["audit_date"] = audit_date
    return {"id": OVERVIEW_ID, "name": "Site overview", "stem": OVERVIEW_ID,
            "workbook": str(workbook), "parameters": params, "out_dir": str(out_dir),
            "paths": shown_paths(site_dir, out_dir), "keep_notebook": keep_notebooks}


def _select(site, only) -> list[str]:
    known = [e.id for e in site.records.enclosures]
    if not only:
        return known
    unknown = [i for i in only if i not in known]
    if unknown:
        raise InputError(f"no enclosure with id {', '.join(map(repr, unknown))}",
                         field="--only", hint=f"known ids: {', '.join(known)}")
    return [i for i in known if i in set(only)]


def _previous(out_dir: Path, site_name: str) -> dict[str, EnclosureOutcome]:
    """Outcomes of an earlier run into the same folder whose reports still exist."""
    path = out_dir / "results.json"
    try:
        old = json.loads(path.read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return {}
    if old.get("site") != site_name:
        return {}
    kept = {}
    for item in old.get("enclosures", []):
        report = item.get("report")
        if item.get("verdict") and report and (out_dir / report).is_file():
            known = {k: item.get(k) for k in ("id", "name", "verdict", "report", "notebook")}
            if known["notebook"] and not (out_dir / known["notebook"]).is_file():
                known["notebook"] = None
            kept[item["id"]] = EnclosureOutcome(**known, checks=item.get("checks", []),
                                                results={k: item[k] for k in RESULT_KEYS
                                                         if k in item})
    return kept


def _start_pool(jobs: int, site_dir: Path) -> ProcessPoolExecutor:
    """Start ``jobs`` workers now; each starts and warms its kernel in the background."""
    import multiprocessing

    method = "fork" if "fork" in multiprocessing.get_all_start_methods() else "spawn"
    pool = ProcessPoolExecutor(max_workers=jobs, mp_context=multiprocessing.get_context(method),
                               initializer=_init_worker,
                               initargs=(_WARM_UP.replace("SITE_DIR", repr(str(site_dir))),))
    for _ in range(jobs):  # the first submission starts the processes
        pool.submit(_ready)
    return pool


def _execute(pool: ProcessPoolExecutor, tasks: list[dict], progress: bool) -> list[dict]:
    from tqdm import tqdm

    done: list[dict] = []
    futures = {}
    for t in tasks:
        try:
            futures[pool.submit(_run_task, t)] = t
        except BrokenProcessPool:  # a worker ended before this task could be queued
            done.append({"id": t["id"], "name": t["name"], "error":
                         "the worker process for this workbook ended unexpectedly"})
    bar = tqdm(total=len(tasks), unit="workbook", desc="auditing", disable=not progress)
    try:
        for future in as_completed(futures):
            task = futures[future]
            try:
                done.append(future.result())
            except BrokenProcessPool:
                done.append({"id": task["id"], "name": task["name"], "error":
                             "the worker process running this workbook ended unexpectedly"})
            except Exception as exc:  # noqa: BLE001
                done.append({"id": task["id"], "name": task["name"],
                             "error": f"{type(exc).__name__}: {_first_line(exc)}"})
            if done[-1].get("error") and progress:  # at once, not after the whole batch
                bar.write(f"could not audit {task['id']}: {done[-1]['error']}",
                          file=sys.stderr)
            bar.update(1)
            bar.set_postfix_str(task["id"][:24])
    finally:
        bar.close()
    return done


def _order(tasks: list[dict], site) -> list[dict]:
    """Longest first: enclosures by their number of lamps and surfaces.

    With a few workers and a dozen workbooks, starting the long ones first keeps a long
    one from running alone at the end (longest-processing-time-first scheduling).
    """
    def weight(task: dict) -> int:
        enclosure = site.enclosure(task["id"])
        return sum(len(getattr(enclosure, name, None) or ())
                   for name in ("lamps", "surfaces"))

    return sorted(tasks, key=weight, reverse=True)


def run_batch(site_dir, out_dir, *, jobs: int | None = None, only=None,
              audit_date=None, overview: bool = True, progress: bool = True,
              workbook=None, overview_workbook=None, sync_history: bool = True,
              pdf: bool = False, keep_notebooks: bool = False) -> BatchResult:
    """Audit every enclosure of a site and write the reports, index and results files.

    Parameters
    ----------
    site_dir : str or PathLike
        The site folder; it is validated first and nothing runs if it is invalid.
    out_dir : str or PathLike
        Output folder (created if needed).
    jobs : int, optional
        Worker processes (default: the number of CPUs, at most one per workbook).
    only : sequence of str, optional
        Enclosure ids to audit; earlier reports of the others in ``out_dir`` are kept.
    audit_date : str or datetime.date, optional
        Date passed to the workbooks (default: the workbooks' own default); a string is
        read with :func:`audit_lib.site.dates.parse_date` before anything starts.
    overview : bool
        Also run the site overview workbook, after the enclosures, on the run's
        ``results.json`` (so it shows the reports' figures).
    progress : bool
        Show a progress bar on standard error.
    workbook, overview_workbook : str or PathLike, optional
        Workbooks to run instead of ``workbooks/enclosure_report.ipynb`` and
        ``workbooks/site_overview.ipynb`` (same parameters and report-data cell).
    sync_history : bool
        First bring ``SITE/history.sqlite`` up to date with the readings folder
        (:func:`audit_lib.history.sync.sync_site_history`); a folder that cannot be
        written gives a warning, not a failure.
    pdf : bool
        Also print every report, the overview and the index to PDF beside its HTML
        (:mod:`audit_lib.run.pdf`, the system's Chromium; checked before any work).
    keep_notebooks : bool
        Keep the executed workbooks (``reports/<id>.ipynb``) and link them from the index;
        they hold the auditor's folder paths, so by default they are removed.

    Raises
    ------
    InputErrors
        The site folder is invalid (every problem listed).
    InputError
        An id in ``only`` is not in the site, ``audit_date`` is not a date, or ``pdf`` is
        asked for and Chromium is not installed.
    """
    chromium = find_chromium() if pdf else None  # before any work
    audit_date = parse_date(audit_date, field="audit_date").isoformat() if audit_date else None
    site_dir = Path(site_dir).resolve()
    out_dir = Path(out_dir).resolve()
    # at most one worker per workbook; the count of enclosures is known only after loading
    # the site, so it is bounded by ``only`` when given
    limit = len(set(only)) if only else None
    jobs = max(1, min(jobs or os.cpu_count() or 1, limit or 1_000_000))
    pool = _start_pool(jobs, site_dir)  # workers start their kernels while the site is validated
    try:
        site = load_site(site_dir)
        ids = _select(site, only)
        if sync_history:
            try:
                sync_site_history(site)
            except AuditError as exc:
                warnings.warn(str(exc), AuditWarning, stacklevel=2)
        (out_dir / REPORTS_DIR).mkdir(parents=True, exist_ok=True)
        for stale in (out_dir / REPORTS_DIR).glob(".*.part-*"):  # left by an interrupted run
            stale.unlink(missing_ok=True)
        previous = _previous(out_dir, site.name)
        workbook = Path(workbook or ENCLOSURE_WORKBOOK).resolve()
        overview_workbook = Path(overview_workbook or OVERVIEW_WORKBOOK).resolve()
        tasks = _tasks(site, site_dir, out_dir, ids, audit_date, workbook, keep_notebooks)
        run_overview = overview and overview_workbook.exists()
    except BaseException:
        # bad input: report it now; the workers finish starting, then stop with their kernels
        pool.shutdown(wait=False, cancel_futures=True)
        raise

    def outcome(d: dict) -> EnclosureOutcome:
        return EnclosureOutcome(**{k: d[k] for k in d if k in
                                   EnclosureOutcome.__dataclass_fields__})

    try:
        by_id = {d["id"]: d for d in _execute(pool, _order(tasks, site), progress)}
        outcomes = [outcome(by_id[e.id]) if e.id in by_id else
                    previous.get(e.id, EnclosureOutcome(id=e.id, name=e.name))
                    for e in site.records.enclosures]
        result = BatchResult(site_name=site.name, out_dir=out_dir, outcomes=outcomes)
        write_outputs(result, site)
        if run_overview:  # reads the results.json just written: the reports' own figures
            task = _overview_task(site_dir, out_dir, audit_date, overview_workbook,
                                  keep_notebooks)
            for done in _execute(pool, [task], progress):
                result.overview = outcome(done)
                write_outputs(result, site)
    finally:
        pool.shutdown(wait=True, cancel_futures=True)
    if chromium:
        write_pdfs(result, site, chromium)
    return result


def outcome_dict(outcome: EnclosureOutcome) -> dict:
    """Return an outcome as a plain dict (for printing or JSON)."""
    return asdict(outcome)


def run_scenario(site_dir, name: str, out_dir, **batch_options):
    """Render a saved scenario as an enclosure report with the batch run.

    The scenario's own site folder is written to ``OUT/scenario-sites/<name>`` (see
    :func:`write_scenario_site`) and audited like any site, into ``out_dir``.

    Parameters
    ----------
    site_dir : str or PathLike
        The site folder holding ``scenarios/<name>.toml``.
    name : str
        Scenario name.
    out_dir : str or PathLike
        Output folder for the report, index and results files.
    **batch_options
        Passed to :func:`run_batch` (``jobs``, ``audit_date``,
        ``progress``...); the site overview is left out.

    Returns
    -------
    BatchResult
    """
    copy, enclosure = write_scenario_site(site_dir, name,
                                          Path(out_dir) / "scenario-sites" / name)
    batch_options.setdefault("overview", False)
    batch_options.setdefault("sync_history", False)  # the copy's history is not the site's
    return run_batch(copy, out_dir, only=[enclosure], **batch_options)
