"""The package's layers import only downwards (design.md, "Parts and who owns what").

Read from the source with :mod:`ast`, not by importing: every ``import`` and ``from ...
import`` of an ``audit_lib`` module, at module level or inside a function, must name a part
listed before the importing part in :data:`LAYERS` (or the same part).
"""

from __future__ import annotations

import ast
from pathlib import Path

PACKAGE = Path(__file__).resolve().parent.parent / "audit_lib"

#: The parts in data-flow order; ``errors`` is the foundation every part may use.
LAYERS = ["errors", "light", "sources", "scene", "day", "judge", "site", "history",
          "pipeline", "report", "run"]



def _part(module: str) -> str:
    parts = module.split(".")
    return parts[1] if len(parts) > 1 else ""


def _imports(path: Path):
    tree = ast.parse(path.read_text(encoding="utf-8"))
    for node in ast.walk(tree):
        if isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
            names = [node.module + "." + a.name for a in node.names] \
                if node.module == "audit_lib" else [node.module]
            yield node, names
        elif isinstance(node, ast.Import):
            yield node, [a.name for a in node.names]


def _module_of(path: Path) -> str:
    rel = path.relative_to(PACKAGE.parent).with_suffix("")
    return ".".join(p for p in rel.parts if p != "__init__")


def test_every_module_belongs_to_a_part():
    for path in PACKAGE.rglob("*.py"):
        module = _module_of(path)
        if module == "audit_lib":
            continue
        assert _part(module) in LAYERS, f"{module} is in no part of {LAYERS}"


def test_parts_import_only_the_parts_before_them():
    bad = []
    for path in PACKAGE.rglob("*.py"):
        me = _module_of(path)
        if me == "audit_lib":
            continue
        mine = LAYERS.index(_part(me))
        for node, names in _imports(path):
            for name in names:
                if not name.startswith("audit_lib.") or name == "audit_lib.__version__":
                    continue
                theirs = _part(name)
                assert theirs in LAYERS, f"{me} imports {name}, which is in no part"
                if LAYERS.index(theirs) > mine:
                    bad.append(f"{me}:{node.lineno} imports {name}")
    assert not bad, "imports that run against the data flow:\n" + "\n".join(bad)


def test_library_imports_sit_at_module_top():
    """The package's own modules are imported at module top, never inside a body (slow
    third-party libraries such as colour, pvlib and papermill may stay lazy)."""
    bad = []
    for path in PACKAGE.rglob("*.py"):
        for node, names in _imports(path):
            if node.col_offset == 0:
                continue
            for name in names:
                if name.startswith("audit_lib"):
                    bad.append(f"{_module_of(path)}:{node.lineno} imports {name} inside a body")
    assert not bad, "\n".join(bad)


def test_the_public_face():
    """``from audit_lib import load_site, audit_enclosure, WhatIfPlanner`` works."""
    from audit_lib import WhatIfPlanner, audit_enclosure, load_site

    assert callable(load_site) and callable(audit_enclosure) and isinstance(WhatIfPlanner, type)
