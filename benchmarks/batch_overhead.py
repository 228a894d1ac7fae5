"""CPU a batch worker and its warm kernel spend per enclosure, beyond the workbook's own code.

Runs the enclosure workbook of the demo park's enclosures through one batch worker (one warm
kernel, the batch's own ``_init_worker`` and ``_run_task``), after one unmeasured enclosure,
and measures process CPU times (user + system, from ``psutil``). Prints::

    enclosures= worker_cpu_s= convert_cpu_s= kernel_cpu_s= kernel_cells_cpu_s=
    kernel_overhead_cpu_s= kernel_threads_cpu_s= kernel_gc_cpu_s=

all per enclosure. ``worker_cpu_s``: the worker process (papermill and nbclient message
handling, conversion to HTML, path cleaning, writing); ``convert_cpu_s``: the conversion
alone (:func:`audit_lib.run.notebooks.convert_notebook`). ``kernel_cpu_s``: the kernel process;
``kernel_cells_cpu_s``: CPU of its main thread while it runs the workbook's cells (between
IPython's ``pre_execute`` and ``post_execute`` events: the workbook's code, its figures and
their display); ``kernel_overhead_cpu_s`` = ``kernel_cpu_s`` - ``kernel_cells_cpu_s`` (message
handling, threads, the namespace clear); ``kernel_threads_cpu_s``: the kernel's threads
other than the main one (message sending and receiving); ``kernel_gc_cpu_s``: garbage
collection in the kernel (part of either). Goals (issue "a whole collection in minutes"):
worker_cpu_s <= 0.25, kernel overhead <= 0.3 s beyond running the workbook code in-process.

The machine is shared: CPU times vary by tens of per cent between runs; use ``--repeat``.

Usage: python benchmarks/batch_overhead.py [--enclosures N] [--repeat N] [--site DIR]
"""

from __future__ import annotations

import argparse
import tempfile
import time
import warnings
from pathlib import Path

import psutil

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"

# in the kernel: main-thread CPU inside cells, and time in garbage collection (names kept on
# the sys module so the batch's namespace clear leaves them)
_PROBE = """\
import sys as _s
_s.audit_probe = {"cells": 0.0, "gc": 0.0}
def _audit_probe_setup():
    import gc, sys, time
    probe = sys.audit_probe
    ip = get_ipython()
    ip.events.register("pre_execute", lambda: probe.__setitem__("t", time.thread_time()))
    ip.events.register("post_execute", lambda: probe.__setitem__(
        "cells", probe["cells"] + time.thread_time() - probe.get("t", time.thread_time())))
    def on_gc(phase, info):
        if phase == "start":
            probe["g"] = time.thread_time()
        else:
            probe["gc"] += time.thread_time() - probe.get("g", time.thread_time())
    gc.callbacks.append(on_gc)
_audit_probe_setup()
del _audit_probe_setup, _s
"""


def _cpu(process) -> float:
    t = process.cpu_times()
    return t.user + t.system


def _threads_cpu(process) -> float:
    """CPU of a process's threads other than its main one [s]."""
    return sum(t.user_time + t.system_time for t in process.threads() if t.id != process.pid)


def _probe(kc) -> dict:
    from nbclient.util import run_sync

    found = {}

    def hook(msg):
        if msg["msg_type"] == "execute_result":
            found.update(eval(msg["content"]["data"]["text/plain"]))  # noqa: S307 - own dict

    run_sync(kc.execute_interactive)("import sys; dict(sys.audit_probe)", output_hook=hook,
                                     timeout=30)
    return found


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--enclosures", type=int, default=6)
    parser.add_argument("--repeat", type=int, default=1)
    parser.add_argument("--site", type=Path, default=DEMO)
    args = parser.parse_args()
    warnings.simplefilter("ignore")

    from nbclient.util import run_sync

    from audit_lib.run import batch, notebooks
    from audit_lib.site.folder import load_site

    site_dir = args.site.resolve()
    out = Path(tempfile.mkdtemp(prefix="batch-overhead-"))
    (out / "reports").mkdir()
    batch._init_worker(batch._WARM_UP.replace("SITE_DIR", repr(str(site_dir))))
    site = load_site(site_dir)
    ids = [e.id for e in site.records.enclosures][: args.enclosures]
    tasks = batch._tasks(site, site_dir, out, ids, None, batch.ENCLOSURE_WORKBOOK)
    kernel = batch._WORKER["kernel"]
    batch._run_task(tasks[-1])  # unmeasured: first-use costs
    run_sync(kernel.kc.execute_interactive)(_PROBE, timeout=30)

    convert = [0.0]
    original = notebooks.convert_notebook

    def timed(*a, **k):
        t = time.thread_time()
        try:
            return original(*a, **k)
        finally:
            convert[0] += time.thread_time() - t

    batch.convert_notebook = timed
    me = psutil.Process()
    kp = [p for p in me.children(recursive=True)]
    w0, k0, p0 = _cpu(me), sum(_cpu(p) for p in kp), _probe(kernel.kc)
    t0 = sum(_threads_cpu(p) for p in kp)
    n = 0
    for _ in range(args.repeat):
        for task in tasks:
            result = batch._run_task(task)
            if result.get("error"):
                raise SystemExit(f"{task['id']}: {result['error']}")
            n += 1
    w1, k1, p1 = _cpu(me), sum(_cpu(p) for p in kp), _probe(kernel.kc)
    t1 = sum(_threads_cpu(p) for p in kp)
    kernel.shutdown()
    kernel_cpu = (k1 - k0) / n
    cells = (p1["cells"] - p0["cells"]) / n
    print(f"enclosures={n}")
    print(f"worker_cpu_s={(w1 - w0) / n:.3f}")
    print(f"convert_cpu_s={convert[0] / n:.3f}")
    print(f"kernel_cpu_s={kernel_cpu:.3f}")
    print(f"kernel_cells_cpu_s={cells:.3f}")
    print(f"kernel_overhead_cpu_s={kernel_cpu - cells:.3f}")
    print(f"kernel_threads_cpu_s={(t1 - t0) / n:.3f}")
    print(f"kernel_gc_cpu_s={(p1['gc'] - p0['gc']) / n:.3f}")


if __name__ == "__main__":
    main()
