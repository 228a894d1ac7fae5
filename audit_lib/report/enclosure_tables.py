"""The enclosure report's designed tables: headers in words with units, figures as measured.

Each function takes an :class:`audit_lib.pipeline.audit.EnclosureAudit` and returns an
HTML block a workbook cell shows as it is. Numbers go through :mod:`audit_lib.report.formats`
(the one place that rounds them); nothing here computes a figure.
"""

from __future__ import annotations

import calendar
from html import escape

import pandas as pd

from audit_lib.judge.targets import BORDERLINE, UVI_TOP_CHECKS
from audit_lib.report import formats as fmt
from audit_lib.report.enclosure import _badge, check_entries, points_table
from audit_lib.report.formats import Column, HTMLBlock, header, html_table


def surfaces_table(audit) -> HTMLBlock:
    """Per surface: UV Index over it, its shares in range and refuge, vitamin D and light."""
    stats = audit.surface_stats
    if stats is None or not len(stats):
        return fmt.note("No surfaces.")
    by_quantity = {q: t.set_index("surface") for q, t in stats.groupby("quantity")}
    uvi = by_quantity["uvi"]
    refuge_uvi = audit.findings.target_settings.refuge_uvi_max  # the site's, as in the stats
    rows = []
    for surface, r in uvi.iterrows():
        rows.append({"surface": surface,
                     "area": r["area_m2"], "max": r["maximum"], "mean": r["mean"],
                     "min": r["minimum"], "in_range": r["share_in_uvi_range"],
                     "refuge": r["share_refuge"],
                     "vitd": by_quantity.get("vitamin_d_w_m2", pd.DataFrame()).get(
                         "mean", pd.Series(dtype=float)).get(surface),
                     "lux": by_quantity.get("illuminance_lux", pd.DataFrame()).get(
                         "mean", pd.Series(dtype=float)).get(surface)})
    return html_table(rows, [
        Column("surface", "Surface"), Column("area", header("Area", "area_m2"), "area_m2"),
        Column("max", header("Highest UV Index", "uvi"), "uvi"),
        Column("mean", header("Mean UV Index", "uvi"), "uvi"),
        Column("min", header("Lowest UV Index", "uvi"), "uvi"),
        Column("in_range", header("Area in the basking range", "share_pct"), "share_pct"),
        Column("refuge", header(f"Area at or below UV Index {refuge_uvi:g}", "share_pct"),
               "share_pct"),
        Column("vitd", header("Mean vitamin-D irradiance", "w_m2"), "w_m2"),
        Column("lux", header("Mean illuminance", "lux"), "lux")])


def points_html(audit) -> HTMLBlock:
    """Modelled UV Index (after calibration) beside the audit's readings at each position."""
    table = points_table(audit)
    if "note" in table.columns:
        return fmt.note(table["note"].iloc[0].capitalize() + ".")
    columns = [Column("position", "Position"), Column("x_m", header("x", "metres"), "metres"),
               Column("y_m", header("y", "metres"), "metres"),
               Column("z_m", header("Height", "metres"), "metres"),
               Column("modelled_uvi", header("Modelled", "uvi"), "uvi"),
               Column("measured_uvi", header("Measured", "uvi"), "uvi")]
    if "measured_uvi_raw" in table.columns:
        columns.append(Column("measured_uvi_raw", header("As read, before meter correction",
                                                         "uvi"), "uvi"))
    return html_table(table.reset_index().to_dict("records"), columns)


def doses_table(audit) -> HTMLBlock:
    """Daily doses at the basking maximum, for the animal's time budget and from the sun."""
    rows = []
    for label, dose in (("Basking maximum", audit.basking_dose),
                        ("Animal (time budget)", audit.animal_dose)):
        if dose is not None:
            rows.append({"where": label, "sed": dose.sed, "vitd": dose.vitamin_d_j_m2,
                         "hours": dose.hours_in_range, "peak": dose.peak_uvi,
                         "mean": dose.mean_uvi_exposed})
    place = audit.natural.get("place", "the site")
    rows.append({"where": f"Clear-sky sun in {place}", "sed": audit.natural.get("daily_sed"),
                 "peak": audit.natural.get("peak_uvi")})
    return html_table(rows, [
        Column("where", "Where"), Column("sed", header("Erythemal dose", "sed"), "sed"),
        Column("vitd", header("Vitamin-D dose", "j_m2"), "j_m2"),
        Column("hours", header("Time in the basking range", "hours"), "hours"),
        Column("peak", header("Peak UV Index", "uvi"), "uvi"),
        Column("mean", header("Mean while lit", "uvi"), "uvi")])


