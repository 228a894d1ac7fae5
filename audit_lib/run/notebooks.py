"""Execute workbooks with papermill on a warm kernel and convert them to HTML reports.

A batch worker pays the heavy costs once: it imports papermill and nbconvert once, starts
one Jupyter kernel and keeps it between workbooks (clearing the user namespace after each
one, so imported modules stay loaded), and compiles the report template once in a cached
``HTMLExporter``. A cold ``papermill`` or ``jupyter nbconvert`` process costs seconds; the
warm path costs the workbook's own computation plus tens of milliseconds of conversion.

Sources: papermill's engine interface (``papermill.engines.NBClientEngine``) and nbclient's
``NotebookClient`` with a caller-owned kernel manager; nbconvert's template inheritance
(``extra_template_basedirs``, ``TagRemovePreprocessor``).
"""

from __future__ import annotations

import base64
import os
from pathlib import Path

from audit_lib.report.enclosure import REPORT_DATA_MIMETYPE
from audit_lib.site.files import read_logo

#: Cells with these tags never show in a report.
HIDDEN_TAGS = ("parameters", "injected-parameters", "report-data", "hide-in-report")
#: Name of the Jupyter kernel the workbooks ask for (``metadata.kernelspec.name``).
KERNEL_NAME = "audit-lib"
#: Folder holding the nbconvert templates (``templates/audit``) in the repository.
TEMPLATES_DIR = Path(__file__).resolve().parents[2] / "templates"
#: Folder holding the workbooks in the repository.
WORKBOOKS_DIR = Path(__file__).resolve().parents[2] / "workbooks"
_ENGINE_NAME = "audit-lib-warm"
# Clears what a workbook left in the kernel: its names, the output cache and its figures.
# Cheaper than ``%reset -f`` (which also collects garbage and resets the history: about
# 0.3 s per workbook); cycles are left to Python's own collector.
_RESET_CODE = """\
def _audit_clear():
    import matplotlib.pyplot as plt

    ip = get_ipython()
    hidden = ip.user_ns_hidden
    for name in [n for n in ip.user_ns if n not in hidden]:
        del ip.user_ns[name]
    ip.user_ns["Out"].clear()
    ip.user_ns.update({"_": "", "__": "", "___": ""})
    plt.close("all")


_audit_clear()  # it removes its own name too
"""


def make_exporter():
    """Return an ``HTMLExporter`` for the audit template (compile once, reuse).

    Code is hidden, prompts are hidden, cells tagged with one of :data:`HIDDEN_TAGS` are
    removed, and no script is loaded from the network.
    """
    from nbconvert import HTMLExporter
    from traitlets.config import Config

    config = Config()
    config.TagRemovePreprocessor.enabled = True
    config.TagRemovePreprocessor.remove_cell_tags = HIDDEN_TAGS
    config.CSSHTMLHeaderPreprocessor.enabled = False
    return HTMLExporter(
        config=config,
        template_name="audit",
        extra_template_basedirs=[str(TEMPLATES_DIR)],
        exclude_input=True,
        exclude_input_prompt=True,
        exclude_output_prompt=True,
    )


def read_report_data(nb) -> dict | None:
    """Return the report data a workbook published, or None if it published none.

    Parameters
    ----------
    nb : nbformat.NotebookNode
        An executed notebook; the data is the last output of MIME type
        :data:`REPORT_DATA_MIMETYPE`.
    """
    found = None
    for cell in nb.cells:
        for output in cell.get("outputs", []):
            data = output.get("data", {})
            if REPORT_DATA_MIMETYPE in data:
                found = data[REPORT_DATA_MIMETYPE]
    return None if found is None else dict(found)


def logo_data_uri(path: str | os.PathLike | None) -> str:
    """Return an image file as a ``data:`` URI for embedding ("" if no path given).

    Parameters
    ----------
    path : str or PathLike, optional
        PNG, JPEG, GIF or SVG file of at most 2 MB.
    """
    if not path:
        return ""
    mime, data = read_logo(path)  # the reader `light-audit check` uses
    return f"data:{mime};base64,{base64.b64encode(data).decode('ascii')}"


def convert_notebook(nb, exporter=None) -> str:
    """Convert an executed workbook to one self-contained HTML report.

    The header, cautions and provenance come from the data the workbook published
    (see :func:`read_report_data`), copied into ``nb.metadata.audit_report``.

    Parameters
    ----------
    nb : nbformat.NotebookNode
        Executed notebook (changed in place: its metadata gains ``audit_report``).
    exporter : nbconvert.HTMLExporter, optional
        A cached exporter from :func:`make_exporter`.
    """
    exporter = exporter or make_exporter()
    data = read_report_data(nb) or {}
    header = dict(data.get("report", {}))
    header["logo_data_uri"] = logo_data_uri(header.pop("logo_path", None))
    run = nb.metadata.get("papermill", {})
    if run:
        import json

        header["provenance"] = [
            *header.get("provenance", []),
            ("Run", f"{run.get('start_time', '')[:19]} to {run.get('end_time', '')[:19]} UTC"),
            ("Workbook", Path(run.get("input_path") or "").name),
            ("Parameters", json.dumps(run.get("parameters", {}), sort_keys=True))]
    header.setdefault("title", nb.metadata.get("title", "Lighting audit"))
    nb.metadata["audit_report"] = header
    nb.metadata["title"] = header["title"]
    body, _ = exporter.from_notebook_node(nb)
    return body


