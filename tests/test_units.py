"""Unit strings at the input boundary."""

import pytest

from audit_lib.errors import InputError
from audit_lib.light.units import normalise_unit, to_si


@pytest.mark.parametrize("unit", ["uW/cm^2", "µW/cm²", "μW/cm2", "uW cm-2", "µW·cm⁻²"])
def test_microwatt_per_cm2_is_a_hundredth_of_w_m2(unit):
    """SI definitions: 1 µW/cm² = 1e-6 W / 1e-4 m² = 0.01 W/m² (BIPM SI brochure)."""
    assert to_si(1.0, unit, "irradiance") == pytest.approx(0.01)


@pytest.mark.parametrize(("unit", "factor"), [
    ("W/m^2/nm", 1.0), ("W m-2 nm-1", 1.0), ("mW/m^2/nm", 1e-3), ("uW/cm^2/nm", 1e-2),
    ("µW/cm²/nm", 1e-2), ("mW/cm^2/nm", 10.0), ("W/m^2/um", 1e-3), ("W/(m^2 nm)", 1.0)])
def test_spectral_irradiance_units(unit, factor):
    """SI prefixes (BIPM): milli 1e-3, micro 1e-6, centi 1e-2; 1 W/m²/µm = 1e-3 W/m²/nm."""
    assert to_si(1.0, unit, "spectral_irradiance") == pytest.approx(factor)


@pytest.mark.parametrize(("value", "unit", "kind", "expected"), [
    (30, "cm", "length", 0.3), (12, "in", "length", 0.3048), (1, "h", "time", 3600),
    (2, "klx", "illuminance", 2000), (1, "fc", "illuminance", 10.7639)])
def test_other_kinds(value, unit, kind, expected):
    """SI and NIST SP 811 conversion factors: 1 in = 0.0254 m, 1 fc = 10.7639 lx."""
    assert to_si(value, unit, kind) == pytest.approx(expected, rel=1e-4)


def test_wrong_dimension_names_unit_and_choices():
    """A unit of the wrong kind is refused with the accepted units listed."""
    with pytest.raises(InputError, match=r"'W/m\^2' is not a unit of spectral irradiance.*uW/cm"):
        to_si(1.0, "W/m^2", "spectral_irradiance")


def test_unknown_and_missing_units():
    """Unparseable and empty units are errors, never a silent default."""
    with pytest.raises(InputError, match="'bananas' is not recognised"):
        to_si(1.0, "bananas", "irradiance")
    with pytest.raises(InputError, match="no unit given"):
        to_si(1.0, "", "irradiance")


def test_normalise_unit_forms():
    """Exponent spellings instruments write are rewritten for pint."""
    assert normalise_unit("µW cm-2 nm-1") == "uW*cm^-2*nm^-1"
    assert normalise_unit("W/m²") == "W/m^2"
