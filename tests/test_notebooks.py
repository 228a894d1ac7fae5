"""Executing workbooks on a warm kernel and exporting them with the report template.

External references: nbconvert's documented exporter options (``exclude_input``,
``TagRemovePreprocessor.remove_cell_tags``, template ``extra_template_basedirs``); papermill's
``execute_notebook`` (parameters injected into a tagged cell, ``PapermillExecutionError`` on a
failing cell); the HTML Living Standard for escaping; RFC 2397 for ``data:`` URIs.
"""

from __future__ import annotations

import base64
import re

import nbformat
import pytest
from nbformat.v4 import new_code_cell, new_markdown_cell, new_notebook, new_output

from audit_lib.report.cautions import CAUTIONS
from audit_lib.run.notebooks import (
    HIDDEN_TAGS,
    REPORT_DATA_MIMETYPE,
    WarmKernel,
    convert_notebook,
    logo_data_uri,
    make_exporter,
    read_report_data,
)

HOSTILE = '<script>alert("x")</script> & co'
PNG_1PX = base64.b64decode(
    "iVBORw0KGgoAAAANSUhEUgAAAAEAAAABCAQAAAC1HAwCAAAAC0lEQVR42mNkYAAAAAYAAjCB0C8AAAAASUVORK5CYII=")


def _executed(tmp_path):
    logo = tmp_path / "logo.png"
    logo.write_bytes(PNG_1PX)
    data = {"report": {"title": HOSTILE, "facts": [["Auditor", HOSTILE]],
                       "logo_path": str(logo), "cautions": list(CAUTIONS),
                       "provenance": [["Site file", "site.toml (sha256 abc)"]]},
            "results": {"verdict": "meets targets", "checks": []}}
    cells = [
        new_code_cell("site_dir = 'x'", metadata={"tags": ["parameters"]}),
        new_code_cell("secret_code_line = 1", outputs=[new_output(
            "stream", name="stdout", text="visible output\n")]),
        new_code_cell("publish()", metadata={"tags": ["report-data"]}, outputs=[new_output(
            "display_data", data={REPORT_DATA_MIMETYPE: data, "text/plain": "data"})]),
        new_code_cell("hidden()", metadata={"tags": ["hide-in-report"]}, outputs=[new_output(
            "stream", name="stdout", text="only in JupyterLab\n")]),
        new_markdown_cell("## A heading"),
    ]
    return new_notebook(cells=cells, metadata={"kernelspec": {"name": "audit-lib",
                                                              "display_name": "x"}})


@pytest.fixture(scope="module")
def exporter():
    return make_exporter()


def test_report_is_self_contained(tmp_path, exporter):
    """No script and no remote resource: require.js, MathJax and mermaid are dropped."""
    html = convert_notebook(_executed(tmp_path), exporter)
    assert not re.search(r"<script", html, re.I)
    assert not re.search(r"""(src|href)=["']https?://""", html)
    assert "@media print" in html


def test_report_hides_code_and_tagged_cells(tmp_path, exporter):
    """exclude_input hides code; TagRemovePreprocessor drops the tagged cells."""
    html = convert_notebook(_executed(tmp_path), exporter)
    assert "visible output" in html and "A heading" in html
    assert "secret_code_line" not in html and "site_dir" not in html
    assert "only in JupyterLab" not in html and "publish()" not in html
    assert set(HIDDEN_TAGS) >= {"parameters", "injected-parameters", "report-data"}


def test_report_header_escapes_and_embeds(tmp_path, exporter):
    """Header text is escaped; the logo is embedded as a data: URI (RFC 2397); cautions and
    provenance are shown."""
    html = convert_notebook(_executed(tmp_path), exporter)
    assert "<script>alert" not in html and "&lt;script&gt;alert" in html
    assert 'src="data:image/png;base64,' in html
    assert CAUTIONS[3] in html and "site.toml (sha256 abc)" in html


def test_report_figures_carry_a_text_alternative(tmp_path, exporter):
    """Every figure (``<img>``) has an ``alt`` attribute (WCAG 2.1, success criterion 1.1.1),
    written by the template; each Markdown text is rendered for its own cell (the exporter
    renders a text once and reuses it); the caller's notebook keeps its cells."""
    nb = _executed(tmp_path)
    nb.cells.append(new_code_cell("fig", outputs=[new_output(
        "display_data", data={"image/png": base64.b64encode(PNG_1PX).decode(),
                              "text/plain": "<Figure>"})]))
    nb.cells.append(new_markdown_cell("## Another *heading*"))
    cells = len(nb.cells)
    html = convert_notebook(nb, exporter)
    images = re.findall(r"<img\b[^>]*>", html)
    assert len(images) == 2  # the logo and the figure
    assert all(re.search(r'\balt="[^"]+"', tag) for tag in images)
    assert "A heading" in html and "Another <em>heading</em>" in html
    assert len(nb.cells) == cells
    again = convert_notebook(_executed(tmp_path), exporter)
    assert "A heading" in again and "Another" not in again


