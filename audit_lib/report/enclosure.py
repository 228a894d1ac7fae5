"""Tables, HTML blocks and the report data of one enclosure's audit (thin views of the record).

Every function takes an :class:`audit_lib.pipeline.audit.EnclosureAudit` and returns something a
workbook cell shows as it is: an HTML block, a pandas table or a matplotlib figure. Text that
comes from a site file is escaped here (:func:`html.escape`); pandas tables are escaped by
pandas. Nothing is computed here that the report's reader would need to check: figures are
the record's.
"""

from __future__ import annotations

import math
from html import escape

import numpy as np
import pandas as pd

from audit_lib.judge.targets import FROM_MEMORY, KEEPER_EXPOSURE_TIME
from audit_lib.judge.verdicts import unanswered_sentence
from audit_lib.light.metrics import RISK_GROUPS
from audit_lib.pipeline.plan import plan_entry
from audit_lib.report import formats as fmt
from audit_lib.report.cautions import CAUTIONS
from audit_lib.report.formats import HTMLBlock
from audit_lib.report.index_page import state_class
from audit_lib.report.plan import borderline_note, interval_text

#: MIME type of the report data (see :mod:`audit_lib.run.notebooks`).
REPORT_DATA_MIMETYPE = "application/vnd.audit-lib.report+json"


def _badge(state: str) -> str:
    return f'<span class="state {state_class(state)}">{escape(state)}</span>'


def _finite(value):
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None


def _iso(value) -> str | None:
    """An ISO date, or None for a missing one."""
    if value is None or (not isinstance(value, str) and pd.isna(value)):
        return None
    return pd.Timestamp(value).date().isoformat()


def check_entry(c, species: str = "", name: str | None = None) -> dict:
    """One check as ``results.json`` holds it (infinite limits and figures as null)."""
    return {"check_id": c.id, "name": name or c.name, "species": species,
            "value": _finite(c.value), "unit": c.unit,
            "target_low": _finite(c.target_low), "target_high": _finite(c.target_high),
            "state": c.state, "reason": c.reason, "basis": c.basis, "source": c.source,
            "value_low": _finite(c.value_low), "value_high": _finite(c.value_high)}


def check_entries(audit) -> list[dict]:
    """Every check as ``results.json`` holds it (stable ``check_id``; infinite limits as null)."""
    many = len(audit.verdicts) > 1
    return [check_entry(c, v.species, f"{c.name} ({v.species})" if many else c.name)
            for v in audit.verdicts for c in v.checks]


def risk_group_entry(metrics: dict) -> dict:
    """A lamp model's indicative risk group for ``results.json`` (from ``audit.spectra``).

    ``risk_group`` is an integer 0-3 (0 = exempt; index in
    :data:`audit_lib.light.metrics.RISK_GROUPS`) or None when the model has no spectrum.
    """
    name = metrics.get("risk_group")
    return {"risk_group": RISK_GROUPS.index(name) if name in RISK_GROUPS else None,
            "risk_group_distance_m": _finite(metrics.get("risk_group_distance_m")),
            "actinic_w_m2_at_distance": _finite(metrics.get("actinic_w_m2_at_distance"))}


def lamp_entries(audit) -> list[dict]:
    """Every lamp in place with its age, the one replacement forecast and its model's risk group."""
    t = audit.lamps
    if t is None or not len(t):
        return []
    return [{"id": r.lamp, "model": r.lamp_model, "installed_on": _iso(r.installed_on),
             "hours_now": _finite(r.hours_now), "age_days": int(r.age_days),
             "last_uvi": _finite(r.last_value), "target_min_uvi": _finite(r.target_min),
             "replace_by": _iso(r.replace_by), "forecast_state": r.state,
             "meter_corrected": bool(r.meter_corrected),
             **risk_group_entry(audit.spectra.get(r.lamp_model, {}))}
            for r in t.itertuples(index=False)]


def action_entries(audit) -> list[dict]:
    """Every recommended action (``height_m``: new lamp face height above the floor)."""
    return [{"kind": a.kind, "check_id": a.check or None, "lamp": a.lamp, "text": a.text,
             "height_m": _finite(a.height_m)} for a in audit.actions]


