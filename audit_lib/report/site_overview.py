"""The site overview: every enclosure's verdict, basking maximum and lamps, read from results.

The overview audits nothing of its own. In a batch it reads the enclosures' entries of
``results.json`` (the reports' own results, :func:`audit_lib.report.enclosure.enclosure_results`);
run alone from its workbook it audits each enclosure through the same pipeline at the
reports' map spacing and takes the same entries. Either way each figure here is the
enclosure report's figure. Checks are found by their stable id.
"""

from __future__ import annotations

import datetime as dt
import json
import math
from dataclasses import dataclass, field
from html import escape
from pathlib import Path

import numpy as np
import pandas as pd

from audit_lib.errors import AuditError, InputError
from audit_lib.judge.targets import (
    ABOVE,
    ANIMAL_UVI_MEAN,
    BASKING_UVI_MAX,
    BELOW,
    FROM_MEMORY,
    REFUGE_FLOOR_SHARE,
    USED_AREA_UVI_MAX,
)
from audit_lib.pipeline.audit import DEFAULT_SPACING_M, audit_enclosure, choose_audit_date
from audit_lib.report import formats as fmt
from audit_lib.report.cautions import CAUTIONS
from audit_lib.report.enclosure import REPORT_DATA_MIMETYPE, _badge, enclosure_results
from audit_lib.report.formats import Column, HTMLBlock, header, html_table
from audit_lib.report.style import MARGINS_IN, PALETTE, STATE_COLOURS, new_figure

COULD_NOT_AUDIT = "could not be audited"


@dataclass
class SiteOverview:
    """Every enclosure of a site as its report's results give it.

    Attributes
    ----------
    site_name : str
        The site.
    audit_date : datetime.date
        The audit day.
    enclosures : list of dict
        ``results.json`` entries of the enclosures that were audited, in site order.
    errors : dict of str to str
        Enclosure id to the error that stopped its audit.
    auditor, organisation, client : str
        From the site file.
    logo_path : str or None
        The site's logo.
    """

    site_name: str
    audit_date: dt.date
    enclosures: list = field(default_factory=list)
    errors: dict = field(default_factory=dict)
    auditor: str = ""
    organisation: str = ""
    client: str = ""
    logo_path: str | None = None


def site_overview(site, *, results_json: str = "", audit_date=None,
                  spacing_m: float = DEFAULT_SPACING_M) -> SiteOverview:
    """The overview of a site, from a batch's results or by auditing each enclosure.

    Parameters
    ----------
    site : audit_lib.site.folder.Site
        A loaded site.
    results_json : str or PathLike
        A batch's ``results.json``; its enclosure entries are used as they are. Empty: each
        enclosure is audited here (:func:`audit_lib.pipeline.audit.audit_enclosure`, no
        failure study, which feeds no check) and turned into the same entries.
    audit_date : str or datetime.date, optional
        Audit day (default :func:`audit_lib.pipeline.audit.choose_audit_date`).
    spacing_m : float
        Map spacing when auditing here: the enclosure reports' by default [m].

    Raises
    ------
    InputError
        ``results_json`` cannot be read, or belongs to another site.
    """
    info = site.records.site
    day = choose_audit_date(site, audit_date)
    overview = SiteOverview(site.name, day, auditor=info.auditor,
                            organisation=info.organisation, client=info.client,
                            logo_path=str(site.path_of(info.logo)) if info.logo else None)
    if results_json:
        path = Path(results_json)
        try:
            doc = json.loads(path.read_text(encoding="utf-8"))
        except (OSError, ValueError) as exc:
            raise InputError(f"cannot read the batch results: {exc}", path=path,
                             field="results_json") from None
        if doc.get("site") != site.name:
            raise InputError(f"the results belong to site {doc.get('site')!r}, not "
                             f"{site.name!r}", path=path, field="site")
        for entry in doc.get("enclosures", []):
            if entry.get("error"):
                overview.errors[entry["id"]] = entry["error"]
            elif entry.get("verdict"):
                overview.enclosures.append(entry)
        dates = {e.get("audit_date") for e in overview.enclosures} - {None}
        if len(dates) == 1:
            overview.audit_date = dt.date.fromisoformat(dates.pop())
        return overview
    for record in site.records.enclosures:
        try:
            audit = audit_enclosure(site, record.id, audit_date=day, spacing_m=spacing_m,
                                    with_failures=False)
        except (AuditError, ValueError, ArithmeticError) as exc:
            overview.errors[record.id] = f"{type(exc).__name__}: {exc}"
        else:
            overview.enclosures.append(enclosure_results(audit))
    return overview


def find_check(entry: dict, check_id: str) -> dict | None:
    """The first check of an enclosure entry with this id (the first species'), or None."""
    return next((c for c in entry.get("checks", []) if c.get("check_id") == check_id), None)


def _value(check, scale=1.0):
    if check is None or check.get("value") is None:
        return math.nan
    return scale * float(check["value"])


