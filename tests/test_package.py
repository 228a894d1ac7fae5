"""The installable package: what the wheel holds, what it declares, and that it audits from
any folder with nothing but the wheel installed.

External references: the Python Packaging User Guide and setuptools' documentation on
package data (``package-dir``, ``package-data``; data read with :mod:`importlib.resources`);
PEP 427 (the wheel is a zip archive of the installed files) and PEP 508 (dependency
specifiers); jupyter_client's documentation on kernel specs and the ``ipc`` transport;
ipykernel's start-up warning "Kernel is running over TCP without encryption".
"""

from __future__ import annotations

import ast
import fnmatch
import json
import os
import re
import shutil
import subprocess
import sys
import sysconfig
import venv
import zipfile
from importlib.metadata import packages_distributions, version
from importlib.resources import files
from pathlib import Path

import pytest

import audit_lib
from audit_lib.run import cli
from audit_lib.run.notebooks import (
    KERNEL_NAME,
    WHAT_IF_WORKBOOK,
    WarmKernel,
    this_interpreter_kernel_spec,
    write_what_if_workbook,
)

try:
    import tomllib
except ModuleNotFoundError:  # Python 3.10
    import tomli as tomllib

ROOT = Path(__file__).resolve().parents[1]
PYPROJECT = tomllib.loads((ROOT / "pyproject.toml").read_text(encoding="utf-8"))
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
#: Folders of the repository mapped into the package by the build.
MAPPED = {"audit_lib.workbooks": "workbooks", "audit_lib.templates": "templates"}


def _folder_of(package: str) -> Path:
    """The repository folder a package is built from (``package-dir`` mapping or its name)."""
    for name, folder in PYPROJECT["tool"]["setuptools"].get("package-dir", {}).items():
        if package == name or package.startswith(name + "."):
            return ROOT / folder / Path(*package.split(".")[name.count(".") + 1:])
    return ROOT / Path(*package.split("."))


def _source_folders():
    for top in ["audit_lib", *MAPPED.values()]:
        for folder in [ROOT / top, *sorted((ROOT / top).rglob("*"))]:
            if folder.is_dir() and folder.name not in ("__pycache__", ".ipynb_checkpoints"):
                yield folder


def test_every_folder_of_the_package_is_listed_for_the_build():
    """setuptools builds only the packages listed in ``[tool.setuptools] packages`` and
    copies data only from them: every folder of audit_lib (and of the mapped workbooks and
    templates folders) is listed, so none is silently left out of the wheel."""
    listed = PYPROJECT["tool"]["setuptools"]["packages"]
    assert PYPROJECT["tool"]["setuptools"]["package-dir"] == MAPPED
    folders = {_folder_of(p).resolve() for p in listed}
    missing = [str(f.relative_to(ROOT)) for f in _source_folders() if f.resolve() not in folders]
    assert not missing, f"add these folders to [tool.setuptools] packages: {missing}"


def test_every_data_file_is_matched_by_package_data():
    """Each workbook, template file and data table matches a ``package-data`` pattern of its
    package (setuptools copies only those into the wheel)."""
    patterns = PYPROJECT["tool"]["setuptools"]["package-data"]
    unmatched = []
    for package in PYPROJECT["tool"]["setuptools"]["packages"]:
        folder = _folder_of(package)
        for path in folder.iterdir():
            if path.is_file() and path.suffix not in (".py", ".pyc"):
                if not any(fnmatch.fnmatch(path.name, p) for p in patterns.get(package, [])):
                    unmatched.append(str(path.relative_to(ROOT)))
    assert not unmatched, f"no package-data pattern matches {unmatched}"


def test_workbooks_and_template_are_read_as_package_data():
    """importlib.resources finds the workbooks, the template and its style sheet through
    the package, as an installed wheel and the editable install both provide them."""
    workbooks = files("audit_lib.workbooks")
    for name in ("enclosure_report.ipynb", "site_overview.ipynb", "spectrum_report.ipynb",
                 "what_if.ipynb"):
        assert (workbooks / name).is_file()
    template = files("audit_lib.templates") / "audit"
    assert (template / "conf.json").is_file() and (template / "static" / "report.css").is_file()
    assert WHAT_IF_WORKBOOK == workbooks / "what_if.ipynb"


def _imported_modules() -> set[str]:
    sources = [p.read_text(encoding="utf-8") for p in (ROOT / "audit_lib").rglob("*.py")]
    for path in (ROOT / "workbooks").glob("*.ipynb"):
        for cell in json.loads(path.read_text(encoding="utf-8"))["cells"]:
            if cell["cell_type"] == "code":
                lines = "".join(cell["source"]).splitlines()
                sources.append("\n".join(ln for ln in lines
                                         if not ln.lstrip().startswith(("%", "!"))))
    found = set()
    for source in sources:
        for node in ast.walk(ast.parse(source)):
            if isinstance(node, ast.Import):
                found |= {a.name.split(".")[0] for a in node.names}
            elif isinstance(node, ast.ImportFrom) and node.level == 0 and node.module:
                found.add(node.module.split(".")[0])
    return found - set(sys.stdlib_module_names) - {"audit_lib"}


