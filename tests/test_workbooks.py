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


def test_one_draw_png_matches_savefig():
    """matplotlib's own ``savefig`` (Agg backend) is the reference: the one-draw PNG of a
    constrained-layout figure with a colour bar has the same size and the same pixels
    (decoded with Pillow)."""
    import io

    import matplotlib
    import numpy as np
    from PIL import Image, ImageChops

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    from audit_lib.report.audit_figures import png_bytes

    fig, ax = plt.subplots(figsize=(4, 3), dpi=96, layout="constrained")
    image = ax.imshow(np.arange(12.0).reshape(3, 4), cmap="cividis")
    fig.colorbar(image, ax=ax).set_label("UV Index [-]")
    ax.set_title("surface (z = 0.45 m)")
    ours = Image.open(io.BytesIO(png_bytes(fig))).convert("RGBA")
    reference = io.BytesIO()
    fig.savefig(reference, format="png")
    plt.close(fig)
    theirs = Image.open(reference).convert("RGBA")
    assert ours.size == theirs.size == (384, 288)
    assert ImageChops.difference(ours, theirs).getbbox() is None
    empty = plt.figure()
    assert png_bytes(empty) is None  # nothing to show, as IPython's own formatter
    plt.close(empty)


def test_png_encoder_round_trips_through_pillow():
    """Our PNG writer (W3C PNG / ISO/IEC 15948) decodes with Pillow, the reference reader,
    to the same RGB and RGBA pixels and the stored resolution."""
    import io

    import numpy as np
    from PIL import Image

    from audit_lib.report.audit_figures import encode_png

    rng = np.random.default_rng(1)
    for channels, mode in ((3, "RGB"), (4, "RGBA")):
        pixels = rng.integers(0, 256, (7, 5, channels), dtype=np.uint8)
        image = Image.open(io.BytesIO(encode_png(pixels, 96)))
        assert image.mode == mode and image.size == (5, 7)
        assert np.array_equal(np.asarray(image), pixels)
        assert image.info["dpi"][0] == pytest.approx(96, abs=0.05)  # whole pixels per metre
