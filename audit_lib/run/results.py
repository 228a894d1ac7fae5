"""The batch's results files: ``results.json`` (a documented contract) and ``results.csv``.

Both are written from the enclosures' own results (each workbook's report data, see
:func:`audit_lib.report.enclosure.enclosure_results`); nothing here computes a figure. Keys are
listed in ``docs/batch-reports.md``; checks carry their stable ``check_id``.
Sources: RFC 8259 (JSON: no NaN or Infinity, so they become null) and RFC 4180 (CSV).
"""

from __future__ import annotations

import csv
import datetime as dt
import io
import math

from audit_lib import __version__

#: Columns of ``results.csv`` (one row per check; one row per enclosure that failed).
CSV_COLUMNS = ("enclosure", "enclosure_name", "verdict", "check", "check_id", "value", "unit",
               "target_low", "target_high", "state", "reason", "error", "basis", "source")
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


def results_csv(doc: dict) -> str:
    """Return ``results.csv``: one row per check, one row per enclosure without checks."""
    buf = io.StringIO()
    writer = csv.DictWriter(buf, fieldnames=CSV_COLUMNS, lineterminator="\n")
    writer.writeheader()
    for enc in doc["enclosures"]:
        base = {"enclosure": enc["id"], "enclosure_name": enc["name"],
                "verdict": enc["verdict"] or "", "error": enc["error"] or ""}
        if not enc["checks"]:
            writer.writerow(base)
        for check in enc["checks"]:
            row = dict(base, check=check["name"])
            row.update({k: ("" if check.get(k) is None else check[k]) for k in CSV_COLUMNS
                        if k in CHECK_KEYS})
            writer.writerow(row)
    return buf.getvalue()
