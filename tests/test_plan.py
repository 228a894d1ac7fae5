"""The plan of an enclosure on the demo park (audit_lib.pipeline.plan).

Not an external check of a published value: these tests hold the plan to the what-if
planner (an independent run of the same pipeline must confirm every predicted check) and
to the borderline rule (a resolving plan leaves every 90 % interval inside its target).
"""

from __future__ import annotations

import warnings
from pathlib import Path

import pytest

from audit_lib.judge import targets

SITE = Path(__file__).resolve().parent.parent / "sample_sites" / "kestrel-moor-wildlife-park"


@pytest.fixture(scope="module")
def park():
    from audit_lib.site.folder import load_site

    return load_site(SITE)


def _planned(site, enclosure_id):
    from audit_lib.pipeline.plan import audit_with_plan

    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return audit_with_plan(site, enclosure_id, with_failures=False)


@pytest.mark.slow
def test_rh02_plan_is_confirmed_by_the_what_if_planner(park):
    """Applying the plan's settings in a fresh planner gives the plan's checks_after."""
    from audit_lib.pipeline.planner import WhatIfPlanner

    audit = _planned(park, "rh-02")
    plan = audit.plan
    assert plan is not None and plan.actions
    planner = WhatIfPlanner(park, "rh-02", lamp=plan.lamp, audit_date=audit.audit_date,
                            spacing_m=0.02, uncertainty=audit.findings.uncertainty)
    result = planner.update(**plan.settings)
    assert [c.id for c in result.checks] == [c.id for c in plan.checks_after]
    for got, want in zip(result.checks, plan.checks_after, strict=True):
        assert got.state == want.state, got.id
        if want.value is not None:
            assert got.value == pytest.approx(want.value, rel=1e-9), got.id
            assert got.value_low == pytest.approx(want.value_low, rel=1e-9), got.id
    # the plan starts from the report's own checks
    assert [c.value for c in plan.checks_before] == [c.value for c in audit.checks]


@pytest.mark.slow
def test_a_resolving_plan_leaves_every_interval_inside_its_target(park):
    """rh-03 (borderline basking maximum) is fixed, interval included."""
    plan = _planned(park, "rh-03").plan
    assert plan.resolves_all
    assert all(c.state in (targets.WITHIN, targets.NO_DATA) for c in plan.checks_after)
    for c in plan.checks_after:
        if c.value_low is not None:
            assert c.target_low <= c.value_low and c.value_high <= c.target_high, c.id


@pytest.mark.slow
def test_some_demo_enclosure_cannot_be_fixed_with_the_lamps_at_hand(park):
    """At least one plan says plainly that nothing at the site resolves every check."""
    from audit_lib.pipeline.plan import plan_entry
    from audit_lib.report.enclosure import check_entry

    plans = {e: _planned(park, e).plan for e in ("rh-02", "rh-05", "rh-08")}
    stuck = [p for p in plans.values() if p is not None and not p.resolves_all]
    assert stuck
    assert any("cannot" in p.reason or "Nothing the site has" in p.reason for p in stuck)
    entry = plan_entry(stuck[0], check_entry)
    assert set(entry) == {"lamp", "actions", "checks_after", "resolves_all", "reason"}
    assert entry["resolves_all"] is False
    assert {"value_low", "value_high"} <= set(entry["checks_after"][0])