def from_memory_checks(entry: dict) -> list[str]:
    """Ids of the checks of an enclosure entry whose target rests on values from memory."""
    return list(dict.fromkeys(c["check_id"] for c in entry.get("checks", [])
                              if c.get("basis") == FROM_MEMORY))


def verdict_table(overview: SiteOverview) -> pd.DataFrame:
    """One row per enclosure: verdict, zone, UV Index top, animal mean, refuge share, ...

    ``from_memory`` lists the checks whose targets are from memory. The UV Index top is
    the basking maximum of a basking-patch species (``basking_max_uvi``) or the used-area
    maximum of a whole-enclosure gradient species (``used_area_max_uvi``); ``basking_state``
    is that check's state.
    """
    rows = []
    for e in overview.enclosures:
        bask = find_check(e, BASKING_UVI_MAX)
        used = find_check(e, USED_AREA_UVI_MAX)
        top = bask or used
        rows.append({
            "enclosure": e["id"], "name": e["name"], "verdict": e["verdict"],
            "zone": e.get("zone"), "basking_max_uvi": _value(bask),
            "used_area_max_uvi": _value(used),
            "basking_state": top["state"] if top else "",
            "animal_mean_uvi": _value(find_check(e, ANIMAL_UVI_MEAN)),
            "refuge_share_pct": _value(find_check(e, REFUGE_FLOOR_SHARE), 100.0),
            "checks_out_of_range": sum(c["state"] in (BELOW, ABOVE) for c in e["checks"]),
            "from_memory": ", ".join(from_memory_checks(e))})
    for enclosure_id, error in overview.errors.items():
        rows.append({"enclosure": enclosure_id, "verdict": COULD_NOT_AUDIT, "name": error})
    if not rows:
        return pd.DataFrame({"note": ["no enclosures"]})
    return pd.DataFrame(rows).set_index("enclosure").round(2)


def plot_basking_ranges(overview: SiteOverview):
    """UV Index top of each enclosure against its zone's range (the check's).

    The basking maximum of a basking patch, the used-area maximum of a gradient (marked).
    """
    found = [(e["id"] if c["check_id"] == BASKING_UVI_MAX else f"{e['id']} (gradient)", c)
             for e in overview.enclosures
             if (c := find_check(e, BASKING_UVI_MAX) or find_check(e, USED_AREA_UVI_MAX))
             is not None]
    # one row per enclosure; rows closer together for a large collection (still one label
    # each); bands and markers drawn as one collection each, so a few hundred rows stay cheap
    row_in = 0.32 if len(found) <= 40 else 0.2
    longest = max((len(label) for label, _ in found), default=0)
    fig, ax = new_figure(7.5, max(2.5, row_in * len(found) + 1.0),
                         margins_in=(max(MARGINS_IN[0], 0.25 + 0.065 * longest),
                                     *MARGINS_IN[1:]))  # room for the longest 8 pt label
    rows = np.arange(len(found))
    low = [c["target_low"] for _, c in found]
    high = [c["target_high"] if c["target_high"] is not None else c["target_low"]
            for _, c in found]
    ax.hlines(rows, low, high, color=PALETTE["bluish green"], lw=8 if row_in > 0.3 else 5,
              alpha=0.35, capstyle="butt")
    markers = {"within range": "o", BELOW: "<", ABOVE: ">"}
    for state in {c["state"] for _, c in found}:
        here = [(i, c["value"]) for i, (_, c) in enumerate(found)
                if c["state"] == state and c["value"] is not None]
        if here:
            ax.scatter([v for _, v in here], [i for i, _ in here],
                       marker=markers.get(state, "s"), s=64 if row_in > 0.3 else 30,
                       color=STATE_COLOURS.get(state, "#999999"), edgecolors="black", zorder=3)
    ax.set_yticks(rows, [i for i, _ in found], fontsize=8)
    ax.set_ylim(len(found) - 0.5, -0.5)  # first enclosure on top, half a row around
    ax.set_xlabel("highest UV Index [-] at the basking patch, or over the area used (gradient)\n"
                  "(band: zone range, from memory; ◀ below, ● within, ▶ above, ■ borderline)")
    ax.grid(axis="x", alpha=0.3)
    ax.set_xlim(left=0)
    return fig


def replacement_table(overview: SiteOverview) -> pd.DataFrame:
    """Every lamp of the site with its state and forecast date, most urgent first."""
    rows = [{"enclosure": e["id"], "lamp": lamp["id"], "lamp_model": lamp["model"],
             "age_days": lamp.get("age_days"), "last_uvi": lamp.get("last_uvi"),
             "target_min_uvi": lamp.get("target_min_uvi"), "replace_by": lamp["replace_by"],
             "state": lamp["forecast_state"]}
            for e in overview.enclosures for lamp in e.get("lamps", [])]
    if not rows:
        return pd.DataFrame({"note": ["no lamps"]})
    t = pd.DataFrame(rows)
    order = {"below target": 0, "due soon": 1}
    t["_rank"] = t["state"].map(lambda s: order.get(s, 2))
    t = t.sort_values(["_rank", "replace_by"], na_position="last").drop(columns="_rank")
    t["replace_by"] = t["replace_by"].map(lambda d: "no forecast" if pd.isna(d) else d)
    return t.round(2).set_index(["enclosure", "lamp"])


