"""Extra time per enclosure for the checks' intervals and the plan (issue 15).

On the demo park (12 enclosures, the reports' 2 cm grid), for each enclosure: the time of
the intervals (the audit's uncertainty budget and every check's 90 % interval, the only
work the audit adds) and of the plan search (enclosures that are not "meets targets").

Prints ``interval_ms_per_enclosure`` (median), ``plan_s_per_planned_enclosure`` (median and
max over those planned), ``plan_s_per_enclosure`` (the plan's total over all enclosures,
as the batch pays it) and ``planned_enclosures``. Target: <= 0.2 s extra per enclosure.
"""

from __future__ import annotations

import os
import statistics
import sys
import time
import warnings
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

SITE = Path(__file__).resolve().parents[1] / "sample_sites" / "kestrel-moor-wildlife-park"


def main() -> None:
    from audit_lib.pipeline.audit import audit_enclosure
    from audit_lib.pipeline.findings import figure_intervals
    from audit_lib.pipeline.plan import plan_for_audit
    from audit_lib.pipeline.uncertainty import audit_uncertainty
    from audit_lib.site.folder import load_site

    warnings.simplefilter("ignore")
    site = load_site(SITE)
    interval_ms, plan_s = [], {}
    for e in site.records.enclosures:
        audit = audit_enclosure(site, e.id, with_failures=False)
        t0 = time.perf_counter()
        for _ in range(20):
            u = audit_uncertainty(site, e.id, audit.audit_date, audit.points)
            figure_intervals(audit.findings, audit.maps["floor"].values["uvi"], u)
        interval_ms.append(1e3 * (time.perf_counter() - t0) / 20)
        t0 = time.perf_counter()
        plan = plan_for_audit(site, audit)
        if plan is not None:
            plan_s[e.id] = time.perf_counter() - t0
    n = len(site.records.enclosures)
    print(f"interval_ms_per_enclosure={statistics.median(interval_ms):.2f}")
    print(f"planned_enclosures={len(plan_s)}")
    if plan_s:
        print(f"plan_s_per_planned_enclosure={statistics.median(plan_s.values()):.2f}")
        print(f"plan_s_max={max(plan_s.values()):.2f}")
    print(f"plan_s_per_enclosure={sum(plan_s.values()) / n:.2f}")
    for k, v in plan_s.items():
        print(f"plan_s_{k}={v:.2f}")


if __name__ == "__main__":
    main()
