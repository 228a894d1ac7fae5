"""Regression pin: every check figure of the demo park's enclosure reports.

Not an external check (those live beside each module): this pins the figures the enclosure
reports showed before the library was regrouped, so that moving code cannot change a number
unnoticed. A figure that changes on purpose is re-pinned in the same commit and named in
the closing note of that change. Values: ``tests/data/regression/kestrel_moor_checks.json``,
written from the batch's ``results.json`` at the workbook's default settings
(map spacing 0.02 m, failure probability 0.05).
"""

from __future__ import annotations

import json
import warnings
from pathlib import Path

import pytest

HERE = Path(__file__).resolve().parent
SITE = HERE.parent / "sample_sites" / "kestrel-moor-wildlife-park"
PIN = HERE / "data" / "regression" / "kestrel_moor_checks.json"


@pytest.fixture(scope="module")
def park_audits():
    from audit_lib.pipeline.audit import audit_enclosure
    from audit_lib.site.folder import load_site

    site = load_site(SITE)
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return {e.id: audit_enclosure(site, e.id, with_failures=False)
                for e in site.records.enclosures}


@pytest.mark.slow
def test_every_check_figure_of_the_demo_park_is_unchanged(park_audits):
    pinned = json.loads(PIN.read_text())
    assert set(park_audits) == set(pinned)
    for enclosure_id, audit in park_audits.items():
        got = {c.name: c.value for c in audit.checks}
        want = pinned[enclosure_id]["checks"]
        assert set(got) == set(want), enclosure_id
        for name, value in want.items():
            if value is None:
                assert got[name] is None, (enclosure_id, name)
            else:
                assert got[name] == pytest.approx(value, rel=1e-9), (enclosure_id, name)
        assert audit.verdict == pinned[enclosure_id]["verdict"], enclosure_id
