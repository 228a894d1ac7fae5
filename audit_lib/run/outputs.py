"""The batch's shared outputs: ``results.json``, ``results.csv``, ``index.html`` and PDFs.

Written from the enclosures' outcomes (nothing here computes a figure), each file
atomically, with every error message made client-clean (no absolute machine path:
:func:`audit_lib.report.paths.strip_machine_paths`).
"""

from __future__ import annotations

import json
import os
import re
from pathlib import Path

from audit_lib import __version__
from audit_lib.report.index_page import render_index
from audit_lib.report.paths import strip_machine_paths
from audit_lib.run.notebooks import logo_data_uri, write_atomic
from audit_lib.run.pdf import print_pdfs
from audit_lib.run.results import results_csv, results_document

#: Folder of the reports inside the output folder.
REPORTS_DIR = "reports"
#: A link of the index: its address and text (for the printed copy: the file's name).
_LINK = re.compile(r'<a href="(?:[^"/]*/)*([^"]*)">[^<]*</a>')


def shown_paths(site_dir: Path, out_dir: Path) -> dict:
    """Folders as pages show them: the site folder by its name, the output folder as ''."""
    return {str(site_dir): Path(site_dir).name, str(out_dir): ""}


def existing_pdfs(out_dir: Path) -> list[str]:
    """PDF files in the output folder and its reports, relative to it."""
    return sorted(p.relative_to(out_dir).as_posix()
                  for folder in (out_dir, out_dir / REPORTS_DIR) for p in folder.glob("*.pdf")
                  if not p.name.startswith("."))


def write_outputs(result, site=None) -> None:
    """Write ``results.json``, ``results.csv`` and ``index.html`` (each atomically)."""
    paths = shown_paths(Path(site.root), result.out_dir) if site is not None else {}
    for o in (*result.outcomes, result.overview):
        if o is not None and o.error:
            o.error = strip_machine_paths(o.error, paths)
    doc = results_document(result)
    write_atomic(result.out_dir / "results.json", json.dumps(doc, indent=2, allow_nan=False))
    write_atomic(result.out_dir / "results.csv", results_csv(doc).encode("utf-8-sig"))
    facts, logo = [], ""
    if site is not None:
        info = site.records.site
        facts = [(label, value) for label, value in (
            ("Organisation", info.organisation), ("Client", info.client),
            ("Auditor", info.auditor)) if value]
        logo = logo_data_uri(site.path_of(info.logo)) if info.logo else ""
    html = render_index(result.site_name, result.outcomes, facts=facts,
                        overview=result.overview, library_version=__version__,
                        logo_data_uri=logo, pdfs=existing_pdfs(result.out_dir))
    write_atomic(result.index_path, html)


def write_pdfs(result, site, chromium: str) -> None:
    """Print every report of the index and the overview, then the index itself, to PDF.

    Pages that cannot be printed are listed in ``result.pdf_errors`` (path relative to the
    output folder → reason); the others are printed all the same.
    """
    pages = [o.report for o in (*result.outcomes, result.overview)
             if o is not None and o.report and not o.error]
    errors = print_pdfs([result.out_dir / p for p in pages], chromium=chromium)
    write_outputs(result, site)  # the index now links the PDFs
    # Chromium turns each link into an absolute file:// address of this machine, so the
    # index is printed from a copy whose links are plain file names
    printable = result.out_dir / f".index-print-{os.getpid()}.html"
    write_atomic(printable, _LINK.sub(lambda m: f'<span class="file">{m.group(1)}</span>',
                                      result.index_path.read_text(encoding="utf-8")))
    try:
        errors.update(print_pdfs([printable], chromium=chromium))
        pdf = printable.with_suffix(".pdf")
        if pdf.exists():
            os.replace(pdf, result.index_path.with_suffix(".pdf"))
    finally:
        printable.unlink(missing_ok=True)
    result.pdf_errors = {("index.html" if p == printable else
                          p.relative_to(result.out_dir).as_posix()): e
                         for p, e in errors.items()}
