"""The verdict table: every check with its figure, target, state, source and reason.

States are shown by word and symbol as well as colour (Okabe-Ito colours from
:mod:`audit_lib.report.style`). All text is HTML-escaped: species names, ids and notes come
from user files.
"""

from __future__ import annotations

import html
import math

from audit_lib.report.style import STATE_COLOURS

STATE_SYMBOLS = {
    "within range": "\u2713",
    "below range": "\u25bc",
    "above range": "\u25b2",
    "not enough data": "?",
    "meets targets": "\u2713",
    "needs attention": "!",
}
COLUMNS = ("check", "state", "value", "target", "unit", "reason", "basis", "source", "status")


def _number(x) -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "-"
    if isinstance(x, float) and math.isinf(x):
        return "no limit"
    return f"{x:.3g}"


def _target(check) -> str:
    if math.isinf(check.target_high):
        return f"at least {_number(check.target_low)}"
    return f"{_number(check.target_low)} to {_number(check.target_high)}"


def verdict_frame(verdict):
    """One row per check.

    Parameters
    ----------
    verdict : audit_lib.judge.verdicts.Verdict
        The verdict.

    Returns
    -------
    pandas.DataFrame
        Columns ``check, state, value, target, unit, reason, basis, source, status`` (text, for
        display; the numbers stay in the verdict's :class:`~audit_lib.judge.targets.Check` records).
    """
    import pandas as pd

    rows = [
        {
            "check": c.name,
            "state": f"{STATE_SYMBOLS.get(c.state, '')} {c.state}".strip(),
            "value": _number(c.value),
            "target": _target(c),
            "unit": c.unit,
            "reason": c.reason,
            "basis": c.basis,
            "source": c.source,
            "status": c.status,
        }
        for c in verdict.checks
    ]
    return pd.DataFrame(rows, columns=list(COLUMNS))


def _state_css(text: str) -> str:
    for state, colour in STATE_COLOURS.items():
        if text.endswith(state):
            return f"background-color: {colour}33; border-left: 4px solid {colour}"
    return ""


def style_verdict_table(verdict):
    """The verdict table as a pandas Styler with coloured, symbol-marked states (escaped).

    Parameters
    ----------
    verdict : audit_lib.judge.verdicts.Verdict
        The verdict.

    Returns
    -------
    pandas.io.formats.style.Styler
    """
    frame = verdict_frame(verdict)
    return (
        frame.style.hide(axis="index")
        .format(escape="html")
        .map(_state_css, subset=["state"])
        .set_caption(html.escape(_headline(verdict)))
    )


def _headline(verdict) -> str:
    symbol = STATE_SYMBOLS.get(verdict.state, "")
    return f"{verdict.enclosure} / {verdict.species}: {symbol} {verdict.state}"


def verdict_html(verdict) -> str:
    """A self-contained HTML fragment: headline, reason, caveats, check table and actions.

    Parameters
    ----------
    verdict : audit_lib.judge.verdicts.Verdict
        The verdict.

    Returns
    -------
    str
        HTML with every piece of text escaped.
    """
    e = html.escape
    colour = {"meets targets": STATE_COLOURS["within range"],
              "needs attention": STATE_COLOURS["above range"]}.get(
        verdict.state, STATE_COLOURS["not enough data"])  # fmt: skip
    parts = [
        '<section class="verdict">',
        f'<h3 style="border-left: 6px solid {colour}; padding-left: 6px">{e(_headline(verdict))}'
        "</h3>",
        f"<p>{e(verdict.reason)}</p>",
    ]
    if verdict.notes:
        parts.append('<ul class="verdict-notes">')
        parts += [f"<li><strong>Note:</strong> {e(n)}</li>" for n in verdict.notes]
        parts.append("</ul>")
    frame = verdict_frame(verdict)
    parts.append('<table class="verdict-checks"><thead><tr>')
    parts += [f"<th>{e(c)}</th>" for c in frame.columns]
    parts.append("</tr></thead><tbody>")
    for row in frame.itertuples(index=False):
        cells = []
        for name, value in zip(frame.columns, row, strict=True):
            style = f' style="{_state_css(value)}"' if name == "state" else ""
            cells.append(f"<td{style}>{e(str(value))}</td>")
        parts.append("<tr>" + "".join(cells) + "</tr>")
    parts.append("</tbody></table>")
    if verdict.actions:
        parts.append("<h4>Recommended actions</h4><ol class=\"verdict-actions\">")
        parts += [f"<li>{e(a.text)}</li>" for a in verdict.actions]
        parts.append("</ol>")
    parts.append("</section>")
    return "\n".join(parts)