def enclosure_results(audit) -> dict:
    """The enclosure's entry in ``results.json`` (docs/batch-reports.md lists every key).

    The site overview and the index read these entries, never the audit again, so each
    figure there is the report's.
    """
    return {"id": audit.enclosure_id, "name": audit.enclosure_name,
            "audit_date": audit.audit_date.isoformat(),
            "zone": audit.zone.zone if audit.zone is not None else None,
            "verdict": audit.verdict, "reason": audit.reason,
            "recommendation": audit.recommendation, "checks": check_entries(audit),
            "actions": action_entries(audit), "lamps": lamp_entries(audit),
            "plan": plan_entry(audit.plan, check_entry)}


def report_data(audit) -> dict:
    """The JSON-able data the batch reads from an executed workbook.

    ``report`` fills the template's header and provenance; ``results`` is the enclosure's
    entry in ``results.json`` (:func:`enclosure_results`).
    """
    facts = [("Site", audit.site_name),
             ("Enclosure", f"{audit.enclosure_name} ({audit.enclosure_id})"),
             ("Audit date", audit.audit_date.isoformat())]
    facts += [(label, value) for label, value in (
        ("Auditor", audit.auditor), ("Organisation", audit.organisation),
        ("Client", audit.client)) if value]
    provenance = [(k.replace("_", " ").capitalize(), str(v)) for k, v in audit.provenance.items()]
    return {
        "report": {"kind": "Enclosure lighting audit",
                   "title": f"{audit.enclosure_name}", "facts": facts,
                   "logo_path": audit.logo_path, "cautions": list(CAUTIONS),
                   "provenance": provenance,
                   "library_version": audit.provenance.get("library_version", "")},
        "results": enclosure_results(audit),
    }


def publish_report_data(audit_or_data) -> None:
    """Display the report data for the batch (hidden in reports by the ``report-data`` tag)."""
    from IPython.display import display

    data = audit_or_data if isinstance(audit_or_data, dict) else report_data(audit_or_data)
    n = len(data.get("results", {}).get("checks", []))
    display({REPORT_DATA_MIMETYPE: data,
             "text/plain": f"report data recorded: verdict and {n} checks"}, raw=True)


def summary(audit) -> HTMLBlock:
    """Verdict, its reason, the species and their targets, and the notes."""
    species = "".join(
        f"<li><em>{escape(s.scientific_name)}</em>"
        f"{escape(' – ' + s.common_name) if s.common_name else ''}: zone {s.zone} "
        f"({escape(s.uv_provision.replace('_', ' '))})</li>"
        for s in audit.species) or "<li>no species with a known zone</li>"
    zone = ""
    if audit.zone is not None:
        z = audit.zone
        zone = (f"<p>Targets, zone {z.zone}: basking maximum UV Index {z.max_uvi_low:g}–"
                f"{z.max_uvi_high:g}; mean exposure {z.mean_uvi_low:g}–{z.mean_uvi_high:g} "
                f"({escape(z.source)}; {escape(z.status)}).</p>")
    notes = "".join(f"<li>{escape(n)}</li>" for n in audit.notes)
    return HTMLBlock(
        f'<div class="audit-summary"><p class="verdict">Verdict: {_badge(audit.verdict)}</p>'
        f"<p>{escape(audit.reason)}</p><p>Species:</p><ul>{species}</ul>{zone}"
        + (f'<div class="audit-notes"><strong>Notes</strong><ul>{notes}</ul></div>' if notes
           else "") + "</div>")


