"""A batch kernel reuses the site it loaded last, and never a stale one.

``load_site(..., reuse=True)`` must give exactly what a fresh load gives: the same object
while no file the load reads has changed, a new load as soon as one has (site.toml, a
readings file, a file the site names), the same warnings every time, and the same errors.
"""

from __future__ import annotations

import os
import shutil
import warnings
from pathlib import Path

import pytest

from audit_lib.errors import InputErrors
from audit_lib.site.folder import SiteWarning, load_site

DEMO = Path(__file__).resolve().parents[1] / "sample_sites" / "kestrel-moor-wildlife-park"


@pytest.fixture
def site_dir(tmp_path):
    dest = tmp_path / "site"
    shutil.copytree(DEMO, dest, ignore=shutil.ignore_patterns("history.sqlite"))
    return dest


def _touch_later(path: Path) -> None:
    st = path.stat()
    os.utime(path, ns=(st.st_atime_ns, st.st_mtime_ns + 2_000_000_000))


def _load(site_dir):
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        site = load_site(site_dir, reuse=True)
    return site, [str(w.message) for w in caught if issubclass(w.category, SiteWarning)]


def test_an_unchanged_site_is_reused_with_its_warnings(site_dir):
    """The second load is the first's object, and repeats its (planted) calibration warning."""
    first, warned_first = _load(site_dir)
    second, warned_second = _load(site_dir)
    assert second is first
    assert warned_first and warned_second == warned_first
    assert any("calibrated" in w for w in warned_first)


def test_a_changed_readings_file_is_read_again(site_dir):
    """Editing a readings file gives a new load with the new value (never the stale one)."""
    first, _ = _load(site_dir)
    path = sorted((site_dir / "readings").glob("*.csv"))[-1]
    text = path.read_text(encoding="utf-8")
    lines = text.rstrip("\n").split("\n")
    lines = lines[:-1]  # drop the last reading
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")
    _touch_later(path)
    second, _ = _load(site_dir)
    assert second is not first
    assert len(second.readings) == len(first.readings) - 1


def test_a_changed_site_file_or_named_file_is_read_again(site_dir):
    """site.toml and the files it names (a lamp spectrum) are part of the fingerprint."""
    first, _ = _load(site_dir)
    toml = site_dir / "site.toml"
    toml.write_text(toml.read_text(encoding="utf-8").replace(
        first.name, first.name + " (renamed)", 1), encoding="utf-8")
    _touch_later(toml)
    second, _ = _load(site_dir)
    assert second is not first and second.name.endswith("(renamed)")
    named = next(m.spectrum for m in second.records.lamp_models if m.spectrum)
    _touch_later(site_dir / named)
    third, _ = _load(site_dir)
    assert third is not second


def test_a_broken_site_still_raises_every_time(site_dir):
    """Errors are never cached: a site.toml broken after a good load raises on reuse."""
    _load(site_dir)
    toml = site_dir / "site.toml"
    toml.write_text(toml.read_text(encoding="utf-8") + "\n[[[broken\n", encoding="utf-8")
    _touch_later(toml)
    for _ in range(2):
        with pytest.raises(InputErrors, match="not valid TOML"):
            load_site(site_dir, reuse=True)
