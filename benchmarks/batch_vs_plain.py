"""Batch run versus the plain approach, on the demo site, in the same run.

Batch: ``light-audit run SITE --out DIR`` (a pool of workers, each with one warm kernel and a
cached HTML exporter). Plain: what a user would script, one ``papermill`` command and one
``jupyter nbconvert`` command per enclosure, in sequence.

Prints the wall time of each, ``ratio=<batch/plain>``, the batch's cost per enclosure and the
peak memory of the batch's whole process tree (main process, workers and kernels, sampled
from /proc every 0.1 s). Goals from the issue: ratio <= 0.15 and <= 1.5 s per enclosure on
the two-core machine.

Usage: python benchmarks/batch_vs_plain.py [--site DIR] [--plain-sample N] [--jobs N]
[--batch-runs N]
(``--plain-sample N`` times the plain approach on the first N enclosures only and scales the
time to all of them; by default every enclosure is run both ways. ``--batch-runs N`` runs the
batch N times and uses the median, for a machine where other work adds spread.)
"""

from __future__ import annotations

import argparse
import os
import shutil
import statistics
import subprocess
import sys
import tempfile
import threading
import time
from pathlib import Path

ROOT = Path(__file__).resolve().parents[1]
BIN = Path(sys.executable).parent


def _tree_rss(pid: int) -> int:
    try:
        import psutil
    except ImportError:
        return 0
    try:
        proc = psutil.Process(pid)
        procs = [proc, *proc.children(recursive=True)]
    except psutil.Error:
        return 0
    total = 0
    for p in procs:
        try:
            total += p.memory_info().rss
        except psutil.Error:
            pass
    return total


def _run_sampled(cmd: list[str], env: dict) -> tuple[float, int, int]:
    start = time.perf_counter()
    proc = subprocess.Popen(cmd, env=env, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE)
    peak = 0
    done = threading.Event()

    def sample():
        nonlocal peak
        while not done.is_set():
            peak = max(peak, _tree_rss(proc.pid))
            time.sleep(0.1)

    thread = threading.Thread(target=sample, daemon=True)
    thread.start()
    _, err = proc.communicate()
    done.set()
    thread.join()
    if proc.returncode not in (0, 1):
        sys.exit(f"command failed: {' '.join(cmd)}\n{err.decode()[-2000:]}")
    return time.perf_counter() - start, peak, proc.returncode


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--site", default=str(ROOT / "sample_sites" / "kestrel-moor-wildlife-park"))
    parser.add_argument("--plain-sample", type=int, default=0)
    parser.add_argument("--jobs", type=int, default=None)
    parser.add_argument("--batch-runs", type=int, default=1)
    args = parser.parse_args()

    sys.path.insert(0, str(ROOT))
    from audit_lib.site.folder import load_site

    site_dir = Path(args.site).resolve()
    ids = [e.id for e in load_site(site_dir).records.enclosures]
    env = {k: v for k, v in os.environ.items() if k != "MPLBACKEND"}
    work = Path(tempfile.mkdtemp(prefix="batch-bench-"))
    try:
        cmd = [str(BIN / "light-audit"), "run", str(site_dir), "--out", str(work / "batch"),
               "--quiet"] + (["--jobs", str(args.jobs)] if args.jobs else [])
        runs = [_run_sampled(cmd, env) for _ in range(max(1, args.batch_runs))]
        batch_s = statistics.median(r[0] for r in runs)
        peak = max(r[1] for r in runs)
        status = max(r[2] for r in runs)
        sample = ids[: args.plain_sample] if args.plain_sample else ids
        plain_dir = work / "plain"
        plain_dir.mkdir()
        start = time.perf_counter()
        for enclosure_id in sample:
            out_nb = plain_dir / f"{enclosure_id}.ipynb"
            subprocess.run([str(BIN / "papermill"), "--log-level", "ERROR", "-k", "audit-lib",
                            str(ROOT / "workbooks" / "enclosure_report.ipynb"), str(out_nb),
                            "-p", "site_dir", str(site_dir), "-p", "enclosure_id", enclosure_id],
                           check=True, env=env, cwd=ROOT / "workbooks",
                           stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
            subprocess.run([str(BIN / "jupyter"), "nbconvert", "--log-level", "ERROR", "--to",
                            "html", "--no-input", str(out_nb)], check=True, env=env,
                           stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL)
        plain_s = (time.perf_counter() - start) * len(ids) / len(sample)
    finally:
        shutil.rmtree(work, ignore_errors=True)
    print(f"enclosures={len(ids)} (plus the site overview in the batch)")
    print(f"batch_s={batch_s:.1f} exit_status={status}"
          + (f" (median of {len(runs)}: {', '.join(f'{r[0]:.1f}' for r in runs)})"
             if len(runs) > 1 else ""))
    print(f"plain_s={plain_s:.1f}" + (f" (scaled from {len(sample)})" if args.plain_sample else ""))
    print(f"ratio={batch_s / plain_s:.3f}")
    print(f"per_enclosure_s={batch_s / len(ids):.2f}")
    print(f"peak_memory_mb={peak / 2**20:.0f}")


if __name__ == "__main__":
    main()
