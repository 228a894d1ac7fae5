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
from audit_lib.report.cautions import CAUTIONS
from audit_lib.report.index_page import state_class
from audit_lib.report.plan import borderline_note, interval_text

#: MIME type of the report data (see :mod:`audit_lib.run.notebooks`).
REPORT_DATA_MIMETYPE = "application/vnd.audit-lib.report+json"


class HTMLBlock(str):
    """A string of finished HTML that a notebook shows as HTML."""

    def _repr_html_(self) -> str:
        return str(self)


def _badge(state: str) -> str:
    return f'<span class="state {state_class(state)}">{escape(state)}</span>'


def _num(value, digits: int | None = None) -> str:
    """A figure for a table: "–" when missing, "no limit" when infinite, else rounded."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "–"
    value = float(value)
    if math.isinf(value):
        return "no limit"
    if digits is not None:
        return f"{value:.{digits}f}"
    size = abs(value)
    if size >= 100:
        return f"{value:.0f}"
    if size >= 10:
        return f"{value:.1f}"
    if size >= 0.1 or size == 0:
        return f"{value:.2f}"
    return f"{value:.2g}"


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
    """Every check: figure, target range, state (word and colour), reason, what it rests on."""
    rows = []
    for c in audit.checks:
        target = f"{_num(c.target_low)} – {_num(c.target_high)}"
        rows.append(f"<tr><td>{escape(c.name)}</td>"
                    f"<td class='num'>{_num(c.value)}{escape(interval_text(c))}</td>"
                    f"<td>{escape(c.unit)}</td><td class='num'>{target}</td>"
                    f"<td>{_badge(c.state)}</td><td>{escape(c.reason)}</td>"
                    f"<td>{_basis_cell(c)}</td></tr>")
    return HTMLBlock(
        '<table class="checks"><thead><tr><th>Check</th><th class="num">Figure</th>'
        '<th>Unit</th><th class="num">Target</th><th>State</th><th>Reason</th>'
        f"<th>Target rests on</th></tr></thead><tbody>{''.join(rows)}</tbody></table>"
        + (f"<p>{escape(borderline_note(audit.checks))}</p>" if borderline_note(audit.checks)
           else ""))


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


def surface_table(audit) -> pd.DataFrame:
    """Per surface: UV Index statistics, shares, mean vitamin-D irradiance and illuminance."""
    stats = audit.surface_stats
    t = stats[stats["quantity"] == "uvi"].drop(columns="quantity")
    t = t.assign(share_in_uvi_range_pct=100 * t.pop("share_in_uvi_range"),
                 share_refuge_pct=100 * t.pop("share_refuge"))
    t = t.rename(columns={"maximum": "max_uvi", "mean": "mean_uvi", "minimum": "min_uvi"})
    for quantity, column in (("vitamin_d_w_m2", "mean_vitamin_d_w_m2"),
                             ("illuminance_lux", "mean_illuminance_lux")):
        means = stats[stats["quantity"] == quantity].set_index("surface")["mean"]
        t[column] = t["surface"].map(means)
    return t.round({"max_uvi": 2, "mean_uvi": 2, "min_uvi": 2, "uniformity": 2, "area_m2": 3,
                    "share_in_uvi_range_pct": 0, "share_refuge_pct": 0,
                    "mean_vitamin_d_w_m2": 4, "mean_illuminance_lux": 0}).set_index("surface")


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


def monthly_table(audit) -> pd.DataFrame:
    """Month by month at the basking maximum: light hours, doses, UV Index, the sun's dose."""
    if audit.monthly is None:
        return pd.DataFrame({"note": ["no lamp schedules"]})
    keep = ["lit_hours", "sed", "vitamin_d_j_m2", "hours_in_range", "peak_uvi",
            "mean_uvi_exposed", "sun_clear_sky_sed"]
    return audit.monthly[[c for c in keep if c in audit.monthly.columns]].round(2)


