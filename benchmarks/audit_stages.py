"""Processor time of the enclosure workbook's computing cell, per enclosure (issue 16).

On the demo park (12 enclosures, the reports' 2 cm grid), for each enclosure: the audit with
its plan (:func:`audit_lib.pipeline.plan.audit_with_plan`) and the previous audit's
comparison (:func:`audit_lib.pipeline.previous.previous_audit`), the two calls of the
workbook's computing cell. Processor time (``time.process_time``), the least of
``--repeats`` runs per enclosure: the machine is shared, and processor time is what a batch
of many enclosures pays. The history store is brought up to date first (as a batch does),
so the previous audit is modelled again.

Prints ``audit_s_per_enclosure``, ``plan_s_per_enclosure``, ``previous_s_per_enclosure``
and ``cell_s_per_enclosure`` (their sum; target <= 0.35 s), means over the enclosures.
"""

from __future__ import annotations

import os
import sys
import time
import warnings
from pathlib import Path

os.environ.setdefault("MPLBACKEND", "Agg")
sys.path.insert(0, str(Path(__file__).resolve().parents[1]))

SITE = Path(__file__).resolve().parents[1] / "sample_sites" / "kestrel-moor-wildlife-park"


def main(repeats: int = 3) -> None:
    from audit_lib.history.sync import sync_site_history
    from audit_lib.pipeline.audit import audit_enclosure, open_enclosure
    from audit_lib.pipeline.plan import plan_for_audit
    from audit_lib.pipeline.previous import previous_audit

    warnings.simplefilter("ignore")
    site, _ = open_enclosure(SITE)
    sync_site_history(site)
    ids = [e.id for e in site.records.enclosures]
    best = {stage: dict.fromkeys(ids, float("inf")) for stage in ("audit", "plan", "previous")}
    for _ in range(repeats):
        for enclosure_id in ids:
            site, _ = open_enclosure(SITE, enclosure_id)
            t0 = time.process_time()
            audit = audit_enclosure(site, enclosure_id)
            t1 = time.process_time()
            audit.plan = plan_for_audit(site, audit)
            t2 = time.process_time()
            previous_audit(site, enclosure_id, audit.audit_date)
            t3 = time.process_time()
            for stage, seconds in (("audit", t1 - t0), ("plan", t2 - t1),
                                   ("previous", t3 - t2)):
                best[stage][enclosure_id] = min(best[stage][enclosure_id], seconds)
    means = {stage: sum(v.values()) / len(ids) for stage, v in best.items()}
    for stage, value in means.items():
        print(f"{stage}_s_per_enclosure={value:.3f}")
    print(f"cell_s_per_enclosure={sum(means.values()):.3f}")


if __name__ == "__main__":
    main(int(sys.argv[sys.argv.index("--repeats") + 1]) if "--repeats" in sys.argv else 3)