def _normalise(name: str) -> str:
    return re.sub(r"[-_.]+", "-", name).lower()  # PEP 503 name normalisation


def test_every_imported_library_is_a_declared_dependency():
    """A library the package or its workbooks import directly is declared in
    ``[project] dependencies`` (PEP 508 names), not just pulled in by another one."""
    declared = {_normalise(re.split(r"[ ;<>=!~\[]", d, maxsplit=1)[0])
                for d in PYPROJECT["project"]["dependencies"]}
    distributions = packages_distributions()
    undeclared = []
    for module in sorted(_imported_modules()):
        names = {_normalise(d) for d in distributions.get(module, [module])}
        if not names & declared:
            undeclared.append(f"{module} ({', '.join(sorted(names))})")
    assert not undeclared, f"imported but not declared: {undeclared}"


def test_version_has_one_source(capsys):
    """``light-audit --version`` prints the installed distribution's version, which the
    build reads from ``audit_lib.__version__`` (``dynamic = ["version"]``)."""
    assert PYPROJECT["project"]["dynamic"] == ["version"]
    assert cli.main(["--version"]) == 0
    assert capsys.readouterr().out.strip() == f"light-audit {audit_lib.__version__}"
    assert version("audit_lib") == audit_lib.__version__


def test_what_if_copy_has_the_site_and_enclosure_filled_in(tmp_path):
    """The copy's parameters cell names the site by its absolute path (so it runs from any
    folder) and the enclosure; its annotations and comments stay; an earlier copy (maybe
    edited) is never overwritten."""
    import nbformat

    path, written = write_what_if_workbook(DEMO, "rh-02", tmp_path / "plans")
    assert written and path == tmp_path / "plans" / "what-if-rh-02.ipynb"
    nb = nbformat.read(path, as_version=4)
    nbformat.validate(nb)
    params = next(c for c in nb.cells if "parameters" in c.metadata.get("tags", []))
    namespace: dict = {}
    exec(params.source, namespace)  # noqa: S102 - our own workbook's parameters cell
    assert namespace["site_dir"] == str(DEMO) and namespace["enclosure_id"] == "rh-02"
    assert "site_dir: str = " in params.source and "# enclosure to plan" in params.source
    assert nb.metadata.kernelspec.name == KERNEL_NAME

    path.write_text("the user's own changes", encoding="utf-8")
    again, written = write_what_if_workbook(DEMO, "rh-02", tmp_path / "plans")
    assert again == path and not written
    assert path.read_text(encoding="utf-8") == "the user's own changes"


def test_what_if_no_launch_prints_the_jupyterlab_command(tmp_path, monkeypatch, capsys):
    """``what-if --no-launch`` writes the copy and prints one shell command that starts
    JupyterLab from this interpreter on it, with kernels over IPC (POSIX)."""
    monkeypatch.setattr(cli, "register_kernel", lambda: None)
    status = cli.main(["what-if", str(DEMO), "--enclosure", "rh-01", "--out",
                       str(tmp_path), "--no-launch"])
    out = capsys.readouterr().out.splitlines()
    assert status == 0
    assert out[0] == f"wrote {tmp_path / 'what-if-rh-01.ipynb'}"
    command = out[-1]
    assert command.startswith(f"{sys.executable} -m jupyterlab --ServerApp.root_dir=")
    assert command.endswith(str(tmp_path / "what-if-rh-01.ipynb"))
    if os.name == "posix":
        assert "--KernelManager.transport=ipc" in command


def test_what_if_checks_the_enclosure_before_writing(tmp_path, monkeypatch, capsys):
    """An unknown enclosure id is bad input (exit status 2, the known ids as a hint) and
    nothing is written."""
    monkeypatch.setattr(cli, "register_kernel", lambda: None)
    status = cli.main(["what-if", str(DEMO), "--enclosure", "rh-99", "--out",
                       str(tmp_path / "plans"), "--no-launch"])
    assert status == 2
    assert re.search(r"no enclosure with id 'rh-99'.*known: rh-01", capsys.readouterr().err)
    assert not (tmp_path / "plans").exists()


def test_batch_kernel_is_this_interpreter_over_ipc(tmp_path, capfd):
    """The batch's kernel runs ``sys.executable`` whatever kernel specs are registered,
    and on POSIX talks over IPC sockets: ipykernel prints no TCP warning."""
    from nbclient.util import run_sync

    assert this_interpreter_kernel_spec().argv[0] == sys.executable
    kernel = WarmKernel(cwd=tmp_path)
    try:
        kernel.ensure_started()
        assert kernel.km.kernel_spec.argv[0] == sys.executable
        if os.name == "posix":
            assert kernel.km.transport == "ipc"
        run_sync(kernel.kc.execute_interactive)("1 + 1", timeout=60)
    finally:
        kernel.shutdown()
    assert "TCP" not in capfd.readouterr().err