def test_report_data_round_trip(tmp_path):
    """The last output of the report-data MIME type is what the batch reads."""
    assert read_report_data(_executed(tmp_path))["results"]["verdict"] == "meets targets"
    assert read_report_data(new_notebook()) is None


def test_logo_must_be_an_image(tmp_path):
    """Only image types become data: URIs."""
    from audit_lib.errors import AuditError

    bad = tmp_path / "logo.txt"
    bad.write_text("not an image")
    with pytest.raises(AuditError, match="logo must be a PNG, JPEG, GIF or SVG"):
        logo_data_uri(bad)
    assert logo_data_uri(None) == ""


@pytest.mark.slow
def test_warm_kernel_clears_the_namespace_between_workbooks(tmp_path):
    """papermill injects parameters; the reused kernel keeps modules but not variables; a
    failing cell raises PapermillExecutionError with the notebook saved."""
    from papermill.exceptions import PapermillExecutionError

    nb = new_notebook(cells=[
        new_code_cell("step = 0", metadata={"tags": ["parameters"]}),
        new_code_cell("if step == 1:\n    leftover = 'from the first run'\n"
                      "if step == 2:\n    assert 'leftover' not in globals()\n"
                      "if step == 3:\n    raise ValueError('failing on purpose')"),
    ], metadata={"kernelspec": {"name": "audit-lib", "display_name": "x", "language": "python"}})
    src = tmp_path / "probe.ipynb"
    nbformat.write(nb, src)
    kernel = WarmKernel(cwd=tmp_path)
    try:
        kernel.execute(src, tmp_path / "one.ipynb", {"step": 1})
        done = kernel.execute(src, tmp_path / "two.ipynb", {"step": 2})
        assert done.metadata.papermill.parameters == {"step": 2}
        with pytest.raises(PapermillExecutionError, match="failing on purpose"):
            kernel.execute(src, tmp_path / "three.ipynb", {"step": 3})
        assert (tmp_path / "three.ipynb").is_file()
    finally:
        kernel.shutdown()


@pytest.mark.slow
def test_exported_mplbackend_does_not_remove_figures(tmp_path, monkeypatch):
    """matplotlib: MPLBACKEND overrides the backend; the warm kernel drops it so the inline
    backend (matplotlib-inline) still puts figures into the executed notebook."""
    monkeypatch.setenv("MPLBACKEND", "Agg")
    nb = new_notebook(cells=[
        new_code_cell("x = 1", metadata={"tags": ["parameters"]}),
        new_code_cell("import matplotlib.pyplot as plt\nplt.plot([0, 1])\nplt.show()"),
    ], metadata={"kernelspec": {"name": "audit-lib", "display_name": "x", "language": "python"}})
    src = tmp_path / "plot.ipynb"
    nbformat.write(nb, src)
    kernel = WarmKernel(cwd=tmp_path)
    try:
        done = kernel.execute(src, tmp_path / "out.ipynb", {"x": 2})
    finally:
        kernel.shutdown()
    assert any("image/png" in o.get("data", {}) for o in done.cells[-1].outputs)


@pytest.mark.slow
def test_warm_kernel_reset_keeps_modules_drops_names_figures_and_outputs(tmp_path):
    """IPython keeps cell results in ``Out`` and ``_``; matplotlib's pyplot keeps open figures
    (``plt.get_fignums``). After a workbook the warm kernel drops them and the workbook's
    names, and keeps imported modules (``sys.modules``)."""
    nb = new_notebook(cells=[
        new_code_cell("step = 0", metadata={"tags": ["parameters"]}),
        new_code_cell("import sys\nimport matplotlib.pyplot as plt\n"
                      "if step == 1:\n    import colorsys\n    fig = plt.figure()\n"
                      "    big = list(range(10))"),
        new_code_cell("big if step == 1 else None"),
        new_code_cell("if step == 2:\n"
                      "    assert 'big' not in globals() and 'fig' not in globals()\n"
                      "    assert plt.get_fignums() == []\n"
                      "    assert dict(Out) == {} and _ == ''\n"
                      "    assert 'colorsys' in sys.modules"),
    ], metadata={"kernelspec": {"name": "audit-lib", "display_name": "x", "language": "python"}})
    src = tmp_path / "probe.ipynb"
    nbformat.write(nb, src)
    kernel = WarmKernel(cwd=tmp_path)
    try:
        kernel.execute(src, tmp_path / "one.ipynb", {"step": 1})
        done = kernel.execute(src, tmp_path / "two.ipynb", {"step": 2})
    finally:
        kernel.shutdown()
    # a failing assertion in the probe would have raised PapermillExecutionError above
    assert done.cells[-1].metadata.papermill.status == "completed"
    assert not done.metadata.papermill.exception
