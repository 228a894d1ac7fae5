"""PDF copies of the batch's pages, printed by the system's headless Chromium.

The browser is the one the operating system provides (Debian's ``chromium`` package); nothing
is downloaded at run time. Each page is printed by its own short-lived browser with a fresh
profile folder, under a temporary name that is renamed into place, so an interrupted run
never leaves a truncated PDF. The pages' own print style sheet sets A4 and the page breaks.

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
from pathlib import Path

from audit_lib.errors import InputError

#: Names the system's Chromium goes by (Debian: ``chromium``).
CHROMIUM_NAMES = ("chromium", "chromium-browser")
#: Switches for a headless print with no network, no first-run work and no GPU.
CHROMIUM_SWITCHES = ("--headless", "--no-sandbox", "--disable-gpu", "--no-first-run",
                     "--disable-background-networking", "--disable-component-update",
                     "--disable-sync", "--disable-dev-shm-usage", "--no-pdf-header-footer")
#: Longest a page may take to print [s].
PRINT_TIMEOUT_S = 120.0


def find_chromium() -> str:
    """Return the path of the system's Chromium.

    Raises
    ------
    InputError
        No ``chromium`` on the PATH (checked before any work, so ``--pdf`` fails early).
    """
    for name in CHROMIUM_NAMES:
        found = shutil.which(name)
        if found:
            return found
    raise InputError("--pdf needs the Chromium web browser, which is not installed "
                     "(no 'chromium' on the PATH)", field="--pdf",
                     hint="install it with 'apt-get install chromium' (Debian, Ubuntu), "
                          "or run without --pdf and print the HTML reports from a browser")


def print_pdf(html_path, pdf_path, chromium: str | None = None) -> Path:
    """Print one HTML page to PDF with headless Chromium.

    Parameters
    ----------
    html_path, pdf_path : str or PathLike
        The page and the PDF to write (replaced atomically).
    chromium : str, optional
        The browser (default :func:`find_chromium`).

    Raises
    ------
    RuntimeError
        The browser failed or wrote no PDF (its last line of output is given).
    """
    chromium = chromium or find_chromium()
    html_path, pdf_path = Path(html_path).resolve(), Path(pdf_path)
    tmp = pdf_path.with_name(f".{pdf_path.stem}.part-{os.getpid()}.pdf")
    with tempfile.TemporaryDirectory(prefix="light-audit-chromium-") as profile:
        try:
            run = subprocess.run(
                [chromium, *CHROMIUM_SWITCHES, f"--user-data-dir={profile}",
                 f"--print-to-pdf={tmp}", html_path.as_uri()],
                capture_output=True, text=True, timeout=PRINT_TIMEOUT_S, check=False)
        except subprocess.TimeoutExpired:
            tmp.unlink(missing_ok=True)
            raise RuntimeError(f"Chromium took more than {PRINT_TIMEOUT_S:.0f} s") from None
    if run.returncode != 0 or not tmp.is_file() or tmp.stat().st_size == 0:
        tmp.unlink(missing_ok=True)
        last = (run.stderr.strip().splitlines() or [f"exit status {run.returncode}"])[-1]
        raise RuntimeError(f"Chromium could not print the page: {last}")
    os.replace(tmp, pdf_path)
    return pdf_path


def print_pdfs(html_paths, *, chromium: str | None = None, jobs: int = 3) -> dict:
    """Print pages to PDF beside them (``x.html`` → ``x.pdf``), a few browsers at a time.

    Returns
    -------
    dict of Path to str
        Pages that could not be printed, with the reason; the others have their PDF.
    """
    chromium = chromium or find_chromium()
    paths = [Path(p) for p in html_paths]

    def one(path: Path):
        try:
            print_pdf(path, path.with_suffix(".pdf"), chromium)
        except (RuntimeError, OSError) as exc:
            return path, str(exc)
        return path, None

    with ThreadPoolExecutor(max_workers=max(1, jobs)) as pool:
        return {p: e for p, e in pool.map(one, paths) if e}