def _copy_sources(dest: Path) -> Path:
    """What the build reads, copied away from the checkout (no stale ``build/`` folder)."""
    ignore = shutil.ignore_patterns("__pycache__", ".ipynb_checkpoints", "*.egg-info")
    dest.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(ROOT / name, dest / name)
    for name in ("audit_lib", *MAPPED.values()):
        shutil.copytree(ROOT / name, dest / name, ignore=ignore)
    return dest


@pytest.mark.slow
def test_wheel_audits_the_demo_site_from_any_folder(tmp_path):
    """Build the wheel, install it into a fresh virtual environment and, from a folder
    outside the checkout, run --version, new-site + check, the batch on a copy of the demo
    site (one report per enclosure, exit 0, no traceback, no TCP warning) and what-if --help.

    The fresh environment borrows this environment's third-party libraries through a
    ``.pth`` file and their Jupyter data through ``JUPYTER_PATH`` (installing them again
    would take minutes); the wheel itself is installed with ``--no-deps``, and
    test_every_imported_library_is_a_declared_dependency checks the declared dependencies.
    """
    dist = tmp_path / "dist"
    subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "--quiet", "-w",
                    str(dist), str(_copy_sources(tmp_path / "src"))],
                   check=True, capture_output=True, timeout=900)
    (wheel,) = dist.glob("audit_lib-*.whl")
    names = set(zipfile.ZipFile(wheel).namelist())
    for name in ("workbooks/what_if.ipynb", "workbooks/enclosure_report.ipynb",
                 "workbooks/site_overview.ipynb", "templates/audit/conf.json",
                 "templates/audit/index.html.j2", "templates/audit/static/report.css",
                 "data/ferguson_zones.csv"):
        assert f"audit_lib/{name}" in names

    env_dir = tmp_path / "venv"
    venv.EnvBuilder(with_pip=True).create(env_dir)
    bin_dir = env_dir / ("Scripts" if os.name == "nt" else "bin")
    python = bin_dir / "python"
    target = subprocess.run([python, "-c", "import sysconfig; print(sysconfig.get_paths()"
                             "['purelib'])"], check=True, capture_output=True, text=True)
    borrowed = dict.fromkeys(sysconfig.get_paths()[k] for k in ("purelib", "platlib"))
    Path(target.stdout.strip(), "borrowed_libraries.pth").write_text("\n".join(borrowed))
    subprocess.run([python, "-m", "pip", "install", "--no-deps", "--quiet", str(wheel)],
                   check=True, capture_output=True, timeout=600)

    work = tmp_path / "elsewhere"
    work.mkdir()
    env = {k: v for k, v in os.environ.items() if k not in ("PYTHONPATH", "VIRTUAL_ENV")}
    # the borrowed libraries' Jupyter data (nbconvert's base templates) is not in the venv
    env["JUPYTER_PATH"] = str(Path(sys.prefix, "share", "jupyter"))

    def light_audit(*args):
        return subprocess.run([bin_dir / "light-audit", *args], cwd=work, env=env,
                              capture_output=True, text=True, timeout=1200)

    where = subprocess.run([python, "-c", "import audit_lib; print(audit_lib.__file__)"],
                           cwd=work, env=env, check=True, capture_output=True, text=True)
    assert Path(where.stdout.strip()).is_relative_to(env_dir)

    assert light_audit("--version").stdout.strip() == f"light-audit {audit_lib.__version__}"
    assert light_audit("new-site", "my-site").returncode == 0
    checked = light_audit("check", "my-site")
    assert checked.returncode == 0, checked.stderr

    shutil.copytree(DEMO, work / "demo-site")
    run = light_audit("run", "demo-site", "--out", "demo-out", "--jobs", "2", "--quiet")
    assert run.returncode == 0, run.stderr
    assert "Traceback" not in run.stderr and "TCP" not in run.stderr, run.stderr
    results = json.loads((work / "demo-out" / "results.json").read_text(encoding="utf-8"))
    site_file = tomllib.loads((DEMO / "site.toml").read_text(encoding="utf-8"))
    assert [e["id"] for e in results["enclosures"]] == [e["id"] for e in site_file["enclosures"]]
    for enclosure in results["enclosures"]:
        assert enclosure["verdict"] and not enclosure["error"]
        assert (work / "demo-out" / enclosure["report"]).is_file()
    assert run.stdout.strip() == str(work / "demo-out" / "index.html")

    helped = light_audit("what-if", "--help")
    assert helped.returncode == 0 and "--no-launch" in helped.stdout