def dose_table(audit) -> pd.DataFrame:
    """Daily doses at the basking maximum and for the animal's time budget."""
    rows = {}
    for label, dose in (("basking maximum", audit.basking_dose), ("animal (time budget)",
                                                                   audit.animal_dose)):
        if dose is not None:
            rows[label] = {"erythemal_j_m2": float(dose.erythemal_j_m2), "sed": float(dose.sed),
                           "vitamin_d_j_m2": float(dose.vitamin_d_j_m2),
                           "hours_in_range": float(dose.hours_in_range),
                           "peak_uvi": float(dose.peak_uvi),
                           "mean_uvi_exposed": float(dose.mean_uvi_exposed)}
    place = audit.natural.get("place", "the site")
    rows[f"clear-sky sun at {place}"] = {"sed": audit.natural.get("daily_sed", math.nan),
                                         "peak_uvi": audit.natural.get("peak_uvi", math.nan)}
    return pd.DataFrame(rows).T.round(2)


def spectrum_table(audit) -> pd.DataFrame:
    """Per lamp model: peak, width, short-wave UVB share and vitamin-D/erythema ratio vs sun."""
    keys = ["peak_nm", "fwhm_nm", "short_uvb_fraction", "vitd_to_erythemal_ratio",
            "sun_vitd_to_erythemal_ratio", "cct_k", "risk_group"]
    rows = {m: {k: v.get(k) for k in keys} for m, v in audit.spectra.items()}
    if not rows:
        return pd.DataFrame({"note": ["no lamp spectra"]})
    table = pd.DataFrame(rows).T
    for k in keys[:-1]:
        table[k] = pd.to_numeric(table[k], errors="coerce")
    return table.round({"peak_nm": 1, "fwhm_nm": 1, "short_uvb_fraction": 4,
                        "vitd_to_erythemal_ratio": 2, "sun_vitd_to_erythemal_ratio": 2,
                        "cct_k": 0})


def lamps_table(audit) -> pd.DataFrame:
    """Lamp ages, decay and replacement forecast per lamp."""
    t = audit.lamps
    if t is None or not len(t):
        return pd.DataFrame({"note": ["no lamps"]})
    keep = ["lamp", "lamp_model", "installed_on", "age_days", "hours_now", "points", "model",
            "loss_per_1000h_pct", "last_value", "target_min", "replace_by", "state",
            "meter_corrected"]
    out = t[[c for c in keep if c in t.columns]].copy()
    numeric = out.select_dtypes("number").columns
    out[numeric] = out[numeric].round(2)
    for c in ("installed_on", "replace_by"):
        if c in out:
            out[c] = pd.to_datetime(out[c]).dt.date
    return out.set_index("lamp")


def failures_table(audit) -> pd.DataFrame:
    """LED emitter failure scenarios on the basking surface."""
    if audit.failures is None or not len(audit.failures):
        return pd.DataFrame({"note": ["no LED arrays: emitter failures do not apply"]})
    t = audit.failures.copy()
    t["share_in_range_pct"] = 100 * t.pop("share_in_range")
    return t.round(2).set_index("scenario")


def safety_table(audit) -> HTMLBlock:
    """Keeper-safety figures: the keeper check, and each lamp model's indicative risk group."""
    rows = []
    for c in audit.checks:
        if c.id == KEEPER_EXPOSURE_TIME:
            rows.append((c.name, f"{_num(c.value, 0)} {c.unit}", _badge(c.state), c.reason))
    for model, m in audit.spectra.items():
        distance_mm = 1000 * (m.get("risk_group_distance_m") or math.nan)
        rows.append((f"lamp model {model}", f"{m.get('risk_group', '')} at {distance_mm:.0f} mm",
                     "", "IEC 62471 risk group (indicative, limits from memory) of the lamp "
                     "model on its axis at 200 mm, or at 500 lx for general lighting lamps; "
                     "a certificate needs a laboratory measurement."))
    if not rows:
        return HTMLBlock("<p>No lamps.</p>")
    body = "".join(f"<tr><td>{escape(a)}</td><td>{escape(b)}</td><td>{c}</td>"
                   f"<td>{escape(d)}</td></tr>" for a, b, c, d in rows)
    return HTMLBlock('<table class="checks"><thead><tr><th>What</th><th>Figure</th>'
                     f"<th>State</th><th>Reason</th></tr></thead><tbody>{body}</tbody></table>")
