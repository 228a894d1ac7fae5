"""The plan and the intervals in a report: before/after table, interval text, borderline.

Thin views of :class:`audit_lib.pipeline.plan.Plan` and of the checks' 90 % intervals
(:mod:`audit_lib.judge.uncertainty`); nothing is computed here. Text from site files is
escaped.
"""

from __future__ import annotations

from html import escape

from audit_lib.judge.targets import BORDERLINE
from audit_lib.report import formats as fmt
from audit_lib.report.index_page import state_class

#: What "borderline" means, in one sentence (reports and index).
BORDERLINE_EXPLAINED = ("Borderline: the figure's 90 % interval (from the meter's uncertainty, "
                        "the spread of the model's fit to the readings and, for forecasts, "
                        "lamp decay) crosses a limit, so the check may be met or not; "
                        "measure again or gain margin.")


class _HTML(str):
    def _repr_html_(self) -> str:
        return str(self)


def _quantity(check) -> str:
    return fmt.check_quantity(check.id, check.unit)


def _fmt(check, value) -> str:
    """A figure of ``check`` as the reports show it (:mod:`audit_lib.report.formats`)."""
    return fmt.text(value, _quantity(check))


def _target(check) -> str:
    """The target range as the checks table shows it ("2.9–7.4", "at least 30")."""
    return fmt.check_range_text({"check_id": check.id, "unit": check.unit,
                                 "value": check.value, "state": check.state,
                                 "target_low": check.target_low,
                                 "target_high": check.target_high})


def interval_text(check) -> str:
    """``"(90 %: low–high)"`` beside a figure; empty without an interval or of zero width."""
    low, high = check.value_low, check.value_high
    if low is None or high is None or low == high:
        return ""
    return f" (90 %: {_fmt(check, low)}–{_fmt(check, high)})"


def borderline_note(checks) -> str:
    """The one-sentence explanation when any check is borderline, else ""."""
    return BORDERLINE_EXPLAINED if any(c.state == BORDERLINE for c in checks) else ""


def _badge(state: str) -> str:
    return f'<span class="state {state_class(state)}">{escape(state)}</span>'


def plan_table(audit) -> _HTML:
    """The enclosure's plan: its changes, then every check before and after, and why."""
    plan = getattr(audit, "plan", None)
    if plan is None:
        return _HTML("<p>No plan is needed: every check is within range with its interval.</p>")
    actions = "".join(f"<li><strong>{escape(a.kind)}</strong>: {escape(a.text)}</li>"
                      for a in plan.actions) or "<li>no change</li>"
    after = {c.name: c for c in plan.checks_after}
    rows = []
    for c in plan.checks_before:
        a = after.get(c.name)
        rows.append(
            f"<tr><td>{escape(c.name)}</td>"
            f"<td class='num'>{_fmt(c, c.value)}{escape(interval_text(c))}</td>"
            f"<td>{_badge(c.state)}</td>"
            f"<td class='num'>{_fmt(a, a.value) if a else '–'}"
            f"{escape(interval_text(a)) if a else ''}</td>"
            f"<td>{_badge(a.state) if a else ''}</td>"
            f"<td>{escape(fmt.QUANTITIES[_quantity(c)].unit)}</td>"
            f"<td class='num'>{escape(_target(c))}</td></tr>")
    return _HTML(
        f'<div class="plan"><p>{escape(plan.reason)}</p><ul class="actions">{actions}</ul>'
        '<div class="table-wrap"><table class="checks"><thead><tr><th>Check</th>'
        '<th class="num">Now</th><th>State</th><th class="num">With the plan</th><th>State</th>'
        '<th>Unit</th><th class="num">Target</th></tr></thead>'
        f'<tbody>{"".join(rows)}</tbody></table></div></div>')


__all__ = ["BORDERLINE_EXPLAINED", "borderline_note", "interval_text", "plan_table"]
