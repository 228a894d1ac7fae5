"""The printable field sheet: one self-contained HTML page a keeper carries on the audit day.

A view of :func:`audit_lib.pipeline.field.expected_readings`: it formats that record and
computes nothing. Printed on A4 (print CSS), one block per enclosure kept on one page where it
fits, big cells to write readings in. The cautions follow the project's safety section
(ICNIRP 2004 and IEC 62471 for the UV hazards; electrical and veterinary points are common
practice).
"""

from __future__ import annotations

import math
from html import escape

import pandas as pd

from audit_lib import __version__
from audit_lib.pipeline import field

#: What to do and wear while measuring, in the order shown.
FIELD_CAUTIONS = (
    "Wear UV-blocking eye protection (safety glasses or goggles rated for UV) whenever you "
    "work near a lit UV lamp, and do not look into the lamp.",
    "Cover your skin (long sleeves, gloves) when your hands or arms are close to UV lamps; "
    "keep the time under the lamps short.",
    "Lamp fittings are mains electrical equipment: do not open, move or touch wiring; switch "
    "off at the isolator before touching a fitting, and leave faults to a qualified person.",
    "Lamps, reflectors and guards get hot: do not touch them, and let a lamp cool before you "
    "handle it.",
    "Disturb the animals as little as you can; defer to the veterinarian on any concern for "
    "an animal's health, and follow local codes and licensed practice.",
)

_CSS = """
@page { size: A4; margin: 12mm 12mm 14mm 12mm; }
* { box-sizing: border-box; }
body { font-family: "DejaVu Sans", Arial, Helvetica, sans-serif; font-size: 10.5pt;
       color: #000; margin: 0 auto; max-width: 190mm; line-height: 1.3; }
h1 { font-size: 17pt; margin: 0 0 2mm 0; }
h2 { font-size: 13pt; margin: 0 0 1.5mm 0; border-bottom: 2px solid #000; padding-bottom: 1mm; }
p { margin: 1mm 0; }
.meta td { padding: 1mm 2mm 1mm 0; }
.fill { display: inline-block; min-width: 55mm; border-bottom: 1px solid #000; height: 7mm; }
.caution { border: 2.5px solid #D55E00; padding: 2mm 3mm; margin: 3mm 0; }
.caution h3 { margin: 0 0 1mm 0; font-size: 11.5pt; }
.caution ul { margin: 0; padding-left: 5mm; }
.how { margin: 2mm 0 3mm 0; }
.note { border-left: 4px solid #E69F00; padding-left: 2mm; }
section.enclosure { break-inside: avoid; page-break-inside: avoid; border: 1px solid #000;
                    padding: 2.5mm 3mm; margin: 0 0 4mm 0; }
table.grid { border-collapse: collapse; width: 100%; margin: 1.5mm 0; }
table.grid th, table.grid td { border: 1px solid #000; padding: 1mm 1.5mm; text-align: left;
                               vertical-align: middle; }
table.grid th { background: #e8e8e8; font-size: 9pt; }
table.lamps td, table.lamps th { font-size: 9pt; }
td.num { text-align: right; font-variant-numeric: tabular-nums; white-space: nowrap; }
td.expected { font-weight: bold; font-size: 12pt; }
td.write { width: 26mm; height: 11mm; }
td.tick { width: 30mm; }
.small { font-size: 8.5pt; }
.basis { font-size: 8.5pt; margin-top: 1mm; }
footer { font-size: 8.5pt; margin-top: 4mm; border-top: 1px solid #000; padding-top: 1mm; }
@media print { body { max-width: none; } .caution { break-inside: avoid; } }
"""


def _number(value, digits: int = 1) -> str:
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return "–"
    return f"{value:.{digits}f}"


def _date(value) -> str:
    return "–" if value is None or pd.isna(value) else pd.Timestamp(value).date().isoformat()


def _where(row) -> str:
    text = f"x {row.x_m:.2f}, y {row.y_m:.2f}, z {row.z_m:.2f}"
    if row.kind == "lamp check":
        return f"{row.distance_m:.2f} m straight below lamp centre ({text})"
    if row.kind == "surface":
        return f"brightest spot ({text})"
    return text


def _position_name(row) -> str:
    if row.kind == "lamp check":
        return (f"lamp check: <b>{escape(row.lamp)}</b>"
                "<br><span class='small'>other lamps off</span>")
    kind = "surface" if row.kind == "surface" else "position"
    return f"<b>{escape(row.position)}</b><br><span class='small'>{kind}</span>"


def _lamps_table(part) -> str:
    rows = []
    for lamp in part.lamps.itertuples(index=False):
        ratio = "rated output" if lamp.output_basis == "installed after the last audit" \
            else f"{lamp.output_ratio:.0%} of the last audit"
        rows.append(
            f"<tr><td><b>{escape(lamp.lamp)}</b></td><td>{escape(lamp.model)}</td>"
            f"<td>{_date(lamp.installed_on)}</td>"
            f"<td class='num'>{_number(lamp.age_days, 0)} d / {_number(lamp.lamp_hours, 0)} h</td>"
            f"<td>{ratio} <span class='small'>({escape(lamp.output_basis)})</span></td>"
            "<td class='tick'>&nbsp;</td></tr>")
    return ("<table class='grid lamps'><tr><th>Lamp</th><th>Model</th><th>Installed</th>"
            "<th>Age on the day</th><th>Expected output</th><th>Lit? / replaced?</th></tr>"
            + "".join(rows) + "</table>")


