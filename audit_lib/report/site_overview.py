"""Tables and the figure of the site overview (views of a site audit)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from audit_lib.report.cautions import CAUTIONS
from audit_lib.report.enclosure import REPORT_DATA_MIMETYPE
from audit_lib.report.style import PALETTE, STATE_COLOURS, new_figure


def _check(audit, name: str):
    for c in audit.checks:
        if c.name.startswith(name):
            return c
    return None


def verdict_table(overview) -> pd.DataFrame:
    """One row per enclosure: verdict, species zone, basking maximum, animal mean, refuge."""
    rows = []
    for a in overview.audits:
        bask, mean, refuge = (_check(a, n) for n in (
            "basking UV Index maximum", "mean UV Index of the animal", "low-UV refuge"))
        rows.append({
            "enclosure": a.enclosure_id, "name": a.enclosure_name, "verdict": a.verdict,
            "zone": a.zone.zone if a.zone else None,
            "basking_max_uvi": bask.value if bask else math.nan,
            "basking_state": bask.state if bask else "",
            "animal_mean_uvi": mean.value if mean and mean.value is not None else math.nan,
            "refuge_share_pct": 100 * refuge.value if refuge and refuge.value is not None
            else math.nan,
            "checks_out_of_range": sum(c.state in ("below range", "above range")
                                       for c in a.checks)})
    for enclosure_id, error in overview.errors.items():
        rows.append({"enclosure": enclosure_id, "verdict": "could not be audited",
                     "name": error})
    return pd.DataFrame(rows).set_index("enclosure").round(2)


def plot_basking_ranges(overview):
    """Basking maximum UV Index of each enclosure against its zone's range."""
    audits = [a for a in overview.audits if a.zone is not None]
    fig, ax = new_figure(7.5, max(2.5, 0.32 * len(audits) + 1.0))
    y = np.arange(len(audits))
    for i, a in enumerate(audits):
        ax.plot([a.zone.max_uvi_low, a.zone.max_uvi_high], [i, i], color=PALETTE["bluish green"],
                lw=8, alpha=0.35, solid_capstyle="butt")
        c = _check(a, "basking UV Index maximum")
        if c is not None and c.value is not None:
            marker = {"within range": "o", "below range": "<", "above range": ">"}.get(c.state, "s")
            ax.plot(c.value, i, marker=marker, color=STATE_COLOURS.get(c.state, "#999999"),
                    markersize=8, markeredgecolor="black")
    ax.set_yticks(y, [a.enclosure_id for a in audits], fontsize=8)
    ax.invert_yaxis()
    ax.set_xlabel("basking maximum UV Index [-]  (band: zone range; ◀ below, ● within, ▶ above)")
    ax.grid(axis="x", alpha=0.3)
    ax.set_xlim(left=0)
    return fig


def replacement_table(overview) -> pd.DataFrame:
    """Every lamp of the site with its state and forecast date, most urgent first."""
    tables = [a.lamps for a in overview.audits if a.lamps is not None and len(a.lamps)]
    if not tables:
        return pd.DataFrame({"note": ["no lamps"]})
    t = pd.concat(tables, ignore_index=True)
    keep = ["enclosure", "lamp", "lamp_model", "age_days", "last_value", "target_min",
            "replace_by", "state"]
    t = t[[c for c in keep if c in t.columns]].copy()
    t["replace_by"] = pd.to_datetime(t["replace_by"]).dt.date
    order = {"below target": 0, "due soon": 1}
    t["_rank"] = t["state"].map(lambda s: order.get(s, 2))
    t = t.sort_values(["_rank", "replace_by"], na_position="last").drop(columns="_rank")
    t["replace_by"] = t["replace_by"].map(lambda d: "no forecast" if pd.isna(d) else d)
    return t.round(2).set_index(["enclosure", "lamp"])


def overview_data(overview) -> dict:
    """Report data of the overview (header for the template; verdict counts as results)."""
    facts = [("Site", overview.site_name), ("Audit date", overview.audit_date.isoformat())]
    facts += [(label, value) for label, value in (
        ("Auditor", overview.auditor), ("Organisation", overview.organisation),
        ("Client", overview.client)) if value]
    counts = {}
    for a in overview.audits:
        counts[a.verdict] = counts.get(a.verdict, 0) + 1
    return {"report": {"kind": "Lighting audit: site overview", "title": overview.site_name,
                       "facts": facts, "logo_path": overview.logo_path,
                       "cautions": list(CAUTIONS), "provenance": [
                           ("Enclosures audited", str(len(overview.audits))),
                           ("Enclosures with errors", str(len(overview.errors)))]},
            "results": {"id": "site-overview", "verdict": "overview",
                        "verdict_counts": counts, "checks": []}}


def publish_overview_data(overview) -> None:
    """Display the overview's report data for the batch (hidden in the report)."""
    from IPython.display import display

    display({REPORT_DATA_MIMETYPE: overview_data(overview),
             "text/plain": f"overview data recorded: {len(overview.audits)} enclosures"},
            raw=True)
