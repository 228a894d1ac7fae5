"""HTML to PDF with headless Chromium (Debian's ``chromium`` package), for printed pages.

One function for every PDF the project writes. Chromium prints with the page's own print
CSS (``@page`` size and margins); no network is used (the pages are self-contained and the
browser's background services are switched off).
"""

from __future__ import annotations

import shutil
import subprocess
import tempfile
from os import PathLike
from pathlib import Path

from audit_lib.errors import AuditError, InputError

#: Executables tried in order (Debian installs ``chromium``).
CHROMIUM_NAMES = ("chromium", "chromium-browser")
#: Seconds one page may take to print.
PRINT_TIMEOUT_S = 120


def find_chromium() -> str:
    """Return the path of the Chromium executable.

    Raises
    ------
    InputError
        No Chromium on ``PATH`` (the command line exits with status 2).
    """
    for name in CHROMIUM_NAMES:
        found = shutil.which(name)
        if found:
            return found
    raise InputError("cannot write a PDF: Chromium is not installed", field="--pdf",
                     hint="install it (Debian: apt-get install chromium), or leave out --pdf "
                          "and print the HTML page from a browser")


def html_to_pdf(html_path: str | PathLike, pdf_path: str | PathLike) -> Path:
    """Print an HTML file to PDF with headless Chromium.

    Parameters
    ----------
    html_path : str or PathLike
        A self-contained HTML file.
    pdf_path : str or PathLike
        The PDF to write (replaced if it exists).

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
    browser = find_chromium()
    html_path, pdf_path = Path(html_path).resolve(), Path(pdf_path).resolve()
    pdf_path.unlink(missing_ok=True)  # never mistake an old PDF for this one
    with tempfile.TemporaryDirectory(prefix="light-audit-chromium-") as profile:
        command = [browser, "--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                   "--disable-background-networking", "--disable-component-update",
                   "--disable-sync", f"--user-data-dir={profile}", "--no-pdf-header-footer",
                   f"--print-to-pdf={pdf_path}", html_path.as_uri()]
        try:
            done = subprocess.run(command, capture_output=True, text=True,
                                  timeout=PRINT_TIMEOUT_S, check=False)
        except subprocess.TimeoutExpired:
            raise AuditError(f"{pdf_path}: Chromium took over {PRINT_TIMEOUT_S} s") from None
    if done.returncode != 0 or not pdf_path.is_file() or pdf_path.stat().st_size == 0:
        tail = (done.stderr or "").strip().splitlines()[-1:] or ["no message"]
        raise AuditError(f"{pdf_path}: Chromium could not print {html_path.name}: {tail[0]}")
    return pdf_path
