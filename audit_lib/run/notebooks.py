"""Execute workbooks with papermill on a warm kernel and convert them to HTML reports.

A batch worker pays the heavy costs once: it imports papermill and nbconvert once, starts
one Jupyter kernel and keeps it between workbooks (clearing the user namespace after each
one, so imported modules stay loaded), and compiles the report template once in a cached
``HTMLExporter``. A cold ``papermill`` or ``jupyter nbconvert`` process costs seconds; the
warm path costs the workbook's own computation plus tens of milliseconds of conversion.

The workbooks and the report template are package data (``audit_lib.workbooks``,
``audit_lib.templates``), found with :mod:`importlib.resources`, so an installed wheel runs
from any folder. The kernel is the interpreter this code runs in, started from
``sys.executable`` with no registered kernel spec needed, and talks over IPC sockets in a
private folder where the platform has them (POSIX), so nothing travels over TCP.

Sources: papermill's engine interface (``papermill.engines.NBClientEngine``) and nbclient's
``NotebookClient`` with a caller-owned kernel manager; jupyter_client's ``KernelSpec``,
``KernelSpecManager`` and ``transport="ipc"``; ipykernel's ``kernelspec.install``;
nbconvert's template inheritance (``extra_template_basedirs``, ``TagRemovePreprocessor``).
"""

from __future__ import annotations

import base64
import json
import os
import re
import shutil
import sys
import tempfile
from importlib.resources import files
from pathlib import Path

from audit_lib.errors import AuditError
from audit_lib.report.enclosure import REPORT_DATA_MIMETYPE
from audit_lib.site.files import read_logo

#: Cells with these tags never show in a report.
HIDDEN_TAGS = ("parameters", "injected-parameters", "report-data", "hide-in-report")
#: Name of the Jupyter kernel the workbooks ask for (``metadata.kernelspec.name``).
KERNEL_NAME = "audit-lib"
#: How JupyterLab lists that kernel.
KERNEL_DISPLAY_NAME = "Python (audit-lib)"


def _package_folder(package: str) -> Path:
    folder = files(package)
    if not isinstance(folder, Path):  # e.g. a package imported from a zip file
        raise AuditError(f"{package} is not a folder on disk; install audit_lib from its "
                         "wheel with pip (not zipped) to run workbooks")
    return folder


#: Folder holding the nbconvert templates (``audit/``): package data ``audit_lib.templates``
#: (``templates/`` at the top of the repository).
TEMPLATES_DIR = _package_folder("audit_lib.templates")
#: Folder holding the workbooks: package data ``audit_lib.workbooks`` (``workbooks/``).
WORKBOOKS_DIR = _package_folder("audit_lib.workbooks")
#: The what-if workbook that ``light-audit what-if`` copies for the user.
WHAT_IF_WORKBOOK = WORKBOOKS_DIR / "what_if.ipynb"
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


def _report_exporter_class():
    """The report exporter: nbconvert's ``HTMLExporter`` without work a report does not need.

    Per report it skips: the BeautifulSoup pass over the whole page (it gives images an
    alternative text, which the template now writes, and makes input cells focusable, which
    the report has none of), a full notebook validation after each of its twelve
    preprocessors, a second deep copy of the notebook, and disabled preprocessors; and it
    renders each Markdown text once per exporter (the workbook's headings and explanations
    are the same in every enclosure's report). Together about four fifths of a conversion.
    """
    from jinja2 import pass_context
    from nbconvert import HTMLExporter
    from nbconvert.exporters.templateexporter import TemplateExporter
    from nbconvert.filters.highlight import Highlight2HTML
    from nbconvert.filters.widgetsdatatypefilter import WidgetsDataTypeFilter

    class ReportExporter(HTMLExporter):
        _markdown_cache: dict

        def from_notebook_node(self, nb, resources=None, **kw):
            if not hasattr(self, "_markdown_cache"):
                self._markdown_cache = {}
                self.register_filter("highlight_code", Highlight2HTML(parent=self))
                self.register_filter("filter_data_type", WidgetsDataTypeFilter(
                    notebook_metadata=self._nb_metadata, parent=self))
            return TemplateExporter.from_notebook_node(self, nb, resources, **kw)

        def _preprocess(self, nb, resources):
            # the caller's notebook is copied once (Exporter.from_notebook_node); the
            # notebook came from nbclient, which validated every output it built
            for preprocessor in self._preprocessors:
                if preprocessor.enabled:
                    nb, resources = preprocessor(nb, resources)
            return nb, resources

        @pass_context
        def markdown2html(self, context, source):
            if context.get("cell", {}).get("attachments"):
                return super().markdown2html(context, source)
            cache = self._markdown_cache
            if source not in cache:
                if len(cache) > 1000:
                    cache.clear()
                cache[source] = super().markdown2html(context, source)
            return cache[source]

    return ReportExporter