def write_atomic(path: str | os.PathLike, data: str | bytes) -> Path:
    """Write a file under a temporary name, then rename it into place.

    An interrupted write leaves the old file (or none), never a truncated one.

    Parameters
    ----------
    path : str or PathLike
        Final file name.
    data : str or bytes
        Content; text is written as UTF-8.
    """
    path = Path(path)
    tmp = path.with_name(f".{path.name}.part-{os.getpid()}")
    raw = data.encode("utf-8") if isinstance(data, str) else data
    with open(tmp, "wb") as fh:
        fh.write(raw)
        fh.flush()
        os.fsync(fh.fileno())
    os.replace(tmp, path)
    return path


def available_kernel_name() -> str:
    """Return :data:`KERNEL_NAME` if registered, else the current interpreter's ``python3``."""
    from jupyter_client.kernelspec import KernelSpecManager

    names = KernelSpecManager().find_kernel_specs()
    return KERNEL_NAME if KERNEL_NAME in names else "python3"


def _register_engine() -> None:
    from papermill.clientwrap import PapermillNotebookClient
    from papermill.engines import NBClientEngine, papermill_engines

    class WarmKernelEngine(NBClientEngine):
        """Papermill engine that runs on a caller-owned, already started kernel."""

        @classmethod
        def execute_managed_notebook(
            cls, nb_man, kernel_name, km=None, kc=None, log_output=False, start_timeout=60,
            execution_timeout=None, **kwargs,
        ):
            from nbclient.util import run_sync

            client = PapermillNotebookClient(
                nb_man, km=km, kernel_name=kernel_name, timeout=execution_timeout,
                startup_timeout=start_timeout, log_output=log_output,
            )
            # a connected client is reused: a new one waits 0.2 s for the kernel's output
            # channel to fall quiet (jupyter_client's wait_for_ready) on every workbook
            client.kc = kc
            # papermill saves the whole notebook before and after every cell (about 70
            # validated writes of a growing notebook); save once, when it completes
            output_path, nb_man.output_path = nb_man.output_path, None
            try:
                return client.execute()
            finally:
                nb_man.output_path = output_path
                if client.kc is not None:
                    try:
                        if km is None or run_sync(km.is_alive)():
                            run_sync(client.kc.execute_interactive)(_RESET_CODE, timeout=30)
                    finally:
                        if client.kc is not kc:  # a client made for this workbook only
                            client.kc.stop_channels()
                        client.kc = None

    papermill_engines.register(_ENGINE_NAME, WarmKernelEngine)


class WarmKernel:
    """One Jupyter kernel kept running to execute workbook after workbook.

    Parameters
    ----------
    kernel_name : str, optional
        Kernel spec name; default :func:`available_kernel_name`.
    cwd : str or PathLike, optional
        Working directory of the kernel; default the workbooks folder, so the workbooks'
        relative default paths work.
    warm_up : str, optional
        Code run once at start (typically the heavy imports).
    """

    def __init__(self, kernel_name: str | None = None, cwd=None, warm_up: str = "") -> None:
        _register_engine()
        self.kernel_name = kernel_name or available_kernel_name()
        self.cwd = str(cwd or WORKBOOKS_DIR)
        self.warm_up = warm_up
        self.km = None
        self.kc = None

    def launch(self) -> None:
        """Start the kernel process without waiting for it (see :meth:`ensure_started`).

        The caller can do other work (imports, template compilation) while the kernel
        boots; :meth:`ensure_started` then waits for it and runs the warm-up code.
        """
        from jupyter_client.manager import AsyncKernelManager
        from nbclient.util import run_sync

        if self.km is not None and run_sync(self.km.is_alive)():
            return
        self.shutdown()
        self.km = AsyncKernelManager(kernel_name=self.kernel_name)
        # an exported MPLBACKEND (e.g. Agg) would stop the inline backend: figures vanish
        env = {k: v for k, v in os.environ.items() if k != "MPLBACKEND"}
        run_sync(self.km.start_kernel)(cwd=self.cwd, env=env)

    def ensure_started(self) -> None:
        """Start the kernel if it is not running (first use, or after it died), and warm it.

        One connected client is kept for the kernel's life and used by every workbook.
        """
        from nbclient.util import run_sync

        if self.km is None or not run_sync(self.km.is_alive)():
            self.launch()
        if self.kc is None:
            client = self.km.client()
            client.start_channels()
            try:
                run_sync(client.wait_for_ready)(timeout=120)
                client.allow_stdin = False
                if self.warm_up:
                    run_sync(client.execute_interactive)(self.warm_up, timeout=300)
            except BaseException:
                client.stop_channels()
                raise
            self.kc = client

    def execute(self, input_path, output_path, parameters: dict, timeout: float = 900):
        """Execute one workbook with papermill; return the executed notebook.

        Parameters
        ----------
        input_path, output_path : str or PathLike
            Workbook to run, and where papermill saves the executed copy as it goes.
        parameters : dict
            Values injected after the ``parameters`` cell (JSON-able).
        timeout : float
            Limit for one cell [s].

        Raises
        ------
        papermill.PapermillExecutionError
            A cell raised; the executed notebook with the error is still saved.
        """
        import papermill

        self.ensure_started()
        return papermill.execute_notebook(
            str(input_path), str(output_path), parameters=parameters,
            engine_name=_ENGINE_NAME, kernel_name=self.kernel_name, km=self.km, kc=self.kc,
            progress_bar=False, execution_timeout=timeout,
            request_save_on_cell_execute=False,
        )

    def shutdown(self) -> None:
        """Stop the kernel (safe to call twice)."""
        from nbclient.util import run_sync

        if self.kc is not None:
            self.kc.stop_channels()
            self.kc = None
        if self.km is None:
            return
        try:
            if run_sync(self.km.is_alive)():
                run_sync(self.km.shutdown_kernel)(now=True)
        finally:
            self.km = None
