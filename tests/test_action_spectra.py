"""Shipped weighting functions against the published definitions and tables."""

import hashlib
from importlib import resources
from pathlib import Path

import numpy as np
import pytest

from audit_lib.light import action_spectra as act

REFERENCE = Path(__file__).resolve().parents[2] / "shared" / "reference-data"


@pytest.mark.parametrize(
    ("wavelength", "expected"),
    [(250, 1.0), (298, 1.0), (300, 0.6486), (310, 0.07447), (328, 10 ** (0.094 * -30)),
     (330, 0.001413), (400, 1.259e-4), (249.9, 0.0), (400.1, 0.0)],
)
def test_erythema_matches_iso17166_formula(wavelength, expected):
    """ISO 17166:1999 / CIE S 007: s_er = 1 (250-298), 10^(0.094(298-l)) (298-328),
    10^(0.015(140-l)) (328-400). Check values 0.6486/0.07447/0.001413/1.259e-4 computed
    from the formula (shared reference-data README)."""
    assert act.erythema_cie1998(wavelength) == pytest.approx(expected, rel=5e-4, abs=1e-12)


def test_erythema_uses_140_not_139():
    """The standard UVA branch has 140 (ISO 17166); the circulating 139 variant is
    10^0.015 = 3.5 % lower. Webb et al. 2011, Photochem. Photobiol. 87:483."""
    wl = np.array([340.0, 360.0, 390.0])
    standard = 10 ** (0.015 * (140 - wl))
    old = 10 ** (0.015 * (139 - wl))
    assert np.allclose(act.erythema_cie1998(wl), standard, rtol=1e-12)
    assert not np.allclose(act.erythema_cie1998(wl), old, rtol=1e-3)


@pytest.mark.parametrize(("wavelength", "expected"),
                         [(252, 0.036), (298, 1.0), (330, 7.8e-5), (260, 0.075)])
def test_previtamin_d3_table_points(wavelength, expected):
    """CIE 174:2006 previtamin D3 action spectrum: 1 at 298 nm, 0.036 at 252, 7.8e-5 at 330
    (values read from the public copy named in the data file header)."""
    assert act.previtamin_d3_cie2006(wavelength) == pytest.approx(expected, rel=1e-9)


def test_previtamin_d3_zero_outside_range():
    """CIE 174:2006 tabulates 252-330 nm only; outside counts as zero (our stated policy)."""
    assert act.previtamin_d3_cie2006([251.9, 330.1]).tolist() == [0.0, 0.0]


@pytest.mark.parametrize(("wavelength", "expected"),
                         [(180, 0.012), (270, 1.0), (400, 3e-05), (200, 0.03), (395, 3.6e-05)])
def test_actinic_table_points(wavelength, expected):
    """ICNIRP 2004 / IEC 62471 S(lambda): 1 at 270 nm, 0.03 at 200, 3.0e-5 at 400."""
    assert act.actinic_hazard_icnirp2004(wavelength) == pytest.approx(expected, rel=1e-9)


def test_actinic_is_log_linear_between_points():
    """Between table points S(lambda) is interpolated log-linearly (common practice): the
    geometric mean of neighbours at the midpoint."""
    wl, s = act.read_table("icnirp2004_actinic_hazard.csv")
    i = int(np.searchsorted(wl, 320))
    mid = (wl[i] + wl[i + 1]) / 2
    assert act.actinic_hazard_icnirp2004(mid) == pytest.approx(np.sqrt(s[i] * s[i + 1]), rel=1e-9)


def test_photopic_matches_colour_science():
    """V(lambda) against colour-science's CIE 1924 photopic observer (independent copy)."""
    colour = pytest.importorskip("colour")
    sd = colour.colorimetry.SDS_LEFS_PHOTOPIC["CIE 1924 Photopic Standard Observer"]
    assert np.allclose(act.photopic_luminous_efficiency(sd.wavelengths), sd.values, atol=1e-7)
    assert act.photopic_luminous_efficiency(555.0) == pytest.approx(1.0)


@pytest.mark.parametrize("name", sorted(act.DATA_FILES))
def test_shipped_table_hash(name):
    """Data files are registered with a hash (scikit-image habit); an edit must be deliberate."""
    data = resources.files("audit_lib.data").joinpath(name).read_bytes()
    assert hashlib.sha256(data).hexdigest() == act.DATA_FILES[name]


@pytest.mark.parametrize(("shipped", "reference"),
                         [("cie174_previtamin_d3.csv", "cie174_previtamin_d3.csv"),
                          ("icnirp2004_actinic_hazard.csv", "icnirp_actinic_uv_hazard.csv")])
def test_shipped_tables_equal_reference_copies(shipped, reference):
    """The shipped tables equal the checked copies in shared/reference-data (CIE 174:2006,
    ICNIRP 2004), value by value."""
    path = REFERENCE / reference
    if not path.exists():
        pytest.skip("shared/reference-data is not beside this checkout")
    rows = [ln for ln in path.read_text().splitlines() if ln and not ln.startswith("#")][1:]
    ref = np.array([[float(x) for x in r.split(",")] for r in rows])
    wl, w = act.read_table(shipped)
    assert np.array_equal(wl, ref[:, 0]) and np.array_equal(w, ref[:, 1])