def make_exporter():
    """Return an exporter for the audit template (compile once, reuse).

    Code is hidden, prompts are hidden, cells tagged with one of :data:`HIDDEN_TAGS` are
    removed, and no script is loaded from the network. A subclass of nbconvert's
    ``HTMLExporter`` (:func:`_report_exporter_class`).
    """
    from traitlets.config import Config

    config = Config()
    config.TagRemovePreprocessor.enabled = True
    config.TagRemovePreprocessor.remove_cell_tags = HIDDEN_TAGS
    config.CSSHTMLHeaderPreprocessor.enabled = False
    config.HighlightMagicsPreprocessor.enabled = False  # code is hidden
    return _report_exporter_class()(
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


def this_interpreter_kernel_spec():
    """Return the spec of an IPython kernel run by this very interpreter (``sys.executable``).

    The batch starts its kernels from it, so it needs no registered kernel spec and never
    picks up a kernel of another Python installation.
    """
    from jupyter_client.kernelspec import KernelSpec

    return KernelSpec(argv=[sys.executable, "-m", "ipykernel_launcher", "-f",
                            "{connection_file}"],
                      display_name=KERNEL_DISPLAY_NAME, language="python")


def _spec_manager():
    """A kernel spec manager that answers :data:`KERNEL_NAME` with this interpreter."""
    from jupyter_client.kernelspec import KernelSpecManager

    class ThisInterpreterSpecs(KernelSpecManager):
        def get_kernel_spec(self, kernel_name):
            if kernel_name == KERNEL_NAME:
                return this_interpreter_kernel_spec()
            return super().get_kernel_spec(kernel_name)

    return ThisInterpreterSpecs()


def register_kernel() -> Path | None:
    """Register the :data:`KERNEL_NAME` kernel for JupyterLab if Jupyter does not know it.

    It is written beside this interpreter (``sys.prefix``, as ``ipykernel install
    --sys-prefix`` does), or in the user's Jupyter folder if that is read-only.

    Returns
    -------
    Path or None
        Folder of the kernel spec written; None if the kernel was known already.
    """
    from ipykernel.kernelspec import install
    from jupyter_client.kernelspec import KernelSpecManager

    if KERNEL_NAME in KernelSpecManager().find_kernel_specs():
        return None
    try:
        where = install(kernel_name=KERNEL_NAME, display_name=KERNEL_DISPLAY_NAME,
                        prefix=sys.prefix)
    except PermissionError:
        where = install(kernel_name=KERNEL_NAME, display_name=KERNEL_DISPLAY_NAME, user=True)
    return Path(where)


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
            try:  # no output path here: WarmKernel.execute saves once, when it completes
                return client.execute()
            finally:
                if client.kc is not None:
                    try:
                        if km is None or run_sync(km.is_alive)():
                            run_sync(client.kc.execute_interactive)(
                                _RESET_CODE, silent=True, store_history=False, timeout=30)
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
        Kernel spec name; default :data:`KERNEL_NAME`, which is this interpreter
        (:func:`this_interpreter_kernel_spec`) whether or not a spec is registered.
    cwd : str or PathLike, optional
        Working directory of the kernel; default the workbooks folder, so the workbooks'
        relative default paths work.
    warm_up : str, optional
        Code run once at start (typically the heavy imports).
    """

    def __init__(self, kernel_name: str | None = None, cwd=None, warm_up: str = "") -> None:
        _register_engine()
        self.kernel_name = kernel_name or KERNEL_NAME
        self.cwd = str(cwd or WORKBOOKS_DIR)
        self.warm_up = warm_up
        self.km = None
        self.kc = None
        self._socket_dir = None
        self._workbooks: dict = {}

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
        connection = {}
        if os.name == "posix":  # IPC sockets in a private folder (mode 0700), not TCP ports
            self._socket_dir = tempfile.mkdtemp(prefix="audit-kernel-")
            connection = {"transport": "ipc", "ip": os.path.join(self._socket_dir, "kernel")}
        self.km = AsyncKernelManager(kernel_name=self.kernel_name,
                                     kernel_spec_manager=_spec_manager(), **connection)
        # an exported MPLBACKEND (e.g. Agg) would stop the inline backend: figures vanish
        env = {k: v for k, v in os.environ.items() if k != "MPLBACKEND"}
        # no input history: the kernel would write every cell to an SQLite file (a thread
        # and a database for code nobody recalls)
        run_sync(self.km.start_kernel)(cwd=self.cwd, env=env,
                                       extra_arguments=["--HistoryManager.enabled=False"])

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

        The steps of ``papermill.execute_notebook`` (parameters cell injected after the
        ``parameters`` cell, papermill metadata, error markers, :class:`PapermillExecutionError`)
        without its unconditional serialisation of the executed notebook, which costs about
        as much as converting it to HTML when nobody keeps the file. The workbook file is
        parsed once per kernel while it is unchanged.

        Parameters
        ----------
        input_path : str or PathLike
            Workbook to run.
        output_path : str or PathLike or None
            Where the executed copy is saved when it completes or fails; None saves nothing.
        parameters : dict
            Values injected after the ``parameters`` cell (JSON-able).
        timeout : float
            Limit for one cell [s].

        Raises
        ------
        papermill.PapermillExecutionError
            A cell raised; the executed notebook with the error is still saved.
        """
        from papermill.engines import papermill_engines
        from papermill.execute import (
            prepare_notebook_metadata,
            raise_for_execution_errors,
            remove_error_markers,
        )
        from papermill.iorw import write_ipynb
        from papermill.parameterize import parameterize_notebook

        self.ensure_started()
        input_path = str(input_path)
        output_path = None if output_path is None else str(output_path)
        nb = self._workbook(input_path)
        if parameters:
            nb = parameterize_notebook(nb, parameters, kernel_name=self.kernel_name,
                                       engine_name=_ENGINE_NAME)
        nb = remove_error_markers(prepare_notebook_metadata(nb, input_path, output_path))
        nb = papermill_engines.execute_notebook_with_engine(
            _ENGINE_NAME, nb, input_path=input_path, output_path=None,
            kernel_name=self.kernel_name, progress_bar=False, log_output=False,
            km=self.km, kc=self.kc, execution_timeout=timeout)
        raise_for_execution_errors(nb, output_path)  # saves the failed notebook, then raises
        if output_path is not None:
            write_ipynb(nb, output_path)
        return nb

    def _workbook(self, path: str):
        """A fresh copy of the workbook as papermill loads it (parsed once while unchanged)."""
        import copy

        from papermill.iorw import load_notebook_node

        stat = os.stat(path)
        key = (path, stat.st_mtime_ns, stat.st_size)
        if self._workbooks.get(path, (None,))[0] != key:
            self._workbooks[path] = (key, load_notebook_node(path))
        return copy.deepcopy(self._workbooks[path][1])

    def shutdown(self) -> None:
        """Stop the kernel (safe to call twice)."""
        from nbclient.util import run_sync

        if self.kc is not None:
            self.kc.stop_channels()
            self.kc = None
        try:
            if self.km is not None and run_sync(self.km.is_alive)():
                run_sync(self.km.shutdown_kernel)(now=True)
        finally:
            self.km = None
            if self._socket_dir is not None:
                shutil.rmtree(self._socket_dir, ignore_errors=True)
                self._socket_dir = None


def _set_parameters(source: str, values: dict) -> str:
    """Return a parameters cell with each ``name = value`` line given a new value.

    The line's type annotation and comment are kept; a name the cell lacks is appended.
    """
    lines = source.splitlines()
    for name, value in values.items():
        pattern = re.compile(rf"^{re.escape(name)}(\s*:[^=]*)?=[^#]*(#.*)?$")
        for i, line in enumerate(lines):
            match = pattern.match(line)
            if match:
                comment = f"  {match.group(2)}" if match.group(2) else ""
                lines[i] = f"{name}{(match.group(1) or '').rstrip()} = {value!r}{comment}"
                break
        else:
            lines.append(f"{name} = {value!r}")
    return "\n".join(lines)


def write_what_if_workbook(site_dir, enclosure_id: str, out_dir) -> tuple[Path, bool]:
    """Copy the what-if workbook into a folder with the site and enclosure filled in.

    The copy's parameters cell holds the site folder's absolute path and the enclosure id,
    so it runs from any folder. An earlier copy of the same name is kept as it is (it may
    hold the user's changes).

    Parameters
    ----------
    site_dir : str or PathLike
        The site folder.
    enclosure_id : str
        Enclosure to plan; empty for a blank enclosure.
    out_dir : str or PathLike
        Folder for the copy (created if needed).

    Returns
    -------
    (Path, bool)
        The workbook's path, and whether it was written now (False: an earlier copy).
    """
    out_dir = Path(out_dir)
    path = out_dir / (f"what-if-{enclosure_id}.ipynb" if enclosure_id else "what-if.ipynb")
    if path.exists():
        return path, False
    nb = json.loads(WHAT_IF_WORKBOOK.read_text(encoding="utf-8"))
    cells = [c for c in nb["cells"] if "parameters" in c.get("metadata", {}).get("tags", [])]
    if not cells:
        raise AuditError(f"{WHAT_IF_WORKBOOK}: no cell tagged 'parameters'")
    source = "".join(cells[0]["source"])
    cells[0]["source"] = _set_parameters(source, {
        "site_dir": str(Path(site_dir).resolve()), "enclosure_id": enclosure_id})
    out_dir.mkdir(parents=True, exist_ok=True)
    write_atomic(path, json.dumps(nb, indent=1, ensure_ascii=False) + "\n")
    return path, True


def jupyterlab_command(workbook) -> list[str]:
    """Return the command that opens a workbook in JupyterLab, served from its folder.

    JupyterLab runs from this interpreter (``python -m jupyterlab``), so it finds the
    ``audit_lib`` installed here; its kernels talk over IPC where the platform has it.
    """
    workbook = Path(workbook).resolve()
    ipc = ["--KernelManager.transport=ipc"] if os.name == "posix" else []
    return [sys.executable, "-m", "jupyterlab", f"--ServerApp.root_dir={workbook.parent}",
            *ipc, str(workbook)]
