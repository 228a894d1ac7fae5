"""The batch run's ``index.html``: every enclosure with its verdict, report link and failures.

Plain string building with :func:`html.escape` on every piece of text that comes from a
site file or an error message; the style sheet is the report template's, inlined, so the
page is one self-contained file with no script at all.
"""

from __future__ import annotations

import datetime as dt
import re
from html import escape
from importlib.resources import files

from audit_lib.judge.targets import BORDERLINE, USED_AREA_UVI_MAX, UVI_TOP_CHECKS
from audit_lib.report import formats as fmt
from audit_lib.report.cautions import CAUTIONS

#: The report template's style sheet (package data ``audit_lib.templates``).
_CSS = files("audit_lib.templates") / "audit" / "static" / "report.css"


def state_class(state: str | None) -> str:
    """Return the CSS class for a verdict or check state ("state-within-range")."""
    slug = re.sub(r"[^a-z0-9]+", "-", (state or "unknown").lower()).strip("-")
    return f"state-{slug or 'unknown'}"


def _badge(state: str | None) -> str:
    text = state or "unknown"
    return f'<span class="state {state_class(text)}">{escape(text)}</span>'


def _link(href: str | None, text: str) -> str:
    if not href:
        return ""
    return f'<a href="{escape(href, quote=True)}">{escape(text)}</a>'


def _from_memory_mark(checks) -> str:
    """A mark after a verdict that rests on target values from memory ("" if none does)."""
    ids = list(dict.fromkeys(c.get("check_id", "") for c in checks
                             if c.get("basis") == "from memory"))
    if not ids:
        return ""
    title = "targets recalled, not read in their source: " + ", ".join(ids)
    return (f' <span class="from-memory" title="{escape(title, quote=True)}">'
            "from memory</span>")


def _basking(outcome) -> str:
    check = next((c for c in outcome.checks if c.get("check_id") in UVI_TOP_CHECKS), None)
    if check is None:
        return fmt.MISSING
    where = " used area" if check.get("check_id") == USED_AREA_UVI_MAX else ""
    return (f"{fmt.check_text(check)} "
            f'<span class="small">({escape(fmt.check_range_text(check))}{where})</span>')


def _next_replacement(outcome) -> str:
    dates = sorted(lamp["replace_by"] for lamp in outcome.results.get("lamps", [])
                   if lamp.get("replace_by"))
    return fmt.date_text(dates[0]) if dates else "no forecast"


def _row(outcome, pdfs) -> str:
    results = getattr(outcome, "results", None) or {}
    date = zone = basking = replacement = actions = fmt.MISSING
    if outcome.error:
        verdict = _badge("could not be audited")
        notes = f'<span class="error">{escape(outcome.error)}</span>'
    elif outcome.verdict is None:
        verdict = _badge("not run")
        notes = "not audited in this run"
    else:
        verdict = _badge(outcome.verdict) + _from_memory_mark(outcome.checks)
        off = [c for c in outcome.checks if c.get("state") not in (None, "within range")]
        notes = " ".join(escape(str(c.get("reason", ""))) for c in off[:3])
        if len(off) > 3:
            notes += f" And {len(off) - 3} more."
        date = fmt.date_text(results.get("audit_date"))
        zone = fmt.text(results.get("zone"), "count")
        basking = _basking(outcome)
        replacement = _next_replacement(outcome)
        actions = str(len(results.get("actions", [])))
    pdf = outcome.report[:-len(".html")] + ".pdf" if outcome.report else None
    links = " · ".join(filter(None, (_link(outcome.report, "report"),
                                     _link(pdf if pdf in pdfs else None, "PDF"),
                                     _link(outcome.notebook, "workbook"))))
    notes = f'<div class="small">{notes}</div>' if notes else ""
    return (f'<tr><th scope="row">{escape(outcome.id)}<div class="small">'
            f"{escape(outcome.name)}</div></th><td class='num'>{date}</td>"
            f"<td class='num'>{zone}</td><td>{verdict}{notes}</td>"
            f"<td class='num'>{basking}</td><td class='num'>{replacement}</td>"
            f"<td class='num'>{actions}</td><td>{links}</td></tr>")


