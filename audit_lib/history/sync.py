"""The history database as derived state: kept up to date from the site's readings folder.

``light-audit forecast`` and ``light-audit run`` call :func:`sync_site_history` before they
work, so a site whose readings sit in ``SITE/readings/`` never needs a separate
``light-audit import`` (which stays for readings files kept elsewhere).

Rules
-----
* Each file of ``SITE/readings/`` is imported under its file name with
  :func:`audit_lib.history.store.import_readings`: a file whose content was imported before
  adds nothing (content hash), so a sync is idempotent and cheap.
* A file whose content changed since its last import *replaces* the readings of that
  earlier import (``replace=True``): the database follows the folder, a corrected value
  does not stand beside the old one.
* Nothing is deleted for a file that left the folder: the history keeps every audit ever
  imported (older files may be archived elsewhere).
"""

from __future__ import annotations

import sqlite3
from os import PathLike
from pathlib import Path

from audit_lib.errors import AuditError
from audit_lib.history import store
from audit_lib.site.folder import Site


def site_history_path(site: Site | str | PathLike) -> Path:
    """The history database of a site: ``SITE/history.sqlite`` (the one place that says so).

    Parameters
    ----------
    site : audit_lib.site.folder.Site or str or PathLike
        A loaded site or its folder.
    """
    root = site.root if isinstance(site, Site) else Path(site)
    return root / store.DEFAULT_DB_NAME


def sync_site_history(site: Site, db_path: str | PathLike | None = None
                      ) -> list[store.ImportSummary]:
    """Bring a site's history database up to date with its readings folder.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded (so validated) site; its readings are imported as already read.
    db_path : str or PathLike, optional
        The database; default :func:`site_history_path`. Created (and migrated) if needed,
        even when the site has no readings yet.

    Returns
    -------
    list of audit_lib.history.store.ImportSummary
        One per readings file, in name order; ``already_imported`` for unchanged files.

    Raises
    ------
    audit_lib.errors.AuditError
        The database cannot be written (e.g. a read-only folder) or is newer than this
        library understands; it is left as it was.
    """
    db_path = Path(db_path) if db_path is not None else site_history_path(site)
    readings = site.readings
    summaries = []
    try:
        store.open_history(db_path).close()
        for name in sorted(readings["source_file"].unique()):
            table = readings[readings["source_file"] == name].reset_index(drop=True)
            summaries.append(store.import_readings(db_path, table, source_file=name,
                                                   replace=True))
    except (sqlite3.Error, OSError) as exc:
        raise AuditError(f"{db_path}: cannot update the history database: {exc}") from None
    return summaries