def _positions_table(part) -> str:
    rows = []
    for p in part.positions.itertuples(index=False):
        rows.append(
            f"<tr><td>{_position_name(p)}</td><td class='small'>{_where(p)}</td>"
            f"<td class='num expected'>{_number(p.expected_uvi)}</td>"
            f"<td class='num'>{_number(p.low_uvi)} – {_number(p.high_uvi)}</td>"
            f"<td class='num'>{_number(p.last_uvi)}</td>"
            "<td class='write'>&nbsp;</td><td class='tick'>&nbsp;</td></tr>")
    return ("<table class='grid'><tr><th>Where</th><th>Coordinates [m]</th>"
            "<th>Expected UVI</th><th>Band: below = lamp problem</th>"
            f"<th>Last audit ({part.audit_date.isoformat()})</th>"
            "<th>Reading (UVI)</th><th>Time / note</th></tr>" + "".join(rows) + "</table>")


def _enclosure_block(part) -> str:
    basis = ("the spread of the model at the last audit's readings"
             if part.model_spread_basis == "last audit" else
             "a project default (the last audit had too few readings to measure it)")
    species = ", ".join(part.species) or "none recorded"
    return (
        "<section class='enclosure'>"
        f"<h2>{escape(part.enclosure_id)} — {escape(part.enclosure_name)}</h2>"
        f"<p class='small'>Species: {escape(species)}. Model calibrated to the readings of "
        f"{part.audit_date.isoformat()} (factor {part.calibration:.2f}).</p>"
        + _lamps_table(part) + _positions_table(part) +
        f"<p class='basis'>Band ±{part.tolerance:.0%} of the expected value (at least "
        f"±{field.DISPLAY_STEP_UVI:g}): {field.COVERAGE_FACTOR:g} × the meter's uncertainty "
        f"±{field.METER_UNCERTAINTY:.0%} (project default) combined with a model spread of "
        f"±{part.model_spread:.0%} from {basis}.</p>"
        + "".join(f"<p class='basis note'>{escape(text)}</p>" for text in part.notes)
        + "</section>")


def field_sheet_html(sheet) -> str:
    """The field sheet as one self-contained HTML page (no scripts, fonts or images to fetch).

    Parameters
    ----------
    sheet : audit_lib.pipeline.field.FieldSheet
        From :func:`audit_lib.pipeline.field.expected_readings`.

    Returns
    -------
    str
        The HTML document.
    """
    cautions = "".join(f"<li>{escape(text)}</li>" for text in FIELD_CAUTIONS)
    notes = "".join(f"<p class='note'>{escape(text)}</p>" for text in sheet.notes)
    meter = escape(sheet.meter) if sheet.meter else "<span class='fill'></span>"
    blocks = "".join(_enclosure_block(part) for part in sheet.enclosures)
    title = f"Field sheet — {sheet.site_name} — {sheet.date.isoformat()}"
    return f"""<!DOCTYPE html>
<html lang="en"><head><meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>{escape(title)}</title><style>{_CSS}</style></head>
<body>
<h1>UV Index field sheet</h1>
<table class="meta"><tr><td>Site</td><td><b>{escape(sheet.site_name)}</b></td>
<td>Date</td><td><b>{sheet.date.isoformat()}</b></td></tr>
<tr><td>UV Index meter</td><td>{meter}</td><td>Taken by</td><td><span class="fill"></span></td></tr>
<tr><td>Start time</td><td><span class="fill"></span></td>
<td>Lamps on since</td><td><span class="fill"></span></td></tr></table>
<div class="caution"><h3>Before you start</h3><ul>{cautions}</ul></div>
{notes}
<div class="how"><p><b>How to use this sheet.</b> Measure with the meter's sensor facing up at
each place, lamps warmed up (at least 15 minutes on). Write the reading in the big cell.
A reading <b>below the band</b> points to a lamp problem: check that every lamp and emitter
is lit, the guard or mesh is clean and in place, and the lamp is the one listed; tell the
curator before the next audit. A reading <b>above the band</b>: check the position and
height, and whether a lamp was replaced or moved. Expected values come from the model
calibrated at the last audit and each lamp's fitted decay since; they are guidance, not
limits for the animal (see the enclosure's audit report).</p>
<p>Then type the readings into the template file written beside this sheet (value column),
delete the rows you did not measure, copy it into the site's <code>readings/</code> folder
and run <code>light-audit check</code>.</p></div>
{blocks}
<footer>Written by light-audit {escape(__version__)} from the site file and its readings
folder. Coordinates in metres from the front-left floor corner: x along the front, y to the
back, z up.</footer>
</body></html>
"""


def readings_template_csv(sheet) -> str:
    """The readings template as CSV text, with comment lines saying how to fill it in.

    The rows are :func:`audit_lib.pipeline.field.readings_template`; lines starting with
    ``#`` are skipped by the readings reader (:mod:`audit_lib.site.readings`).
    """
    table = field.readings_template(sheet)
    header = (f"# Readings template for {sheet.site_name}, {sheet.date.isoformat()} "
              "(written by light-audit field-sheet).\n"
              "# Fill the value column as the meter shows it, delete the rows you did not "
              "measure (and change the date if you measured on another day), then copy this "
              "file into the site's readings/ folder and run 'light-audit check'.\n")
    return header + table.to_csv(index=False, lineterminator="\n")
