"""Audit the UV and visible lighting of reptile and amphibian enclosures.

The library turns spectra and meter readings into weighted irradiances (UV Index,
vitamin-D-weighted, UVB, illuminance), maps over an enclosure, daily doses over the
photoperiod and verdicts against species-group targets. Its subpackages follow the data
flow, each importing only from those before it:

``light`` → ``sources`` → ``scene`` → ``day`` → ``judge`` → ``site`` → ``history`` →
``pipeline`` → ``report`` → ``run``

The public face is small::

    from audit_lib import load_site, audit_enclosure, WhatIfPlanner

Its names are imported on first use, so ``import audit_lib.light.metrics`` stays light.
"""

from __future__ import annotations

import importlib

__version__ = "0.1.0"

#: Public name -> the module that defines it.
_PUBLIC = {
    "load_site": "audit_lib.site.folder",
    "check_site": "audit_lib.site.folder",
    "audit_enclosure": "audit_lib.pipeline.audit",
    "EnclosureAudit": "audit_lib.pipeline.audit",
    "WhatIfPlanner": "audit_lib.pipeline.planner",
}

__all__ = ["__version__", *_PUBLIC]


def __getattr__(name: str):
    """Import a public name from the module that defines it on first use (PEP 562)."""
    if name in _PUBLIC:
        return getattr(importlib.import_module(_PUBLIC[name]), name)
    raise AttributeError(f"module 'audit_lib' has no attribute {name!r}")