def monthly_html(audit) -> HTMLBlock:
    """Month by month at the basking maximum: light hours, doses, UV Index, the sun's dose."""
    if audit.monthly is None:
        return fmt.note("No lamp schedules, so no month-by-month figures.")
    m = audit.monthly
    rows = [{"month": calendar.month_abbr[int(month)], "lit": r.get("lit_hours"),
             "sed": r.get("sed"), "vitd": r.get("vitamin_d_j_m2"),
             "hours": r.get("hours_in_range"), "peak": r.get("peak_uvi"),
             "mean": r.get("mean_uvi_exposed"), "sun": r.get("sun_clear_sky_sed")}
            for month, r in m.iterrows()]
    return html_table(rows, [
        Column("month", "Month"), Column("lit", header("Light", "hours"), "hours"),
        Column("sed", header("Erythemal dose", "sed"), "sed"),
        Column("vitd", header("Vitamin-D dose", "j_m2"), "j_m2"),
        Column("hours", header("Time in the basking range", "hours"), "hours"),
        Column("peak", header("Peak UV Index", "uvi"), "uvi"),
        Column("mean", header("Mean while lit", "uvi"), "uvi"),
        Column("sun", header("Clear-sky sun", "sed"), "sed")])


def spectra_table(audit) -> HTMLBlock:
    """Per lamp model: UV peak and width, short-wave UVB share, vitamin-D ratio, CCT, risk group.

    The sun's vitamin-D to erythema ratio (ASTM G173-03) is given in the header.
    """
    if not audit.spectra:
        return fmt.note("No lamp spectra.")
    sun = next((m.get("sun_vitd_to_erythemal_ratio") for m in audit.spectra.values()
                if m.get("sun_vitd_to_erythemal_ratio")), None)
    rows = [{"model": model, "peak": m.get("peak_nm"), "fwhm": m.get("fwhm_nm"),
             "short": m.get("short_uvb_fraction"), "ratio": m.get("vitd_to_erythemal_ratio"),
             "cct": m.get("cct_k"), "risk": m.get("risk_group")}
            for model, m in audit.spectra.items()]
    ratio = "Vitamin-D to erythema ratio" + (f" (sun {fmt.text(sun, 'ratio')})" if sun else "")
    return html_table(rows, [
        Column("model", "Lamp model"), Column("peak", header("UV peak", "nm"), "nm"),
        Column("fwhm", header("Peak width (FWHM)", "nm"), "nm"),
        Column("short", header("Short-wave UVB share", "small_share_pct"), "small_share_pct"),
        Column("ratio", ratio, "ratio"),
        Column("cct", header("Colour temperature", "kelvin"), "kelvin"),
        Column("risk", "Risk group (indicative)")])


def _replace_by(r) -> str:
    date = fmt.date_text(r.get("replace_by"))
    if date == fmt.MISSING:
        return "no forecast"
    band = (fmt.date_text(r.get("replace_by_early")), fmt.date_text(r.get("replace_by_late")))
    if fmt.MISSING in band:
        return date
    return f'{date}<br><span class="small">68 %: {band[0]} to {band[1]}</span>'


def _decay(r) -> str:
    loss = r.get("loss_per_1000h_pct")
    count = int(r.get("points") or 0)
    parts = [f"{count} reading{'' if count == 1 else 's'}"]
    if r.get("model"):
        parts.insert(0, escape(str(r["model"])))
    if loss is not None and not pd.isna(loss):
        parts.append(f"{fmt.text(loss, 'ratio' if abs(loss) < 10 else 'count')} % per 1000 h")
    if r.get("meter_corrected"):
        parts.append("meter-corrected")
    return ", ".join(parts)


