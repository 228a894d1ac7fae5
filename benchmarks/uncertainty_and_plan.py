"""Extra time per enclosure for the checks' intervals and the plan (issues 15 and 16).

On the demo park (12 enclosures, the reports' 2 cm grid), for each enclosure: the time of
the intervals (the audit's uncertainty budget and every check's 90 % interval, the only
work the audit adds) and of the plan search (enclosures that are not "meets targets").
The plan's time is processor time (``time.process_time``, the least of ``--repeats`` runs:
the machine is shared, and processor time is what a batch of many enclosures pays).

Prints ``interval_ms_per_enclosure`` (median), ``plan_s_per_planned_enclosure`` (median and
max over those planned), ``plan_s_per_enclosure`` (the plan's total over all enclosures,
as the batch pays it; target <= 0.25 s) and ``planned_enclosures``.
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


def main(repeats: int = 3) -> None:
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
        runs = []
        for _ in range(repeats):
            t0 = time.process_time()
            plan = plan_for_audit(site, audit)
            runs.append(time.process_time() - t0)
        if plan is not None:
            plan_s[e.id] = min(runs)
    n = len(site.records.enclosures)
    print(f"interval_ms_per_enclosure={statistics.median(interval_ms):.2f}")
    print(f"planned_enclosures={len(plan_s)}")
    if plan_s:
        print(f"plan_s_per_planned_enclosure={statistics.median(plan_s.values()):.2f}")
        print(f"plan_s_max={max(plan_s.values()):.2f}")
    print(f"plan_s_per_enclosure={sum(plan_s.values()) / n:.3f}")
    for k, v in plan_s.items():
        print(f"plan_s_{k}={v:.2f}")


if __name__ == "__main__":
    main(int(sys.argv[sys.argv.index("--repeats") + 1]) if "--repeats" in sys.argv else 3)