def checks_table(audit) -> HTMLBlock:
    """Every check: figure, target range and unit as shown, state (word and colour), reason."""
    rows = []
    for record, c in zip(audit.checks, check_entries(audit), strict=True):
        rows.append(f"<tr><th scope='row'>{escape(c['name'])}</th>"
                    f"<td class='num'>{fmt.check_text(c)}"
                    f"<span class='small'>{escape(interval_text(record))}</span></td>"
                    f"<td class='num'>{escape(fmt.check_range_text(c))}</td>"
                    f"<td>{escape(fmt.check_unit(c))}</td>"
                    f"<td>{_badge(c['state'])}</td><td>{escape(c['reason'])}</td>"
                    f"<td>{_basis_cell(record)}</td></tr>")
    note = borderline_note(audit.checks)
    return HTMLBlock(
        '<div class="table-wrap"><table class="checks"><thead><tr><th scope="col">Check</th>'
        '<th scope="col" class="num">Figure</th><th scope="col" class="num">Target</th>'
        '<th scope="col">Unit</th><th scope="col">State</th><th scope="col">Reason</th>'
        '<th scope="col">Target rests on</th>'
        f"</tr></thead><tbody>{''.join(rows)}</tbody></table></div>"
        + (f"<p>{escape(note)}</p>" if note else ""))


def _basis_cell(check) -> str:
    """The check's basis (marked when from memory) and its source in words."""
    mark = ' class="from-memory"' if check.basis == FROM_MEMORY else ""
    return (f"<strong{mark}>{escape(check.basis or 'not stated')}</strong><br>"
            f"<small>{escape(check.source)}</small>")


def actions_list(audit) -> HTMLBlock:
    """Recommended actions, each with its numbers; "no change" only when every check is met."""
    items = "".join(f"<li><strong>{escape(a.kind)}</strong>: {escape(a.text)}</li>"
                    for a in audit.actions)
    left = unanswered_sentence(audit.checks, audit.actions)
    if left:
        items += f"<li>{escape(left)}</li>"
    if items:
        return HTMLBlock(f'<ul class="actions">{items}</ul>')
    return HTMLBlock(f"<p>{escape(audit.recommendation)}</p>")


def points_table(audit) -> pd.DataFrame:
    """Modelled UV Index (after calibration) beside the audit's readings at each position."""
    p = audit.points
    if p is None or not len(p):
        return pd.DataFrame({"note": ["no named positions or position readings"]})
    cols = ["position", "x_m", "y_m", "z_m", "modelled_uvi", "measured_uvi"]
    if "measured_uvi_raw" in p and "measured_uvi" in p:
        raw = pd.to_numeric(p["measured_uvi_raw"], errors="coerce").fillna(0).to_numpy(float)
        used = pd.to_numeric(p["measured_uvi"], errors="coerce").fillna(0).to_numpy(float)
    else:
        raw = used = np.zeros(0)
    if not np.allclose(raw, used):
        cols.append("measured_uvi_raw")  # meter mismatch correction applied
    return p[[c for c in cols if c in p.columns]].round(2).set_index("position")


def safety_table(audit) -> HTMLBlock:
    """Keeper-safety figures: the keeper check, and each lamp model's indicative risk group."""
    rows = []
    for c in audit.checks:
        if c.id == KEEPER_EXPOSURE_TIME:
            rows.append((c.name, fmt.text(c.value, "minutes", unit=True), _badge(c.state),
                         c.reason))
    for model, m in audit.spectra.items():
        distance = m.get("risk_group_distance_m")
        where = f" at {fmt.text(distance * 1000, 'count')} mm" if distance else ""
        rows.append((f"lamp model {model}", f"{m.get('risk_group') or fmt.MISSING}{where}",
                     "", "IEC 62471 risk group (indicative, limits from memory) of the lamp "
                     "model on its axis at 200 mm, or at 500 lx for general lighting lamps; "
                     "a certificate needs a laboratory measurement."))
    if not rows:
        return HTMLBlock("<p>No lamps.</p>")
    body = "".join(f"<tr><th scope='row'>{escape(a)}</th><td>{escape(b)}</td><td>{c}</td>"
                   f"<td>{escape(d)}</td></tr>" for a, b, c, d in rows)
    return HTMLBlock('<div class="table-wrap"><table class="checks"><thead><tr>'
                     '<th scope="col">What</th><th scope="col">Figure</th>'
                     '<th scope="col">State</th><th scope="col">Reason</th></tr></thead>'
                     f"<tbody>{body}</tbody></table></div>")