def lamps_html(audit) -> HTMLBlock:
    """Lamp ages, decay fit and the one replacement forecast per lamp."""
    t = audit.lamps
    if t is None or not len(t):
        return fmt.note("No lamps.")
    rows = [{"lamp": f"{r['lamp']}", "model": r.get("lamp_model"),
             "installed": r.get("installed_on"), "age": r.get("age_days"),
             "hours": r.get("hours_now"), "decay": _decay(r), "last": r.get("last_value"),
             "target": r.get("target_min"), "replace": _replace_by(r),
             "state": _badge(r.get("state") or "unknown")}
            for r in t.to_dict("records")]
    return html_table(rows, [
        Column("lamp", "Lamp"), Column("model", "Lamp model"),
        Column("installed", "Installed", "date"), Column("age", header("Age", "days"), "days"),
        Column("hours", header("Lamp hours", "lamp_hours"), "lamp_hours"),
        Column("decay", "Decay fit", "html"),
        Column("last", header("Latest reading", "uvi"), "uvi"),
        Column("target", header("Lowest acceptable", "uvi"), "uvi"),
        Column("replace", "Replace by", "html"), Column("state", "State", "html")])


def failures_html(audit) -> HTMLBlock:
    """LED emitter failure scenarios on the basking surface."""
    if audit.failures is None or not len(audit.failures):
        return fmt.note("No LED arrays: emitter failures do not apply.")
    rows = [{"scenario": r["scenario"], "out": r["emitters_out"], "max": r["max_uvi"],
             "mean": r["mean_uvi"], "share": r["share_in_range"]}
            for r in audit.failures.to_dict("records")]
    return html_table(rows, [
        Column("scenario", "Scenario"), Column("out", "Emitters out"),
        Column("max", header("Highest UV Index", "uvi"), "uvi"),
        Column("mean", header("Mean UV Index", "uvi"), "uvi"),
        Column("share", header("Basking area in range", "share_pct"), "share_pct")])


def _reading_label(r) -> str:
    if r["position"]:
        return f"{r['lamp']} at {r['position']}"
    distance = r.get("distance_m")
    if distance is not None and not pd.isna(distance):
        return f"{r['lamp']} on its axis at {fmt.text(100 * distance, 'count')} cm"
    return str(r["lamp"])


def previous_html(audit, previous) -> HTMLBlock:
    """The audit beside the previous one: verdict, basking maximum, checks and lamp readings.

    Parameters
    ----------
    audit : EnclosureAudit
        This audit.
    previous : audit_lib.pipeline.previous.PreviousAudit
        The previous audit on record (or why there is none).
    """
    if previous.audit_date is None:
        return HTMLBlock(f"<p>No previous audit to compare with: {escape(previous.missing)}.</p>")
    now, before = audit.audit_date, previous.audit_date
    rows = []
    old = previous.audit
    if old is not None:
        rows.append({"what": "Verdict", "before": _badge(old.verdict),
                     "now": _badge(audit.verdict)})
        bask = {d: next((c for c in check_entries(a) if c["check_id"] in UVI_TOP_CHECKS),
                        None) for d, a in (("before", old), ("now", audit))}
        cell = {d: (f"{fmt.check_text(c)} <span class='small'>(target "
                    f"{escape(fmt.check_range_text(c))})</span>" if c else fmt.MISSING)
                for d, c in bask.items()}
        top = bask["now"] or bask["before"]
        words = fmt.CHECK_QUANTITIES.get(top["check_id"] if top else "", ("", "Highest"))[1]
        rows.append({"what": header(words, "uvi"), **cell})
        rows.append({"what": "Checks outside their range",
                     **{d: str(sum(c["state"] not in ("within range", "not enough data",
                                                      BORDERLINE)
                                   for c in check_entries(a)))
                        for d, a in (("before", old), ("now", audit))}})
    readings = previous.readings
    if len(readings):
        readings = readings.assign(label=[_reading_label(r) for r in
                                          readings.to_dict("records")])
        for label, group in readings.groupby("label", sort=False):
            values = {("before" if d.date() == before else "now"): v
                      for d, v in zip(group["date"], group["value_si"], strict=True)}
            rows.append({"what": f"Reading: {label} [UVI]",
                         "before": fmt.text(values.get("before"), "uvi"),
                         "now": fmt.text(values.get("now"), "uvi")})
    table = html_table(
        [{k: (v if k != "what" else escape(v)) for k, v in r.items()} for r in rows],
        [Column("what", "", "html"), Column("before", f"Previous audit {before}", "html_num"),
         Column("now", f"This audit {now}", "html_num")])
    note = (f"<p class='small'>{escape(previous.missing[0].upper() + previous.missing[1:])}.</p>"
            if previous.missing else
            "<p class='small'>The previous audit's figures are modelled again with this "
            "library and today's enclosure layout, scaled to that audit's readings; readings "
            "are as read, from the history store.</p>")
    return HTMLBlock(table + note)
