"""HTML to PDF with headless Chromium (Debian's ``chromium`` package), for printed pages.

One function prints every PDF the project writes (:func:`html_to_pdf`); :func:`print_pdfs`
prints a batch's pages a few at a time. Chromium prints with the page's own print CSS
(``@page`` size and margins); no network is used (the pages are self-contained and the
browser's background services are switched off) and nothing is downloaded. Each page is
printed by its own short-lived browser with a fresh profile folder, under a temporary name
that is renamed into place, so an interrupted run never leaves a truncated PDF.

Source: Chromium's documented headless switches (``--headless``, ``--print-to-pdf``,
``--no-pdf-header-footer``, ``--user-data-dir``) and those for running on a closed network
(``--disable-background-networking``, ``--disable-component-update``, ``--disable-sync``).
"""

from __future__ import annotations

import os
import shutil
import subprocess
import tempfile
from concurrent.futures import ThreadPoolExecutor
from os import PathLike
from pathlib import Path

from audit_lib.errors import AuditError, InputError

#: Executables tried in order (Debian installs ``chromium``).
CHROMIUM_NAMES = ("chromium", "chromium-browser")
#: Switches for a headless print with no network, no first-run work and no GPU.
CHROMIUM_SWITCHES = ("--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                     "--disable-background-networking", "--disable-component-update",
                     "--disable-sync", "--disable-dev-shm-usage", "--no-pdf-header-footer")
#: Seconds one page may take to print.
PRINT_TIMEOUT_S = 120


def find_chromium() -> str:
    """Return the path of the Chromium executable.

    Raises
    ------
    InputError
        No Chromium on ``PATH`` (the command line exits with status 2, before any work).
    """
    for name in CHROMIUM_NAMES:
        found = shutil.which(name)
        if found:
            return found
    raise InputError("cannot write a PDF: Chromium is not installed", field="--pdf",
                     hint="install it (Debian: apt-get install chromium), or leave out --pdf "
                          "and print the HTML page from a browser")


def html_to_pdf(html_path: str | PathLike, pdf_path: str | PathLike,
                chromium: str | None = None) -> Path:
    """Print an HTML file to PDF with headless Chromium.

    Parameters
    ----------
    html_path : str or PathLike
        A self-contained HTML file.
    pdf_path : str or PathLike
        The PDF to write (replaced atomically if it exists).
    chromium : str, optional
        The browser (default :func:`find_chromium`).

    Returns
    -------
    pathlib.Path
        ``pdf_path``.

    Raises
    ------
    InputError
        Chromium is missing (:func:`find_chromium`).
    audit_lib.errors.AuditError
        Chromium failed or wrote no PDF.
    """
    browser = chromium or find_chromium()
    html_path, pdf_path = Path(html_path).resolve(), Path(pdf_path).resolve()
    tmp = pdf_path.with_name(f".{pdf_path.stem}.part-{os.getpid()}.pdf")
    tmp.unlink(missing_ok=True)
    with tempfile.TemporaryDirectory(prefix="light-audit-chromium-") as profile:
        command = [browser, *CHROMIUM_SWITCHES, f"--user-data-dir={profile}",
                   f"--print-to-pdf={tmp}", html_path.as_uri()]
        try:
            done = subprocess.run(command, capture_output=True, text=True,
                                  timeout=PRINT_TIMEOUT_S, check=False)
        except subprocess.TimeoutExpired:
            tmp.unlink(missing_ok=True)
            raise AuditError(f"{pdf_path.name}: Chromium took over {PRINT_TIMEOUT_S} s") \
                from None
    if done.returncode != 0 or not tmp.is_file() or tmp.stat().st_size == 0:
        tmp.unlink(missing_ok=True)
        tail = (done.stderr or "").strip().splitlines()[-1:] or ["no message"]
        raise AuditError(f"{pdf_path.name}: Chromium could not print {html_path.name}: "
                         f"{tail[0]}")
    os.replace(tmp, pdf_path)
    return pdf_path


def print_pdfs(html_paths, *, chromium: str | None = None, jobs: int = 3) -> dict:
    """Print pages to PDF beside them (``x.html`` → ``x.pdf``), a few browsers at a time.

    Chromium spends most of its time waiting, not computing, so a few run at once.

    Returns
    -------
    dict of Path to str
        Pages that could not be printed, with the reason; the others have their PDF.
    """
    chromium = chromium or find_chromium()
    paths = [Path(p) for p in html_paths]

    def one(path: Path):
        try:
            html_to_pdf(path, path.with_suffix(".pdf"), chromium)
        except (AuditError, OSError) as exc:
            return path, str(exc)
        return path, None

    with ThreadPoolExecutor(max_workers=max(1, jobs)) as pool:
        return {p: e for p, e in pool.map(one, paths) if e}