def audit_dates(overview: SiteOverview) -> list[str]:
    """The distinct audit dates of the enclosures shown, oldest first (ISO)."""
    return sorted({e.get("audit_date") for e in overview.enclosures} - {None})


def _check_cell(entry: dict, check_id: str, *, with_range: bool = False) -> str:
    check = find_check(entry, check_id)
    if check is None:
        return fmt.MISSING
    figure = fmt.check_text(check)
    if with_range:
        figure += (f' <span class="small">({fmt.check_range_text(check)})</span>'
                   if check.get("target_low") is not None else "")
    return figure


def verdicts_html(overview: SiteOverview) -> HTMLBlock:
    """The verdict table as the report shows it: words and units, each report's figures."""
    mixed = len(audit_dates(overview)) > 1
    rows = [{"enclosure": f"{e['id']} – {e['name']}", "date": e.get("audit_date"),
             "zone": e.get("zone"), "verdict": _badge(e["verdict"]),
             "bask": _check_cell(e, BASKING_UVI_MAX if find_check(e, BASKING_UVI_MAX)
                                 else USED_AREA_UVI_MAX, with_range=True),
             "mean": _check_cell(e, ANIMAL_UVI_MEAN),
             "refuge": _check_cell(e, REFUGE_FLOOR_SHARE),
             "off": sum(c["state"] in (BELOW, ABOVE) for c in e["checks"])}
            for e in overview.enclosures]
    rows += [{"enclosure": enclosure_id, "verdict": _badge(COULD_NOT_AUDIT),
              "bask": escape(error)} for enclosure_id, error in overview.errors.items()]
    if not rows:
        return fmt.note("No enclosures.")
    columns = [Column("enclosure", "Enclosure"),
               *([Column("date", "Audit date", "date")] if mixed else []),
               Column("zone", "Zone", "count"), Column("verdict", "Verdict", "html"),
               Column("bask", "Highest UV Index [UVI] (target; basking or used area)",
                      "html_num"),
               Column("mean", header("Animal's mean", "uvi"), "html_num"),
               Column("refuge", header("Low-UV refuge share of floor", "share_pct"), "html_num"),
               Column("off", "Checks outside range", "count")]
    return html_table(rows, columns)


def replacements_html(overview: SiteOverview) -> HTMLBlock:
    """Every lamp of the site, most urgent first, as :func:`replacement_table` orders them."""
    table = replacement_table(overview)
    if "note" in table.columns:
        return fmt.note("No lamps.")
    rows = [{**r, "enclosure_lamp": f"{r['enclosure']} / {r['lamp']}",
             "replace_by": fmt.date_text(r["replace_by"]) if r["replace_by"] != "no forecast"
             else "no forecast", "state": _badge(r["state"])}
            for r in table.reset_index().to_dict("records")]
    return html_table(rows, [
        Column("enclosure_lamp", "Enclosure / lamp"), Column("lamp_model", "Lamp model"),
        Column("age_days", header("Age", "days"), "days"),
        Column("last_uvi", header("Latest reading", "uvi"), "uvi"),
        Column("target_min_uvi", header("Lowest acceptable", "uvi"), "uvi"),
        Column("replace_by", "Replace by"), Column("state", "State", "html")])


def overview_data(overview: SiteOverview) -> dict:
    """Report data of the overview (header for the template; verdict counts as results)."""
    dates = audit_dates(overview) or [overview.audit_date.isoformat()]
    facts = [("Site", overview.site_name),
             ("Audit dates" if len(dates) > 1 else "Audit date", ", ".join(dates))]
    facts += [(label, value) for label, value in (
        ("Auditor", overview.auditor), ("Organisation", overview.organisation),
        ("Client", overview.client)) if value]
    counts = {}
    for e in overview.enclosures:
        counts[e["verdict"]] = counts.get(e["verdict"], 0) + 1
    return {"report": {"kind": "Lighting audit: site overview", "title": overview.site_name,
                       "facts": facts, "logo_path": overview.logo_path,
                       "cautions": list(CAUTIONS), "provenance": [
                           ("Enclosures audited", str(len(overview.enclosures))),
                           ("Enclosures with errors", str(len(overview.errors)))]},
            "results": {"id": "site-overview", "verdict": "overview",
                        "verdict_counts": counts, "checks": []}}


def publish_overview_data(overview: SiteOverview) -> None:
    """Display the overview's report data for the batch (hidden in the report)."""
    from IPython.display import display

    display({REPORT_DATA_MIMETYPE: overview_data(overview),
             "text/plain": f"overview data recorded: {len(overview.enclosures)} enclosures"},
            raw=True)