def render_index(site_name: str, outcomes, *, facts=(), overview=None,
                 generated: dt.datetime | None = None, library_version: str = "",
                 logo_data_uri: str = "", pdfs=()) -> str:
    """Return the index page of a batch run as one HTML document.

    Parameters
    ----------
    site_name : str
        The site's name (escaped here).
    outcomes : sequence of EnclosureOutcome
        One per enclosure, in site order (``id``, ``name``, ``verdict``, ``report``,
        ``notebook``, ``checks``, ``error``; links relative to the index).
    facts : sequence of (label, value)
        Shown under the title (auditor, audit date, ...).
    overview : EnclosureOutcome, optional
        The site overview report, linked at the top when it ran.
    generated : datetime, optional
        When the run ended (default now, UTC).
    library_version : str
        Shown in the provenance block.
    logo_data_uri : str
        The site's logo as a ``data:`` URI ("" for none).
    pdfs : collection of str
        PDF files that exist, relative to the index: each is linked beside its report.
    """
    generated = generated or dt.datetime.now(dt.timezone.utc)
    failed = [o for o in outcomes if o.error]
    if overview is not None and overview.error:
        failed.append(overview)
    done = [o for o in outcomes if o.verdict is not None and not o.error]
    dates = sorted({(getattr(o, "results", None) or {}).get("audit_date") for o in done} - {None})
    if dates:
        facts = [*facts, ("Audit dates" if len(dates) > 1 else "Audit date", ", ".join(dates))]
    pdfs = set(pdfs)
    logo = (f'<img class="report-logo" src="{escape(logo_data_uri, quote=True)}" alt="logo">'
            if logo_data_uri else "")
    borderline = [o for o in done if o.verdict == BORDERLINE]
    facts_html = "".join(f"<div><dt>{escape(str(k))}</dt><dd>{escape(str(v))}</dd></div>"
                         for k, v in facts)
    parts = [
        "<!DOCTYPE html>",
        '<html lang="en"><head><meta charset="utf-8">',
        '<meta name="viewport" content="width=device-width, initial-scale=1.0">',
        f"<title>Lighting audit: {escape(site_name)}</title>",
        f"<style>\n{_CSS.read_text(encoding='utf-8')}\n</style></head>",
        '<body class="audit-report">',
        f'<header class="report-header">{logo}<div class="report-heading">',
        '<p class="report-kind">Lighting audit: site index</p>',
        f'<h1 class="report-title">{escape(site_name)}</h1>',
        f'<dl class="report-facts">{facts_html}</dl></div></header>',
        '<main class="report-body">',
        '<div class="site-summary">',
        f"<div><strong>{len(outcomes)}</strong> enclosures</div>",
        f"<div><strong>{len(done)}</strong> audited</div>",
        f"<div><strong>{len(borderline)}</strong> borderline</div>",
        f"<div><strong>{len(failed)}</strong> could not be audited</div></div>",
    ]
    if overview is not None and overview.report:
        pdf = overview.report[:-len(".html")] + ".pdf"
        extra = f" ({_link(pdf, 'PDF')})" if pdf in pdfs else ""
        parts.append(f'<p class="overview-link">{_link(overview.report, "Site overview")}'
                     f"{extra}: every enclosure's verdict, basking maximum and lamps.</p>")
    parts += [
        "<h2>Enclosures</h2>",
        '<div class="table-wrap"><table id="verdicts" class="data"><thead><tr>'
        '<th scope="col">Enclosure</th><th scope="col" class="num">Audit date</th>'
        '<th scope="col" class="num">Zone</th><th scope="col">Verdict and checks outside '
        'range</th><th scope="col" class="num">Highest UV Index [UVI] (target)</th>'
        '<th scope="col" class="num">Next replacement</th>'
        '<th scope="col" class="num">Actions</th><th scope="col">Files</th></tr></thead>'
        "<tbody>",
        *(_row(o, pdfs) for o in outcomes),
        "</tbody></table></div>",
    ]
    if failed:
        items = "".join(f"<li><strong>{escape(o.id)}</strong>: {escape(o.error)}</li>"
                        for o in failed)
        parts.append(f'<section class="failures"><h2>Could not be audited</h2><ul>{items}</ul>'
                     "<p>Fix the cause and run again; finished reports are kept.</p></section>")
    parts += [
        "</main>",
        '<section class="report-cautions"><h2>Cautions</h2><ul>',
        *(f"<li>{escape(c)}</li>" for c in CAUTIONS),
        "</ul></section>",
        '<footer class="report-provenance"><h2>Provenance</h2><dl>',
        f"<div><dt>Generated</dt><dd>{escape(generated.isoformat(timespec='seconds'))}</dd></div>",
        f"<div><dt>Library version</dt><dd>audit_lib {escape(library_version)}</dd></div>",
        "<div><dt>Machine-readable results</dt><dd>"
        '<a href="results.json">results.json</a> · <a href="results.csv">results.csv</a>'
        "</dd></div></dl></footer>",
        "</body></html>",
    ]
    return "\n".join(parts)
