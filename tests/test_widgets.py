"""Tests of the what-if panel (audit_lib.run.widgets) and its workbook, headless.

External references: ipywidgets' documented trait notification (setting ``value`` calls the
observers registered with ``observe(names="value")``); the PNG signature (ISO/IEC 15948,
first eight bytes ``89 50 4E 47 0D 0A 1A 0A``); nbval (executes a notebook as tests; with
``--nbval-lax`` only runs it); the inverse-square law for the height change (Lambert 1760).
The panel only binds controls to the planner, whose numbers are checked in test_planner.py.
"""

from __future__ import annotations

import shutil
import subprocess
import sys
from pathlib import Path

import numpy as np
import pytest

from audit_lib.run.widgets import WhatIfPanel, WhatIfPlanner, open_panel

ROOT = Path(__file__).resolve().parents[1]
DEMO = ROOT / "sample_sites" / "kestrel-moor-wildlife-park"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


@pytest.fixture()
def panel(tmp_path):
    root = tmp_path / "site"
    shutil.copytree(DEMO, root)
    return open_panel(root, "rh-01", shape=(18, 36))


def test_panel_builds_with_plain_english_controls(panel):
    """The panel shows PNG figures (ISO/IEC 15948 signature), the verdict table and the
    recommendation; every control has a label of our own words."""
    assert bytes(panel.map_image.value).startswith(PNG_SIGNATURE)
    assert bytes(panel.daily_image.value).startswith(PNG_SIGNATURE)
    assert "<table" in panel.verdict.value and "basking UV Index maximum" in panel.verdict.value
    assert panel.recommendation.value
    labels = [c.description for c in panel.controls.values()]
    assert "Height above floor (m)" in labels and "Emitters out" in labels
    assert all(label and not label.islower() for label in labels)


def test_height_control_drives_the_planner(panel):
    """Setting the height slider (ipywidgets trait notification) updates the plan and the
    figures: lowering an LED bar from 0.88 m to 0.68 m above the floor raises the basking
    maximum (inverse-square law, Lambert 1760), and the planner's numbers are those shown."""
    before = panel.planner.result
    old_png = bytes(panel.map_image.value)
    panel.controls["z_m"].value = 0.68
    after = panel.planner.result
    assert panel.planner.config.z_m == pytest.approx(0.68)
    assert after.basking_max_uvi > before.basking_max_uvi
    assert bytes(panel.map_image.value) != old_png
    assert f"{after.basking_max_uvi:.2f}" in panel.summary.value
    assert "Updated in" in panel.status.value
    expected = WhatIfPlanner(panel.planner.site, "rh-01", shape=(18, 36)).update(z_m=0.68)
    np.testing.assert_array_equal(after.maps["floor"].values["uvi"],
                                  expected.maps["floor"].values["uvi"])


def test_failed_emitters_and_lamp_change_refresh_the_controls(panel):
    """Choosing emitters out reaches the plan; a tube lamp has no emitters, so the LED
    controls are disabled and the emitter list is emptied (ipywidgets observers)."""
    panel.controls["failed_emitters"].value = (1, 3)
    assert panel.planner.config.failed_emitters == (1, 3)
    panel.controls["lamp_model"].value = "t5-uvb-60cm"
    assert panel.planner.config.lamp_model == "t5-uvb-60cm"
    assert panel.planner.config.failed_emitters == ()
    assert panel.controls["failed_emitters"].options == ()
    assert panel.controls["uv_per_row"].disabled and panel.controls["uv_beam_angle_deg"].disabled


def test_bad_light_time_shows_an_error_and_keeps_the_plan(panel):
    """A light time that is not HH:MM is reported in the panel (message pinned) and the plan
    stays as it was (project convention: errors name the field and a hint)."""
    panel.controls["own_times"].value = True
    assert panel.planner.config.on == "08:00"
    before = panel.planner.config
    panel.controls["on"].value = "7 o'clock"
    assert "is not a clock time" in panel.status.value and "HH:MM" in panel.status.value
    assert panel.planner.config == before


def test_save_button_writes_a_scenario(panel):
    """The save button writes SITE/scenarios/<name>.toml, read back by the loader (TOML 1.0)."""
    from audit_lib.pipeline.scenarios import read_scenario

    panel.controls["species"].value = "uromastyx-ocellata"
    panel.scenario_name.value = "rock-species"
    panel.save_button.click()
    assert "Saved scenario rock-species" in panel.status.value
    saved = read_scenario(panel.planner.site.root, "rock-species")
    assert saved.plan == panel.planner.config
    panel.scenario_name.value = "Not a name"
    panel.save_button.click()
    assert "is not a plain id" in panel.status.value


def test_blank_enclosure_panel(tmp_path):
    """A blank enclosure opens with one lamp over one basking platform; the panel reacts
    (ipywidgets trait notification)."""
    p = open_panel(DEMO, "", shape=(10, 20))
    assert isinstance(p, WhatIfPanel)
    assert p.planner.enclosure_id == "planned-enclosure"
    p.controls["x_m"].value = 0.5
    assert p.planner.config.x_m == pytest.approx(0.5)


