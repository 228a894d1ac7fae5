"""A whole collection in one batch: N enclosures against one plain run, in the same run.

Generates a site of ``--enclosures`` enclosures (default 300) by copying the demo park's
enclosures under new ids (``rh-01-c002`` ...) with their readings, runs
``light-audit run`` on it, and runs one plain ``papermill`` + ``jupyter nbconvert`` pair of
the enclosure workbook on one demo enclosure in the same run. Prints::

    enclosures= batch_s= per_enclosure_s= plain_one_s= ratio= peak_mb=

``ratio`` = per-enclosure wall time of the batch / one plain run; ``peak_mb`` = peak resident
memory of all the batch's processes together (main process, workers, kernels; sampled from
/proc every 0.1 s). Goals (issue "a whole collection in minutes"): ratio <= 0.05 and
peak_mb <= 2048 at 300 enclosures on the two-core machine.

Usage: python benchmarks/batch_scale.py [--enclosures N] [--jobs N] [--keep DIR]
"""

from __future__ import annotations

import argparse
import os
import shutil
import subprocess
import sys
import tempfile
import time
from pathlib import Path

import pandas as pd
import tomli_w
import tomllib

sys.path.insert(0, str(Path(__file__).resolve().parent))
from batch_vs_plain import BIN, ROOT, _run_sampled  # noqa: E402

DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"


def make_collection(dest: Path, n: int) -> list[str]:
    """Write a site of ``n`` enclosures copied from the demo park; returns their ids."""
    shutil.copytree(DEMO, dest)
    doc = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))
    base = doc["enclosures"]
    enclosures, renames = [], {}
    for i in range(n):
        original = base[i % len(base)]
        copy_no = i // len(base) + 1
        new_id = original["id"] if copy_no == 1 else f"{original['id']}-c{copy_no:03d}"
        enclosures.append({**original, "id": new_id,
                           "name": original.get("name", new_id) + ("" if copy_no == 1
                                                                   else f" (copy {copy_no})")})
        renames.setdefault(original["id"], []).append(new_id)
    doc["enclosures"] = enclosures
    (dest / "site.toml").write_text(tomli_w.dumps(doc), encoding="utf-8")
    for path in sorted((dest / "readings").glob("*.csv")):
        lines = path.read_text(encoding="utf-8").splitlines(keepends=True)
        head = [ln for ln in lines if ln.startswith("#")]
        table = pd.read_csv(path, comment="#", dtype=str, keep_default_na=False)
        parts = [table[table["enclosure"] == old].assign(enclosure=new)
                 for old, news in renames.items() for new in news]
        parts.append(table[~table["enclosure"].isin(renames)])
        with path.open("w", encoding="utf-8", newline="") as out:
            out.writelines(head)
            pd.concat(parts).to_csv(out, index=False)
    return [e["id"] for e in enclosures]


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--enclosures", type=int, default=300)
    parser.add_argument("--jobs", type=int, default=None)
    parser.add_argument("--keep", default="", help="keep the generated site and outputs here")
    args = parser.parse_args()

    env = {k: v for k, v in os.environ.items() if k != "MPLBACKEND"}
    work = Path(args.keep) if args.keep else Path(tempfile.mkdtemp(prefix="batch-scale-"))
    work.mkdir(parents=True, exist_ok=True)
    try:
        site = work / "collection"
        if site.exists():
            shutil.rmtree(site)
        ids = make_collection(site, args.enclosures)
        cmd = [str(BIN / "light-audit"), "run", str(site), "--out", str(work / "batch"),
               "--quiet"] + (["--jobs", str(args.jobs)] if args.jobs else [])
        batch_s, peak, status = _run_sampled(cmd, env)
        reports = len(list((work / "batch" / "reports").glob("*.html")))

        plain_nb = work / "plain.ipynb"
        start = time.perf_counter()
        subprocess.run([str(BIN / "papermill"), "--log-level", "ERROR", "-k", "audit-lib",
                        str(ROOT / "workbooks" / "enclosure_report.ipynb"), str(plain_nb),
                        "-p", "site_dir", str(DEMO), "-p", "enclosure_id", "rh-01"],
                       check=True, env=env, cwd=ROOT / "workbooks",
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        subprocess.run([str(BIN / "jupyter"), "nbconvert", "--log-level", "ERROR", "--to",
                        "html", "--no-input", str(plain_nb)], check=True, env=env,
                       stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        plain_s = time.perf_counter() - start
    finally:
        if not args.keep:
            shutil.rmtree(work, ignore_errors=True)
    per = batch_s / len(ids)
    print(f"enclosures={len(ids)}")
    print(f"batch_s={batch_s:.1f}")
    print(f"exit_status={status}")
    print(f"reports_written={reports}")
    print(f"per_enclosure_s={per:.3f}")
    print(f"plain_one_s={plain_s:.2f}")
    print(f"ratio={per / plain_s:.3f}")
    print(f"peak_mb={peak / 2**20:.0f}")


if __name__ == "__main__":
    main()
