"""The committed workbooks: clean, parameterised, and running as they are on the demo site.

External references: nbformat's notebook schema (``nbformat.validate``); papermill's
``parameters`` cell convention; nbval's ``--nbval-lax`` mode (every cell runs without error,
outputs are not compared).
"""

from __future__ import annotations

import ast
import os
import subprocess
import sys
from pathlib import Path

import nbformat
import pytest

ROOT = Path(__file__).resolve().parents[1]
WORKBOOKS = sorted((ROOT / "workbooks").glob("*.ipynb"))
MINE = [ROOT / "workbooks" / "enclosure_report.ipynb", ROOT / "workbooks" / "site_overview.ipynb"]


@pytest.mark.parametrize("path", WORKBOOKS, ids=lambda p: p.name)
def test_workbook_is_clean(path):
    """nbformat schema valid; a kernelspec (papermill needs it); no outputs committed."""
    nb = nbformat.read(path, as_version=4)
    nbformat.validate(nb)
    assert nb.metadata.kernelspec.name == "audit-lib"
    for cell in nb.cells:
        if cell.cell_type == "code":
            assert cell.outputs == [] and cell.execution_count is None


@pytest.mark.parametrize("path", MINE, ids=lambda p: p.name)
def test_parameters_cell_form(path):
    """papermill convention: one tagged parameters cell; each line `name: type = default  # help`;
    the cell after it validates the parameters (calls open_enclosure)."""
    nb = nbformat.read(path, as_version=4)
    tagged = [i for i, c in enumerate(nb.cells) if "parameters" in c.metadata.get("tags", [])]
    assert len(tagged) == 1
    cell = nb.cells[tagged[0]]
    for line in cell.source.splitlines():
        code, _, help_text = line.partition("#")
        node = ast.parse(code).body[0]
        assert isinstance(node, ast.AnnAssign) and help_text.strip(), line
    assert "open_enclosure(" in nb.cells[tagged[0] + 1].source
    assert "../sample_sites/" in cell.source
    for c in nb.cells:  # thin cells: a call or two, no loops or function definitions
        if c.cell_type == "code":
            tree = ast.parse(c.source)
            assert not any(isinstance(n, (ast.For, ast.While, ast.FunctionDef, ast.ClassDef))
                           for n in ast.walk(tree)), c.source


@pytest.mark.slow
@pytest.mark.parametrize("path", MINE, ids=lambda p: p.name)
def test_workbook_runs_as_it_is(path):
    """nbval --nbval-lax: every cell of the workbook runs on the demo site without error."""
    env = {k: v for k, v in os.environ.items() if k != "MPLBACKEND"}
    run = subprocess.run(
        [sys.executable, "-m", "pytest", "-q", "-p", "no:cacheprovider", "--nbval-lax",
         "--nbval-kernel-name", "audit-lib", str(path)],
        capture_output=True, text=True, cwd=path.parent, env=env, timeout=900)
    assert run.returncode == 0, run.stdout[-3000:] + run.stderr[-2000:]
    assert " passed" in run.stdout