@pytest.mark.slow
def test_workbook_runs_headless_under_nbval():
    """nbval --nbval-lax executes workbooks/what_if.ipynb (parameters on the demo site) without
    an error; the committed workbook has no outputs and declares the audit-lib kernel."""
    import nbformat

    path = ROOT / "workbooks" / "what_if.ipynb"
    nb = nbformat.read(path, as_version=4)
    assert nb.metadata.kernelspec.name == "audit-lib"
    assert all(not c.get("outputs") for c in nb.cells if c.cell_type == "code")
    params = next(c for c in nb.cells if "parameters" in c.metadata.get("tags", []))
    assert "site_dir: str =" in params.source and "enclosure_id: str =" in params.source
    done = subprocess.run([sys.executable, "-m", "pytest", "-q", "--nbval-lax",
                           "-p", "no:cacheprovider", str(path)], cwd=ROOT,
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stdout[-2000:] + done.stderr[-2000:]


CHROMIUM = shutil.which("chromium") or "/usr/bin/chromium"


@pytest.mark.slow
@pytest.mark.browser
@pytest.mark.skipif(not Path(CHROMIUM).exists(), reason="Debian's chromium is not installed")
def test_panel_in_jupyterlab(tmp_path):
    """In a real browser (headless Chromium via Playwright), JupyterLab opens the workbook,
    runs it, shows the panel and reacts to a control: ipywidgets' JupyterLab front end
    (jupyterlab_widgets) renders the controls and images; choosing a screen recomputes."""
    import os
    import signal
    import socket
    import time

    playwright = pytest.importorskip("playwright.sync_api")
    sock = socket.socket()
    sock.bind(("127.0.0.1", 0))
    port = sock.getsockname()[1]
    sock.close()
    token = "what-if-test"
    root = tmp_path / "lab"  # a copy: JupyterLab's autosave must not touch the repository
    (root / "workbooks").mkdir(parents=True)
    shutil.copy(ROOT / "workbooks" / "what_if.ipynb", root / "workbooks")
    shutil.copytree(DEMO, root / "sample_sites" / DEMO.name)
    lab = subprocess.Popen(
        [sys.executable, "-m", "jupyterlab", "--no-browser", f"--port={port}",
         "--ServerApp.ip=127.0.0.1", f"--IdentityProvider.token={token}",
         f"--ServerApp.root_dir={root}", "--allow-root", "--LabApp.news_url=",
         f"--LabApp.user_settings_dir={tmp_path / 'settings'}",
         f"--LabApp.workspaces_dir={tmp_path / 'workspaces'}"],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True)
    try:
        for _ in range(120):
            try:
                socket.create_connection(("127.0.0.1", port), timeout=1).close()
                break
            except OSError:
                time.sleep(0.5)
        with playwright.sync_playwright() as p:
            browser = p.chromium.launch(executable_path=CHROMIUM,
                                        args=["--no-sandbox", "--disable-gpu"])
            page = browser.new_page(viewport={"width": 1400, "height": 1300})
            page.goto(f"http://127.0.0.1:{port}/lab/tree/workbooks/what_if.ipynb?token={token}")
            page.wait_for_selector(".jp-Notebook", timeout=180_000)
            page.wait_for_selector("text=Python (audit-lib)", timeout=180_000)
            page.click("text=Run", timeout=60_000)
            page.click("text=Run All Cells", timeout=60_000)
            page.wait_for_selector("text=Height above floor (m)", timeout=180_000)
            widths = page.eval_on_selector_all(".widget-image",
                                               "els => els.map(e => e.naturalWidth)")
            assert len(widths) == 2 and all(w > 0 for w in widths)
            page.locator(".widget-dropdown", has_text="Screen or mesh").locator(
                "select").select_option("mesh-fine")
            page.wait_for_selector("text=Updated in", timeout=120_000)
            (ROOT / "test-artifacts").mkdir(exist_ok=True)
            page.screenshot(path=str(ROOT / "test-artifacts" / "what-if-panel.png"))
            browser.close()
    finally:
        os.killpg(lab.pid, signal.SIGTERM)
        lab.wait(timeout=30)


def test_apply_the_plan_button_moves_the_planner_and_the_controls(tmp_path):
    """"Apply the plan" leaves the planner at the plan and the controls follow it."""
    root = tmp_path / "site"
    shutil.copytree(DEMO, root)
    panel = open_panel(root, "rh-02", shape=(15, 30))
    panel.plan_button.click()
    plan = panel.plan
    assert plan is not None and plan.reason in panel.status.value.replace("&#x27;", "'")
    assert [c.state for c in panel.planner.result.checks] == \
        [c.state for c in plan.checks_after]
    for key in ("z_m", "x_m", "lamp_model", "screen"):
        assert panel.controls[key].value == getattr(panel.planner.config, key)
