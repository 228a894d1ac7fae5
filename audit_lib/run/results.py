"""The batch's results files: ``results.json`` (a documented contract) and ``results.csv``.

Both are written from the enclosures' own results (each workbook's report data, see
:func:`audit_lib.report.enclosure.enclosure_results`); nothing here computes a figure. Keys are
listed in ``docs/batch-reports.md``; checks carry their stable ``check_id``.
``results.json`` keeps full precision; ``results.csv`` holds each figure rounded as the reports
show it (:mod:`audit_lib.report.formats`), with ``site`` and ``audit_date`` on every row so the
files of several audits stack, and is written as UTF-8 with a byte-order mark so spreadsheets
read non-ASCII names correctly.
Sources: RFC 8259 (JSON: no NaN or Infinity, so they become null) and RFC 4180 (CSV).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math

from audit_lib import __version__
from audit_lib.report.formats import check_rounded

#: Columns of ``results.csv`` (one row per check; one row per enclosure that failed).
CSV_COLUMNS = ("site", "audit_date", "enclosure", "enclosure_name", "verdict", "check",
               "check_id", "value", "unit", "target_low", "target_high", "state", "reason",
               "error", "basis", "source")
#: Keys of a check in ``results.json`` (docs/batch-reports.md).
CHECK_KEYS = ("check_id", "name", "species", "value", "unit", "target_low", "target_high",
              "state", "reason", "basis", "source",
              "value_low", "value_high")
#: Keys of an enclosure entry beyond the outcome's own (from the workbook's results), with
#: their value when the workbook gave none.
RESULT_KEYS = {"audit_date": None, "zone": None, "reason": None, "recommendation": None,
               "actions": [], "lamps": [], "plan": None}


def _clean(value):
    if isinstance(value, float) and not math.isfinite(value):
        return None
    return value


def results_document(result) -> dict:
    """Return the ``results.json`` content of a batch run (JSON-able, no NaN)."""
    def one(o) -> dict:
        checks = [{k: _clean(c.get(k)) for k in CHECK_KEYS} for c in o.checks]
        entry = {"id": o.id, "name": o.name, "verdict": o.verdict, "report": o.report,
                 "notebook": o.notebook, "error": o.error, "checks": checks}
        entry.update({k: o.results.get(k, default) for k, default in RESULT_KEYS.items()})
        return entry

    doc = {"site": result.site_name, "library_version": __version__,
           "generated": dt.datetime.now(dt.timezone.utc).isoformat(timespec="seconds"),
           "enclosures": [one(o) for o in result.outcomes]}
    if result.overview is not None:
        doc["overview"] = {k: v for k, v in one(result.overview).items()
                           if k not in ("checks", *RESULT_KEYS)}
    return doc


def _shown(check: dict, key: str):
    value = check_rounded(check, key)
    if value is None or math.isinf(value):
        return ""
    return str(int(value)) if value.is_integer() else repr(value)


def results_csv(doc: dict) -> str:
    """Return ``results.csv``: one row per check, one row per enclosure that failed.

    Figures (``value``, ``target_low``, ``target_high``) are rounded as the reports show
    them, in the check's own ``unit``; an empty cell is a missing figure or no upper limit.
    The text has no byte-order mark: the caller writes it as ``utf-8-sig``.
    """
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=CSV_COLUMNS, lineterminator="\r\n")
    writer.writeheader()
    for enc in doc["enclosures"]:
        base = {"site": doc.get("site", ""), "audit_date": enc.get("audit_date") or "",
                "enclosure": enc["id"], "enclosure_name": enc["name"],
                "verdict": enc["verdict"] or "", "error": enc["error"] or ""}
        if not enc["checks"] and (enc["verdict"] or enc["error"]):
            writer.writerow(base)  # an enclosure not audited in any run has no row
        for check in enc["checks"]:
            row = dict(base, check=check["name"], check_id=check["check_id"],
                       unit=check["unit"], state=check["state"], reason=check["reason"],
                       basis=check.get("basis") or "", source=check.get("source") or "")
            row.update({k: _shown(check, k) for k in ("value", "target_low", "target_high")})
            writer.writerow(row)
    return buf.getvalue()
