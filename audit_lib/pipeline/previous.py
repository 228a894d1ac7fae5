"""The previous audit of an enclosure, for the report's year-on-year comparison.

One source for each part: the date of the previous audit and the lamp readings of both
audits come from the history store (``SITE/history.sqlite``, kept up to date from the
readings folder by :func:`audit_lib.history.sync.sync_site_history`); the previous audit's
basking maximum, checks and verdict come from the same pipeline as every report
(:func:`audit_lib.pipeline.audit.audit_findings`, the audit's stages up to its checks, at the
previous audit's date), so they are the figures a report of that day shows with this library
version.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass, field
from pathlib import Path

import pandas as pd

from audit_lib.errors import AuditError
from audit_lib.history import store
from audit_lib.history.sync import site_history_path
from audit_lib.pipeline.audit import DEFAULT_SPACING_M, audit_findings


@dataclass
class PreviousAudit:
    """The audit before this one, or why there is none.

    Attributes
    ----------
    audit_date : datetime.date or None
        Day of the previous audit on record; None when there is none.
    audit : Findings or None
        The pipeline's figures, checks and verdict of that day; None when there is no
        previous audit or its readings are no longer in the readings folder.
    readings : pandas.DataFrame
        UV Index readings of both audits from the history store, columns ``date``
        (datetime64), ``lamp``, ``position``, ``distance_m`` [m], ``value_si`` [-] (as read,
        before any meter correction).
    missing : str
        Why there is no comparison (empty when there is one).
    """

    audit_date: dt.date | None
    audit: object = None
    readings: pd.DataFrame = field(default_factory=pd.DataFrame)
    missing: str = ""


def previous_audit(site, enclosure_id: str, audit_date: dt.date, *,
                   spacing_m: float = DEFAULT_SPACING_M, db_path=None) -> PreviousAudit:
    """Find the audit before ``audit_date`` in the history store and audit that day again.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    enclosure_id : str
        The enclosure.
    audit_date : datetime.date
        This audit's day; the previous audit is the latest earlier day with readings of the
        enclosure in the history store.
    spacing_m : float
        Map spacing, the report's [m].
    db_path : str or PathLike, optional
        History database (default ``SITE/history.sqlite``); read only.
    """
    path = site_history_path(site) if db_path is None else Path(db_path)
    if not path.exists():
        return PreviousAudit(None, missing="there is no history store of this site yet "
                                           "(a batch run creates it from the readings folder)")
    try:
        readings = store.read_all_readings(path, enclosure=enclosure_id)
    except (AuditError, OSError, ValueError) as exc:
        return PreviousAudit(None, missing=f"the history store cannot be read ({exc})")
    day = pd.Timestamp(audit_date)
    earlier = readings.loc[readings["date"] < day, "date"]
    if earlier.empty:
        return PreviousAudit(None, missing="the history holds no earlier audit of this "
                                           "enclosure")
    previous = earlier.max()
    uvi = readings[(readings["quantity"] == "uvi")
                   & readings["date"].isin([previous, day])]
    uvi = uvi[["date", "lamp", "position", "distance_m", "value_si"]].reset_index(drop=True)
    found = PreviousAudit(previous.date(), readings=uvi)
    if not (site.readings_of(enclosure_id)["date"] == previous).any():
        found.missing = ("the readings of that audit are no longer in the readings folder, "
                         "so its figures cannot be modelled again; its readings are shown")
        return found
    try:
        found.audit = audit_findings(site, enclosure_id, audit_date=previous.date(),
                                     spacing_m=spacing_m)
    except (AuditError, ValueError, ArithmeticError) as exc:  # the comparison is extra:
        # it never stops this audit's report
        found.missing = (f"that audit's figures could not be modelled again "
                         f"({type(exc).__name__}: {exc}); its readings are shown")
    return found
